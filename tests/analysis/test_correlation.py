"""Tests of the structure factor, C(r) and the two correlation-length estimators."""

import numpy as np
import pytest

from thinfilm.analysis.correlation import (
    correlation_function,
    correlation_length,
    kmin_plan,
    kmin_power,
    ornstein_zernike_fit,
    second_moment_length,
    second_moment_series,
    structure_factor,
)
from thinfilm.input.errors import InputError
from thinfilm.model.lattice import Lattice


def oz_square_fields(n, xi, m, seed):
    """Gaussian fields with the lattice OZ spectrum 1 / (khat^2 + xi^-2) (white noise filtered
    in Fourier space on a periodic square grid, spacing 1 nm)."""
    rng = np.random.default_rng(seed)
    k = 2 * np.pi * np.fft.fftfreq(n)
    kx, ky = np.meshgrid(k, k)
    spec = 1.0 / ((2 * np.sin(kx / 2)) ** 2 + (2 * np.sin(ky / 2)) ** 2 + xi**-2)
    return np.fft.ifft2(np.fft.fft2(rng.standard_normal((m, n, n))) * np.sqrt(spec)).real


def oz_lattice_fields(lat, xi, m, seed):
    """Gaussian fields on any periodic Lattice with spectrum 1 / (|k|^2 + xi^-2), built from the
    plane waves exp(i k.r) at the true site positions: s = Re sum_k sqrt(S(k)) g_k exp(i k.r).
    Each Bravais sublattice is an inverse FFT (the folded k sum), independent of the package."""
    rng = np.random.default_rng(seed)
    pr, pc = lat.period
    my, mx = lat.ny // pr, lat.nx // pc
    mm = np.rint(np.fft.fftfreq(lat.nx, 1 / lat.nx)).astype(int)
    nn = np.rint(np.fft.fftfreq(lat.ny, 1 / lat.ny)).astype(int)
    kx, ky = np.meshgrid(2 * np.pi * mm / lat.box_nm[0], 2 * np.pi * nn / lat.box_nm[1])
    amp = np.sqrt(1.0 / (kx**2 + ky**2 + xi**-2))
    g = rng.standard_normal((m, lat.ny, lat.nx)) + 1j * rng.standard_normal((m, lat.ny, lat.nx))
    out = np.empty((m, lat.ny, lat.nx))
    pos = lat.positions_nm
    for a in range(pr):
        for b in range(pc):
            coef = amp * g * np.exp(1j * (kx * pos[a, b, 0] + ky * pos[a, b, 1]))
            folded = np.zeros((m, my, mx), dtype=complex)
            np.add.at(folded, (slice(None), (nn % my)[:, None], (mm % mx)[None, :]), coef)
            out[:, a::pr, b::pc] = (np.fft.ifft2(folded) * my * mx).real
    return out


@pytest.mark.parametrize(
    "shape,nx,ny", [("square", 6, 4), ("triangular", 5, 6), ("honeycomb", 6, 4)]
)
def test_structure_factor_equals_direct_sum(shape, nx, ny):
    # exact: definition S(k) = |sum_r s(r) exp(-i k.r)|^2 / N evaluated by brute force
    lat = Lattice(shape, nx, ny, 0.7)
    f = np.random.default_rng(3).standard_normal((ny, nx))
    kx, ky, s = structure_factor(f, lat.positions_nm, lat.box_nm, lat.period)
    xy = lat.positions_nm.reshape(-1, 2)
    amp = np.exp(-1j * (np.stack([kx.ravel(), ky.ravel()], 1) @ xy.T)) @ f.ravel()
    np.testing.assert_allclose(s.ravel(), np.abs(amp) ** 2 / f.size, atol=1e-12)
    # Parseval (exact for Bravais lattices, whose N torus wavevectors are orthogonal on the sites)
    if shape != "honeycomb":
        assert s.mean() == pytest.approx(np.mean(f**2), rel=1e-12)


@pytest.mark.parametrize("shape", ["square", "triangular", "honeycomb"])
def test_correlation_function_matches_brute_force(shape):
    # exact: C(r) averaged over all ordered site pairs with minimum-image distances (brute force)
    lat = Lattice(shape, 6, 4, 1.0)
    f = np.random.default_rng(4).standard_normal((4, 6))
    r, c, counts = correlation_function(f, lat.positions_nm, lat.box_nm, lat.period, bin_nm=0.05)
    g = (f - f.mean()).ravel()
    xy = lat.positions_nm.reshape(-1, 2)
    d = xy[None] - xy[:, None]
    d -= np.asarray(lat.box_nm) * np.round(d / np.asarray(lat.box_nm))
    dist = np.hypot(d[..., 0], d[..., 1])
    prod = g[:, None] * g[None]
    for ri, ci, ki in zip(r, c, counts, strict=True):
        sel = np.abs(dist - ri) < 0.025
        assert sel.sum() == ki
        assert ci == pytest.approx(prod[sel].mean(), abs=1e-12)


