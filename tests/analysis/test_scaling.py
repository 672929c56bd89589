"""Data collapse (thinfilm.analysis.scaling) on synthetic finite-size-scaling data.

The data are y = F(t L^(1/nu)) with known Tc and nu plus Gaussian noise of known size; the
values Tc = 2.269185 (square Ising, Onsager, Phys. Rev. 65, 117, 1944) and nu = 1 (2D Ising,
Onsager 1944) only set realistic numbers: F is an arbitrary smooth U4-like curve.
"""

import numpy as np
import pytest
from scipy import stats

from thinfilm.analysis.scaling import collapse_fit, joint_collapse_fit, master_curve
from thinfilm.input.errors import InputError

TC = 2.0 / np.log(1.0 + np.sqrt(2.0))  # Onsager 1944
NU = 1.0  # 2D Ising, Onsager 1944
SIGMA = 0.004


def u4_like(x):
    """Smooth step from 2/3 (ordered, U4 limit of Binder 1981) to 0, crossing ~0.6 at x = 0."""
    return (2.0 / 3.0) / (1.0 + np.exp(1.5 * x + 0.3))


def xi_like(x):
    return 0.9 * np.exp(-0.8 * x)


def synthetic(seed, f=u4_like, sizes=(8, 16, 32, 64), nu=NU, tc=TC, corr=0.0, omega=1.0,
              n_t=9, sigma=SIGMA):
    rng = np.random.default_rng(seed)
    L = np.repeat(np.array(sizes, dtype=float), n_t)
    x = np.tile(np.linspace(-1.2, 1.2, n_t), len(sizes))
    T = tc * (1.0 + x / L ** (1.0 / nu))
    y = f(x) + corr * L ** (-omega)
    e = np.full_like(y, sigma)
    return L, T, y + e * rng.standard_normal(y.size), e


def test_collapse_recovers_tc_and_nu_within_errors_over_seeds():
    # 20 independent data sets; the 1-sigma intervals must cover the true values at a rate
    # compatible with 68 % (two-sided binomial limits at 0.5 % each), and no miss > 4 sigma
    n, hits_tc, hits_nu = 20, 0, 0
    for seed in range(n):
        r = collapse_fit(*synthetic(seed), tc_guess_K=2.24, nu_guess=0.85, x_window=(-1, 1))
        z_tc = (r["tc_K"] - TC) / r["tc_err_K"]
        z_nu = (r["nu"] - NU) / r["nu_err"]
        assert abs(z_tc) < 4 and abs(z_nu) < 4, (seed, z_tc, z_nu)
        hits_tc += abs(z_tc) < 1
        hits_nu += abs(z_nu) < 1
        assert 0.4 < r["chi2_dof"] < 2.0
    lo, hi = stats.binom.ppf([0.005, 0.995], n, 0.6827)
    assert lo <= hits_tc <= hi and lo <= hits_nu <= hi, (hits_tc, hits_nu, lo, hi)
    # the errors are useful: Tc to better than 0.1 %, nu to a few per cent
    assert r["tc_err_K"] < 1e-3 * TC and r["nu_err"] < 0.03
    assert -1.0 <= r["x_range"][0] < r["x_range"][1] <= 1.0


def test_collapse_recovers_another_nu():
    # the fit is not tied to nu = 1: nu = 0.63 synthetic data (value arbitrary)
    r = collapse_fit(*synthetic(3, nu=0.63), tc_guess_K=2.28, nu_guess=0.9, x_window=(-1, 1))
    assert abs(r["nu"] - 0.63) < 4 * r["nu_err"]
    assert abs(r["tc_K"] - TC) < 4 * r["tc_err_K"]


def test_correction_term_is_needed_and_recovers_the_truth():
    data = synthetic(5, corr=0.4, omega=1.0)
    bad = collapse_fit(*data, tc_guess_K=TC, x_window=(-1, 1))
    good = collapse_fit(*data, tc_guess_K=TC, x_window=(-1, 1), correction=1.0)
    # an uncorrected collapse of data with an L^-1 term is visibly poor (chi2/dof >> 1)
    assert bad["chi2_dof"] > 3.0
    assert good["chi2_dof"] < 2.0
    assert abs(good["tc_K"] - TC) < 4 * good["tc_err_K"]
    assert abs(good["nu"] - NU) < 4 * good["nu_err"]
    assert abs(good["correction_amplitude"]["y"] - 0.4) < 0.1


def test_bootstrap_and_curvature_errors_agree():
    data = synthetic(7)
    a = collapse_fit(*data, tc_guess_K=TC, x_window=(-1, 1))
    b = collapse_fit(*data, tc_guess_K=TC, x_window=(-1, 1), error_method="bootstrap",
                     n_boot=150, seed=2)
    assert 0.7 < b["tc_err_K"] / a["tc_err_K"] < 1.4
    assert 0.7 < b["nu_err"] / a["nu_err"] < 1.4
    assert b["tc_K"] == a["tc_K"]


def test_joint_collapse_shares_tc_and_nu():
    L, T, y, e = synthetic(11)
    _, _, y2, e2 = synthetic(12, f=xi_like)
    u = collapse_fit(L, T, y, e, tc_guess_K=TC, x_window=(-1, 1))
    j = joint_collapse_fit({"binder": (L, T, y, e), "xi_over_L": (L, T, y2, e2)},
                           tc_guess_K=TC, x_window=(-1, 1))
    assert j["tc_err_K"] < u["tc_err_K"]  # more data, tighter Tc
    assert abs(j["tc_K"] - TC) < 4 * j["tc_err_K"] and abs(j["nu"] - NU) < 4 * j["nu_err"]
    # the master curves follow the generating functions inside the window
    x = np.linspace(-0.9, 0.9, 7)
    assert np.max(np.abs(master_curve(j, x, "binder") - u4_like(x))) < 0.01
    assert np.max(np.abs(master_curve(j, x, "xi_over_L") - xi_like(x))) < 0.02


def test_collapse_refuses_a_single_size():
    L, T, y, e = synthetic(0, sizes=(16,))
    with pytest.raises(InputError, match="at least 2 lattice sizes"):
        collapse_fit(L, T, y, e, tc_guess_K=TC)


def test_collapse_refuses_too_few_points_in_the_window():
    with pytest.raises(InputError, match="too few points inside the x window"):
        collapse_fit(*synthetic(0), tc_guess_K=TC, x_window=(-0.2, 0.2))


def test_collapse_refuses_more_parameters_than_points():
    # L = 8 with 6 points and L = 16 with 3 inside the window: 9 points for 7 parameters
    a = synthetic(0, sizes=(8,), n_t=6)
    b = synthetic(1, sizes=(16,), n_t=3)
    L, T, y, e = (np.concatenate([u, v]) for u, v in zip(a, b, strict=True))
    with pytest.raises(InputError, match="points inside the x window for 7 parameters"):
        collapse_fit(L, T, y, e, tc_guess_K=TC, x_window=(-1.3, 1.3), degree=4)


def test_collapse_refuses_a_degree_as_high_as_the_points_per_size():
    # 5 points per size at the same x: a degree-5 polynomial could pass through all of them
    L, T, y, e = synthetic(0, sizes=(8, 16, 32), n_t=5)
    with pytest.raises(InputError, match="degree 5 needs at least 7 points of one size"):
        collapse_fit(L, T, y, e, tc_guess_K=TC, x_window=(-1.3, 1.3), degree=5)
