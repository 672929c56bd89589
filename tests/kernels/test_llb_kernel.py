"""LLB field kernel against a plain numpy reference; one Heun step against numpy."""

import numpy as np
import pytest

from thinfilm.engines._kernels.llb import _rate, llb_field


def reference_field(m, hd, periodic, cex, la, lb, kperp, kscale, b):
    lap = np.zeros_like(m)
    ny, nx, _ = m.shape
    for di, dj in ((-1, 0), (1, 0), (0, -1), (0, 1)):
        if periodic:
            lap += np.roll(m, (-di, -dj), axis=(0, 1)) - m
        else:
            sh = np.zeros_like(m)
            src = m[max(di, 0):ny + min(di, 0), max(dj, 0):nx + min(dj, 0)]
            sh[max(-di, 0):ny + min(-di, 0), max(-dj, 0):nx + min(-dj, 0)] = src
            mask = np.zeros((ny, nx, 1))
            mask[max(-di, 0):ny + min(-di, 0), max(-dj, 0):nx + min(-dj, 0)] = 1
            lap += sh - mask * m
    m2 = np.sum(m * m, axis=-1, keepdims=True)
    h = cex * lap + (la + lb * m2) * m + b + hd
    h[..., :2] -= kperp * kscale[..., None] * m[..., :2]
    return h


@pytest.mark.parametrize("periodic", [True, False])
def test_field_matches_numpy(periodic):
    rng = np.random.default_rng(1)
    m = rng.normal(size=(7, 9, 3)) * 0.5
    hd = rng.normal(size=m.shape)
    ks = rng.uniform(0.5, 1.5, size=(7, 9))
    b = np.array([0.1, -0.2, 0.3])
    h = np.zeros_like(m)
    llb_field(m, hd, periodic, 2.0, 3.0, -4.0, 5.0, ks, *b, h)
    ref = reference_field(m, hd, periodic, 2.0, 3.0, -4.0, 5.0, ks, b)
    assert np.allclose(h, ref, rtol=1e-13, atol=1e-13)


def test_rate_is_garanin_form():
    # dm/dt = -gamma m x H + gamma a_par (m.H) m / m^2 - gamma a_perp m x (m x H) / m^2
    rng = np.random.default_rng(2)
    m, hh = rng.normal(size=3), rng.normal(size=3)
    g, ap, at = 1.7, 0.3, 0.5
    m2 = m @ m
    ref = (-g * np.cross(m, hh) + g * ap * (m @ hh) * m / m2
           - g * at * np.cross(m, np.cross(m, hh)) / m2)
    got = np.array(_rate(*m, *hh, 0.0, 0.0, 0.0, g, ap, at))
    assert np.allclose(got, ref, rtol=1e-13)


def test_noise_rows_are_standard_normal_and_zero_sigma_clears():
    # counter-based Box-Muller rows (thinfilm.engines._kernels.rng): mean 0, variance sigma^2
    # (3 x 64 x 64 normals: standard error of the variance 1.6 %; tolerance 5 %); a zero sigma
    # must overwrite the previous step's numbers (no stale noise above Tc, where a_par = a_perp)
    from thinfilm.engines._kernels.llb import _noise

    za = np.zeros((64, 64, 3))
    zp = np.zeros((64, 64, 3))
    _noise(64, 64, 3, 7, 0.5, 2.0, za, zp)
    assert abs(za.std() / 0.5 - 1) < 0.05 and abs(zp.std() / 2.0 - 1) < 0.05
    assert abs(za.mean()) < 0.05 * 0.5
    assert not np.allclose(za[0, :, 0], za[1, :, 0])  # rows differ
    _noise(64, 64, 3, 8, 0.5, 0.0, za, zp)
    assert np.all(zp == 0.0)
