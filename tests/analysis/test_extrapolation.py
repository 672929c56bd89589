"""Extrapolation of xi(T) (thinfilm.analysis.extrapolation, length_window) on exact Ising data.

Synthetic data: the exact exponential correlation length of the square Ising model in lattice
units (a = 1 nm here), xi = 1/[2(K* - K)] above Tc and 1/[4(K - K*)] below, tanh K* = exp(-2K),
K = J/kB T (Onsager 1944; McCoy and Wu, The Two-Dimensional Ising Model, 1973, textbook; the
below-Tc form and the amplitude ratio f+/f- = 2 from memory), with 2 % Gaussian noise.
"""

import numpy as np
import pytest
from scipy import stats

from thinfilm.analysis.extrapolation import fit_critical_length, fit_domain_size, predict_length
from thinfilm.analysis.length_window import temperatures_for_length
from thinfilm.input.errors import InputError

TC = 2.0 / np.log(1.0 + np.sqrt(2.0))  # J/kB (Onsager 1944); temperatures in these units
T_FIT = np.array([0.06, 0.08, 0.1, 0.13, 0.16, 0.2, 0.25, 0.3])
REL = 0.02
TC_ERR = 0.001 * TC


def xi_exact(T):
    T = np.asarray(T, dtype=float)
    K = 1.0 / T
    ks = np.arctanh(np.exp(-2.0 * K))
    return np.where(T > TC, 1.0 / (2.0 * (ks - K)), 1.0 / (4.0 * (K - ks)))


def data(seed, side=64.0):
    rng = np.random.default_rng(seed)
    T = TC * np.concatenate([1 - T_FIT, 1 + T_FIT])
    xi = xi_exact(T)
    # a Tc estimate with its own error (as from a Binder crossing), drawn per data set
    tc = TC + TC_ERR * rng.standard_normal()
    return T, xi * (1 + REL * rng.standard_normal(T.size)), REL * xi, tc, side


def fit(seed, **kw):
    T, y, e, tc, side = data(seed)
    return fit_critical_length(T, y, e, tc_K=tc, tc_err_K=TC_ERR, film_side_nm=side, **kw)


def test_extrapolation_to_smaller_t_recovers_the_exact_xi_with_correct_coverage():
    # targets at |t| = 0.03, closer to Tc than any fitted point (|t| >= 0.06, xi <= 9.7 nm);
    # 20 independent data sets, one target per side
    t_q = np.array([0.03, -0.03])
    Tq = TC * (1 + t_q)
    n = 20
    hits = np.zeros(2, dtype=int)
    for seed in range(n):
        f = fit(seed)
        p = predict_length(f, Tq)
        assert list(p["flag"]) == ["extrapolated", "extrapolated"]
        z = (p["value_nm"] - xi_exact(Tq)) / p["err_nm"]
        assert np.all(np.abs(z) < 4), (seed, z)
        hits += np.abs(z) < 1
        assert np.all(p["err_nm"] < 0.1 * p["value_nm"])  # the band is informative
    lo, hi = stats.binom.ppf([0.005, 0.995], n, 0.6827)
    assert np.all((hits >= lo) & (hits <= hi)), (hits, lo, hi)


def test_measured_points_are_flagged_measured_and_match_the_data():
    f = fit(1)
    T = TC * (1 + np.array([0.1, 0.2, -0.15]))
    p = predict_length(f, T)
    assert list(p["flag"]) == ["measured"] * 3
    assert np.all(np.abs(p["value_nm"] - xi_exact(T)) < 4 * p["err_nm"] + 0.01 * xi_exact(T))


def test_extrapolation_refuses_outside_the_valid_range():
    f = fit(2)
    # far too close to Tc: beyond the error bound or 10 x the largest fitted xi
    with pytest.raises(InputError, match="too close to Tc"):
        predict_length(f, [TC * (1 + 1e-5)])
    # farther from Tc than the fitted points (outside the critical region used)
    with pytest.raises(InputError, match="farther from Tc"):
        predict_length(f, [TC * 1.6])
    p = predict_length(f, [TC * (1 + 1e-5), TC * 1.1], strict=False)
    assert list(p["flag"]) == ["refused", "measured"] and np.isnan(p["value_nm"][0])