def test_open_correlation_uses_overlap_counts_and_mask():
    # exact: open-edge C at a displacement is the mean over the overlapping valid pairs only
    rng = np.random.default_rng(5)
    f = rng.standard_normal((7, 9))
    valid = rng.random((7, 9)) > 0.2
    gy, gx = np.indices(f.shape)
    pos = np.stack([gx, gy], -1).astype(float)
    r, c, counts = correlation_function(
        f, pos, (9.0, 7.0), periodic=False, valid=valid, bin_nm=0.01, r_max_nm=1.01
    )
    g = np.where(valid, f - f[valid].mean(), 0.0)
    horiz = (g[:, :-1] * g[:, 1:]).sum() * 2 + (g[:-1] * g[1:]).sum() * 2
    n_h = (valid[:, :-1] & valid[:, 1:]).sum() * 2 + (valid[:-1] & valid[1:]).sum() * 2
    assert counts[1] == n_h
    assert c[1] == pytest.approx(horiz / n_h, rel=1e-10)
    assert c[0] == pytest.approx(np.mean(g[valid] ** 2), rel=1e-10)


def test_second_moment_recovers_oz_xi_square():
    # exact solution: for S(k) = 1/(khat^2 + xi^-2) the Cooper-Freedman-Preston estimator
    # (Nucl. Phys. B 210, 210, 1982) with lattice khat returns xi exactly in expectation.
    # Tolerance: 4 jackknife standard errors (4000 snapshots -> SE ~ 1.1/sqrt(4000) ~ 1.8 %,
    # from the chi-square fluctuations of |F(k)|^2 of a Gaussian field).
    xi = 8.0
    lat = Lattice("square", 32, 32, 1.0)
    res = correlation_length(oz_square_fields(32, xi, 4000, 11), lat.positions_nm, lat.box_nm)
    assert res["second_moment_err_nm"] < 0.03 * xi
    assert abs(res["second_moment_nm"] - xi) < 4 * res["second_moment_err_nm"]


def test_second_moment_ordered_form_recovers_xi():
    # exact: the two-wavevector form (S(k1), S(2 k1)) of the same OZ spectrum gives xi; adding a
    # constant (a "magnetisation") changes only k = 0, so subtract_mean must remove it.
    # Tolerance 4 jackknife SE as above.
    xi = 4.0
    lat = Lattice("square", 32, 32, 1.0)
    fields = oz_square_fields(32, xi, 3000, 12) + 5.0
    res = correlation_length(fields, lat.positions_nm, lat.box_nm, subtract_mean=True)
    assert res["second_moment_err_nm"] < 0.05 * xi
    assert abs(res["second_moment_nm"] - xi) < 4 * res["second_moment_err_nm"]


def test_second_moment_triangular_lattice():
    # exact: fields built from plane waves at the true triangular positions with spectrum
    # 1/(k^2 + xi^-2); the estimator with |k| returns xi in expectation. Tolerance 4 jackknife SE.
    xi = 6.0
    lat = Lattice("triangular", 24, 28, 1.0)
    fields = oz_lattice_fields(lat, xi, 1500, 13)
    res = correlation_length(fields, lat.positions_nm, lat.box_nm, lat.period)
    assert res["second_moment_err_nm"] < 0.05 * xi
    assert abs(res["second_moment_nm"] - xi) < 4 * res["second_moment_err_nm"]
    one = second_moment_length(fields[0], lat.positions_nm, lat.box_nm, lat.period)
    assert np.isnan(one) or one > 0


def test_oz_fit_recovers_xi():
    # C(r) of the lattice OZ spectrum approaches A K0(r/xi) (2D Ornstein-Zernike, exact
    # asymptotics of the lattice Green function, from memory) for r >> spacing. L = 16 xi so
    # periodic images (K0(16) ~ 1e-8) do not matter. Tolerance: 4 jackknife SE (~2.5 % each)
    # plus 3 % for the lattice correction at the fit start r = 2 spacings.
    xi = 4.0
    lat = Lattice("square", 64, 64, 1.0)
    fields = oz_square_fields(64, xi, 200, 14)
    res = correlation_length(fields, lat.positions_nm, lat.box_nm)
    assert res["fit_err_nm"] < 0.04 * xi
    assert abs(res["fit_nm"] - xi) < 4 * res["fit_err_nm"] + 0.03 * xi
    one = ornstein_zernike_fit(fields[0], lat.positions_nm, lat.box_nm)
    assert 0 < one["xi_err_nm"] < xi
    assert abs(one["xi_nm"] - xi) < 5 * one["xi_err_nm"] + 0.5 * xi


