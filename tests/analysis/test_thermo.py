"""Autocorrelation time, blocking error, jackknife and thermodynamic estimators."""

import numpy as np
import pytest
from scipy.signal import lfilter

from thinfilm.analysis.thermo import (
    blocking_error,
    histogram_reweighting,
    integrated_autocorrelation_time,
    jackknife,
    thermodynamics,
)
from thinfilm.input.errors import ThinFilmWarning
from thinfilm.input.units import KB_J_PER_K, MEV_J


def ar1(phi, n, seed):
    """x_t = phi x_{t-1} + eps_t, eps ~ N(0, 1), started in equilibrium."""
    rng = np.random.default_rng(seed)
    eps = rng.standard_normal(n)
    eps[0] /= np.sqrt(1 - phi * phi)
    return lfilter([1.0], [1.0, -phi], eps)


@pytest.mark.parametrize("phi", [0.0, 0.5, 0.8, 0.95])
def test_tau_int_of_ar1_matches_exact_value(phi):
    # exact for AR(1): rho(t) = phi^t, tau_int = 1/2 + sum rho = (1+phi)/(2(1-phi))
    # (Sokal, "Monte Carlo methods in statistical mechanics", in Functional Integration,
    # Plenum 1997; automatic windowing with c = 5).
    # tolerance: Sokal's variance estimate var(tau)/tau^2 ~ 2(2W+1)/N with W ~ 5 tau; 4 sigma
    n = 2**18
    exact = (1 + phi) / (2 * (1 - phi))
    tau = integrated_autocorrelation_time(ar1(phi, n, seed=10))
    rel = np.sqrt(2 * (2 * 5 * exact + 1) / n)
    assert abs(tau - exact) < 4 * rel * exact + 0.01


@pytest.mark.parametrize("phi", [0.0, 0.9])
def test_blocking_error_matches_exact_error_of_ar1_mean(phi):
    # exact: var(mean) = var(x)/N [1 + 2 sum_{t=1}^{N-1} (1 - t/N) phi^t], var(x) = 1/(1-phi^2)
    # (Flyvbjerg & Petersen, J. Chem. Phys. 91, 461 (1989) for the method)
    n = 2**17
    t = np.arange(1, n)
    var = 1 / (1 - phi**2) / n * (1 + 2 * np.sum((1 - t / n) * phi**t))
    err, lev = blocking_error(ar1(phi, n, seed=3), return_levels=True)
    k = lev["level"]
    # tolerance: 4 x the estimate's own relative uncertainty 1/sqrt(2 (n_k - 1)) at that level
    rel = 1 / np.sqrt(2 * (lev["n_blocks"][k] - 1))
    assert abs(err / np.sqrt(var) - 1) < 4 * rel
    if phi > 0:  # the naive error is far too small: the test can tell the difference
        assert lev["error"][0] < 0.3 * np.sqrt(var)


def test_jackknife_of_a_mean_equals_the_standard_error():
    # exact identity: jackknife of a linear function with blocks of one sample = std/sqrt(N-1)
    x = np.random.default_rng(1).normal(size=400)
    val, err = jackknife(x[:, None], lambda m: m[0], 400)
    assert val == pytest.approx(x.mean())
    assert err == pytest.approx(x.std() / np.sqrt(399), rel=1e-10)


def test_thermodynamics_of_gaussian_series_gives_known_fluctuations():
    # exact: for Gaussian e with variance s^2, C = N s^2/(kB T)^2; Gaussian m gives U4 = 0
    rng = np.random.default_rng(2)
    n, ns, temp = 40000, 100, 20.0
    kt = KB_J_PER_K * temp
    s_e = 0.01 * kt
    e = -1.5e-22 + s_e * ar1(0.5, n, 4)[:] * np.sqrt(1 - 0.25)
    m = 0.1 * ar1(0.5, n, 5) * np.sqrt(1 - 0.25)
    mv = np.column_stack([m, 0.01 * rng.normal(size=n), np.zeros(n)])
    d = thermodynamics(e, m, mv, ns, temp)
    # tolerance: 4 jackknife errors
    assert abs(d["specific_heat"] - ns * s_e**2 / kt**2) < 4 * d["specific_heat_err"]
    assert abs(d["binder"]) < 4 * d["binder_err"]
    assert abs(d["energy_meV"] + 1.5e-22 / MEV_J) < 4 * d["energy_meV_err"]
    # chi = N (<m^2> - <|m|>^2)/kT with <m^2> = 0.01, <|m|> = 0.1 sqrt(2/pi) (half-normal)
    chi = ns * 0.01 * (1 - 2 / np.pi) / (kt / MEV_J)
    assert abs(d["susceptibility"] - chi) < 4 * d["susceptibility_err"]
    assert d["tau_int"] == pytest.approx(1.5, rel=0.15)  # AR(1), phi = 0.5 (and m^2, |m|)


def test_ordered_two_state_series_has_binder_two_thirds():
    # exact: m = +-m0 gives <m^4>/<m^2>^2 = 1, U4 = 2/3 (Binder 1981)
    m = 0.8 * np.where(np.random.default_rng(3).random(2000) < 0.5, 1, -1)
    d = thermodynamics(np.zeros(2000), m, np.zeros((2000, 3)), 64, 10.0)
    assert d["binder"] == pytest.approx(2 / 3, abs=1e-12)
    assert d["m_abs"] == pytest.approx(0.8) and d["m_abs_err"] < 1e-12


def test_too_few_independent_samples_warn():
    x = ar1(0.99, 2000, 6)
    with pytest.warns(ThinFilmWarning, match="independent samples"):
        thermodynamics(x * 1e-23, x, np.zeros((2000, 3)), 16, 5.0)


def test_histogram_reweighting_of_free_spins_follows_langevin():
    # exact (Langevin 1905): N free spins in a field, E = -mu B sum S_x, <S_x> = L(xi);
    # samples drawn exactly at xi = 1 (inverse-CDF of p(c) ~ exp(xi c)) are reweighted to
    # xi = 1.1 and 0.9. Tolerance: 4 x the naive standard error of the reweighted mean.
    from thinfilm.input.units import MU_B_J_PER_T

    rng = np.random.default_rng(7)
    n_samp, ns, temp = 20000, 4, 10.0
    xi = 1.0
    u = rng.random((n_samp, ns))
    c = np.log(np.exp(-xi) + u * (np.exp(xi) - np.exp(-xi))) / xi  # cos theta ~ exp(xi c)
    b = xi * KB_J_PER_K * temp / MU_B_J_PER_T
    e = -MU_B_J_PER_T * b * c.mean(axis=1)
    mx = c.mean(axis=1)
    for new_xi in (0.9, 1.1):
        got = histogram_reweighting(e, mx, ns, temp, [temp * xi / new_xi])[0]
        exact = 1 / np.tanh(new_xi) - 1 / new_xi
        assert abs(got - exact) < 4 * mx.std() / np.sqrt(n_samp)
    assert histogram_reweighting(e, np.column_stack([mx, mx]), ns, temp, [temp]).shape == (1, 2)