def test_valid_limit_follows_the_stated_rule():
    f = fit(3)
    rule = f["rule"]
    for s, sign in (("above", 1), ("below", -1)):
        a = f["valid_t_min"][s]
        inside = predict_length(f, [f["tc_K"] * (1 + sign * a * 1.01)])
        y, dy = inside["value_nm"][0], inside["err_nm"][0]
        assert dy <= rule["max_rel_err"] * y * 1.001
        assert y <= rule["max_factor"] * f["max_used_nm"][s] * 1.001
        # just beyond the limit one of the two bounds is broken
        out = predict_length(f, [f["tc_K"] * (1 + sign * a * 0.97)], strict=False)
        assert out["flag"][0] == "refused"
    # a looser error bound lets the extrapolation reach closer to Tc
    g = fit(3, max_rel_err=0.5, max_factor=1e3)
    assert g["valid_t_min"]["above"] < f["valid_t_min"]["above"]


def test_temperatures_for_length_brackets_the_exact_window():
    f = fit(4)
    target = 15.0  # nm: reached only at |t| ~ 0.04 (above) / 0.02 (below), i.e. extrapolated
    w = temperatures_for_length(f, target)
    lo, hi = w["window_K"]
    elo, ehi = w["window_err_K"]
    from scipy.optimize import brentq

    t_lo = brentq(lambda T: xi_exact(T) - target, TC * 0.9, TC * 0.99999)
    t_hi = brentq(lambda T: xi_exact(T) - target, TC * 1.00001, TC * 1.2)
    assert abs(lo - t_lo) < 4 * elo and abs(hi - t_hi) < 4 * ehi
    assert w["flags"] == {"above": "extrapolated", "below": "extrapolated"}
    assert 0 < elo < 0.01 * TC and 0 < ehi < 0.01 * TC
    # a target the fit cannot reach within its valid range is refused
    with pytest.raises(InputError, match="only closer to Tc than the valid limit"):
        temperatures_for_length(f, 1000.0)
    # a target exceeded over the whole fitted range has no edge inside it
    with pytest.raises(InputError, match="whole fitted range"):
        temperatures_for_length(f, 0.5)
    soft = temperatures_for_length(f, 1000.0, strict=False)
    assert soft["window_K"] == (None, None) and "valid limit" in soft["reasons"]["above"]


def test_fit_refuses_without_enough_small_xi_points():
    T, y, e, tc, _ = data(0)
    # a 12 nm film holds xi <= 2 nm only: too few points on either side
    with pytest.raises(InputError, match="too few usable points"):
        fit_critical_length(T, y, e, tc_K=tc, tc_err_K=TC_ERR, film_side_nm=12.0, sides="both")
    with pytest.raises(InputError, match="film_side_nm"):
        fit_critical_length(T, y, e, tc_K=tc)


def test_fitted_nu_recovers_one_from_exact_data():
    # nu free (with the analytic correction): 2D Ising nu = 1 (Onsager 1944)
    f = fit(6, nu=None)
    assert f["nu_fitted"] and abs(f["nu"] - 1.0) < 3 * f["nu_err"] + 0.02
    assert f["nu_err"] < 0.15


def test_domain_diameter_fit_recovers_a_known_exponent():
    # synthetic power law (no physics source: the exponent 0.8 and amplitude are arbitrary)
    rng = np.random.default_rng(9)
    T = TC * (1 + T_FIT)
    d = 3.0 * T_FIT**-0.8
    area = np.pi * d**2 / 4 * (1 + 0.04 * rng.standard_normal(T.size))
    f = fit_domain_size(T, area, 0.04 * area, tc_K=TC, film_side_nm=200.0, correction=False)
    assert f["quantity"] == "domain_diameter" and f["sides"] == ["above"]
    assert abs(f["nu"] - 0.8) < 3 * f["nu_err"]
    assert abs(f["amplitude_nm"] - 3.0) < 3 * f["amplitude_err_nm"]
