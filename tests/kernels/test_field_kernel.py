"""Effective field and observables kernels against the NumPy reference on every lattice."""

import numba
import numpy as np
import pytest
import reference

from thinfilm.engines._kernels.field import effective_field, observables, row_pad
from thinfilm.model.lattice import Lattice

CASES = [
    ("square", 1, 5, True), ("square", 1, 5, False), ("square", 5, 1, True),
    ("square", 6, 1, False), ("square", 2, 2, True), ("square", 2, 2, False),
    ("square", 3, 5, True), ("square", 3, 5, False), ("square", 4, 6, True),
    ("square", 7, 9, False),
    ("triangular", 1, 4, True), ("triangular", 2, 2, True), ("triangular", 3, 5, False),
    ("triangular", 5, 4, True), ("triangular", 4, 6, False), ("triangular", 5, 1, False),
    ("honeycomb", 2, 2, True), ("honeycomb", 2, 2, False), ("honeycomb", 3, 5, False),
    ("honeycomb", 4, 6, True), ("honeycomb", 6, 4, True), ("honeycomb", 1, 6, False),
]


_spins = reference.random_spins
_params = reference.kernel_params  # jt, kt (T), axis, field (T)


@pytest.mark.parametrize("shape,nx,ny,periodic", CASES)
def test_effective_field_matches_reference(rng, shape, nx, ny, periodic):
    lat = Lattice(shape, nx, ny, 0.3, periodic)
    s = _spins(rng, ny, nx)
    jt, kt, axis, b = _params()
    out = np.empty_like(s)
    effective_field(s, lat.code, periodic, jt, kt, axis, b, out)
    ref = reference.effective_field(lat, s, exchange_T=jt, anisotropy_T=kt, axis=axis, field_T=b)
    np.testing.assert_allclose(out, ref, rtol=0, atol=1e-14)


@pytest.mark.parametrize("shape,nx,ny,periodic", CASES)
def test_observables_match_reference(rng, shape, nx, ny, periodic):
    lat = Lattice(shape, nx, ny, 0.3, periodic)
    s = _spins(rng, ny, nx)
    jt, kt, axis, b = _params()
    mx, my, mz, ex, an, ze = observables(s, lat.code, periodic, jt, kt, axis, b, np.empty_like(s))
    np.testing.assert_allclose([mx, my, mz], s.reshape(-1, 3).sum(0), atol=1e-12)
    # energy in units of mu_s T: exchange_J = jt, anisotropy_J = kt / 2, moment = 1
    e = reference.energy(lat, s, exchange_J=jt, anisotropy_J=kt / 2, axis=axis, moment=1.0,
                         field_T=b)
    if not (periodic and (nx <= 2 or ny <= 2)):  # tiny tori: bonds() keeps duplicates once
        np.testing.assert_allclose(ex + an + ze, e, rtol=1e-12, atol=1e-12)


def test_effective_field_independent_of_threads(rng):
    lat = Lattice("triangular", 37, 22, 0.3, True)
    s = _spins(rng, 22, 37)
    jt, kt, axis, b = _params()
    old = numba.get_num_threads()
    outs = []
    try:
        for t in (1, min(2, numba.config.NUMBA_NUM_THREADS)):
            numba.set_num_threads(t)
            out = np.empty_like(s)
            effective_field(s, lat.code, True, jt, kt, axis, b, out)
            outs.append(out)
    finally:
        numba.set_num_threads(old)
    np.testing.assert_array_equal(outs[0], outs[1])


def test_row_pad_avoids_4k_strides():
    for nx in range(1, 3000):
        n = row_pad(nx)
        assert n >= nx + 2 and n % 8 == 0 and n % 512 != 0
