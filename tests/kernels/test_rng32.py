"""Single-precision Box-Muller: its arithmetic against float64 from the same bits, and its law."""

import math

import numba
import numpy as np
import reference

from thinfilm.engines._kernels.rng import hash64, key, normals_row
from thinfilm.engines._kernels.rng32 import bm_pair32, normals_row32


@numba.njit
def _pairs32(k, n, out, bits):
    for p in range(n):
        h = hash64(k, p)
        bits[p] = h
        a, b = bm_pair32(h)
        out[p, 0] = a
        out[p, 1] = b


def _pairs(seed, n):
    g = np.empty((n, 2), np.float32)
    bits = np.empty(n, np.uint64)
    _pairs32(key(seed, 0, 1), n, g, bits)
    return g.astype(np.float64), bits


def test_float32_box_muller_matches_float64_arithmetic_on_the_same_bits():
    # exact solution: Box-Muller (Box and Muller, Ann. Math. Stat. 29, 610 (1958)) evaluated
    # with NumPy in float64 on the same 24 + 2 + 22 bits; float32 polynomials and sqrt agree
    # to a few float32 ulp of the radius (r <= 5.8: |error| < 3e-6)
    g, h = _pairs(4, 100000)
    u1 = ((h >> np.uint64(40)).astype(np.float64) + 1.0) * 2.0**-24
    q = ((h >> np.uint64(30)) & np.uint64(3)).astype(np.float64)
    th = (((h >> np.uint64(8)) & np.uint64(0x3FFFFF)).astype(np.float64) * 2.0**-22 - 0.5) * (
        math.pi / 2)
    r = np.sqrt(-2.0 * np.log(u1))
    phi = q * math.pi / 2 + th
    np.testing.assert_allclose(g[:, 0], r * np.cos(phi), rtol=0, atol=3e-6)
    np.testing.assert_allclose(g[:, 1], r * np.sin(phi), rtol=0, atol=3e-6)


def test_float32_pairs_are_independent_standard_normals():
    # moments, law, angle and radius: reference.assert_standard_normal_pairs
    n = 200000
    g, _ = _pairs(2, n)
    reference.assert_standard_normal_pairs(g)
    assert np.abs(g).max() <= math.sqrt(2 * 24 * math.log(2)) + 1e-5  # the 24-bit radius cut


def test_normals_row32_uses_the_counters_of_normals_row():
    # same key and counters as the float64 rows: the two differ by the radius resolution only
    k = key(7, 0, 4)
    a = np.empty(101, np.float32)
    normals_row32(k, 50, 2.0, a)
    b = np.empty(101)
    normals_row(k, 50, 2.0, b)
    assert np.abs(a - b).max() < 2.0 * math.sqrt(2) * 2.0**-12
    d = np.empty(60, np.float32)
    normals_row32(k, 70, 2.0, d)  # counter 70 = pair 20 of the first call
    np.testing.assert_array_equal(d, a[40:100])