def test_open_edge_estimators_agree_with_xi():
    # Open edges (images): the tail-completed real-space second moment and the OZ fit on
    # 128 x 128 crops of OZ fields; tolerance 4 jackknife SE + 5 % (truncated-tail and
    # mean-subtraction bias of open windows, common practice).
    xi = 4.0
    lat = Lattice("square", 128, 128, 1.0, periodic=False)
    fields = oz_square_fields(128, xi, 12, 15)
    res = correlation_length(fields, lat.positions_nm, lat.box_nm, periodic=False, n_blocks=12)
    for key in ("second_moment", "fit"):
        assert abs(res[f"{key}_nm"] - xi) < 4 * res[f"{key}_err_nm"] + 0.05 * xi, key


def test_bad_inputs_raise_input_error():
    lat = Lattice("square", 8, 8, 1.0)
    with pytest.raises(InputError, match="2D array"):
        structure_factor(np.zeros((8, 8, 3)), lat.positions_nm, lat.box_nm)
    with pytest.raises(InputError, match="positions_nm"):
        correlation_function(np.zeros((8, 8)), lat.positions_nm[:4], lat.box_nm)
    with pytest.raises(InputError, match="period"):
        structure_factor(np.zeros((8, 8)), lat.positions_nm, lat.box_nm, (3, 1))
    bad = np.zeros((8, 8))
    bad[2, 2] = np.nan
    with pytest.raises(InputError, match="NaN"):
        second_moment_length(bad, lat.positions_nm, lat.box_nm)
    tri = Lattice("triangular", 8, 8, 1.0)
    with pytest.raises(InputError, match="do not repeat"):
        structure_factor(np.zeros((8, 8)), tri.positions_nm, tri.box_nm, (1, 1))


def _series_inputs(fields, lat):
    plan = kmin_plan(lat.positions_nm, lat.box_nm, lat.period)
    moment = fields.reshape(len(fields), -1).sum(axis=1)
    probes = np.array([kmin_power(f, plan) for f in fields])
    return moment, probes, plan


def test_second_moment_series_recovers_oz_xi_and_averages_equivalent_wavevectors():
    # Gaussian fields with the lattice OZ spectrum 1/(khat^2 + xi^-2): S(0)/S(k_min) - 1 =
    # khat_min^2 xi^2 exactly in expectation (Cooper, Freedman and Preston, Nucl. Phys. B 210,
    # 210, 1982). Tolerance 4 jackknife SE; the SE itself must be below 6 % (teeth). L = 6 xi:
    # S(0) of independent samples has a relative error sqrt(2/n), which the ratio magnifies by
    # S(0)/(S(0) - S(k_min)) as L/xi grows
    xi, n = 4.0, 24
    lat = Lattice("square", n, n, 1.0)
    fields = oz_square_fields(n, xi, 1000, 21)
    moment, probes, plan = _series_inputs(fields, lat)
    assert plan["n_modes"] == 2  # (2 pi/L, 0) and (0, 2 pi/L) on a square box
    res = second_moment_series(moment, probes, plan["khat2"], plan["n_sites"])
    assert res["reason"] == ""
    assert res["xi_err_nm"] < 0.06 * xi
    assert abs(res["xi_nm"] - xi) < 4 * res["xi_err_nm"]


def test_second_moment_series_zero_and_nan_only_where_undefined():
    lat = Lattice("square", 16, 16, 1.0)
    # white noise: xi = 0 in expectation, so the estimate of xi^2 scatters about zero: the value
    # is 0 or small and positive with a finite error, never NaN (exact: S(k) flat)
    white = np.random.default_rng(5).standard_normal((200, 16, 16))
    moment, probes, plan = _series_inputs(white, lat)
    res = second_moment_series(moment, probes, plan["khat2"], plan["n_sites"])
    assert np.isfinite(res["xi_nm"]) and np.isfinite(res["xi_err_nm"])
    assert res["xi_nm"] < 0.5 + 3 * res["xi_err_nm"]
    # uniform film: S(k_min) = 0, undefined in expectation, with the reason
    up = np.ones((10, 16, 16))
    moment, probes, plan = _series_inputs(up, lat)
    res = second_moment_series(moment, probes, plan["khat2"], plan["n_sites"])
    assert np.isnan(res["xi_nm"]) and "uniform" in res["reason"]
    with pytest.raises(InputError, match="probe_at"):
        second_moment_series(moment, probes, plan["khat2"], plan["n_sites"], probe_at=[1, 2])
