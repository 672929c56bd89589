"""Binder-crossing and peak estimators on synthetic curves with a known answer."""

import numpy as np
import pytest

from thinfilm.analysis.critical import (
    estimate_tc,
    table_from_results,
    tc_from_binder_crossing,
    tc_from_peaks,
)
from thinfilm.input.errors import ThinFilmWarning

TC = 26.3


def binder(t, L, shift=0.0):
    # finite-size-scaling form U(x), x = (T - Tc) L^(1/nu), nu = 1; the curves of all L cross
    # exactly at Tc (plus an optional L-dependent shift): the exact answer of the test
    x = (t - TC - shift / L) / TC * L
    return (2 / 3) / (1 + np.exp(1.5 * x))


def test_noise_free_crossing_is_found_exactly():
    t = np.linspace(0.95 * TC, 1.05 * TC, 7)
    curves = {L: (binder(t, L), np.full(t.size, 1e-3)) for L in (8, 16, 32)}
    r = tc_from_binder_crossing(t, curves, n_boot=50)
    # tolerance: the local quadratic fits of a smooth curve; 1e-3 relative
    assert r["tc_K"] == pytest.approx(TC, rel=1e-3)
    assert r["u_cross"] == pytest.approx(1 / 3, abs=0.01)
    assert len(r["pairs"]) == 2 and r["method"] == "binder_crossing"


def test_bootstrap_error_bar_covers_the_true_crossing():
    # coverage check: over 20 noisy data sets, the true Tc lies within 2 quoted errors in
    # >= 15 (for an honest error ~95 % coverage, so failing has probability ~3e-4)
    t = np.linspace(0.96 * TC, 1.04 * TC, 5)
    rng = np.random.default_rng(8)
    hits, errs = 0, []
    for _ in range(20):
        curves = {}
        for L in (8, 16):
            err = np.full(t.size, 0.01)
            curves[L] = (binder(t, L) + err * rng.standard_normal(t.size), err)
        r = tc_from_binder_crossing(t, curves, n_boot=200, seed=int(rng.integers(1 << 30)))
        hits += abs(r["tc_K"] - TC) < 2 * r["tc_err_K"]
        errs.append(r["tc_err_K"])
    assert hits >= 15
    assert np.median(errs) < 0.02 * TC  # and the error is small enough to be useful


def test_shifted_crossings_are_reported_per_pair():
    t = np.linspace(0.9 * TC, 1.1 * TC, 9)
    curves = {L: (binder(t, L, shift=5.0), np.full(t.size, 1e-3)) for L in (8, 16)}
    r = tc_from_binder_crossing(t, curves, n_boot=50)
    # exact crossing of the shifted forms: (Tc + 5/8 - T) 8 = (Tc + 5/16 - T) 16 -> T = Tc
    assert r["pairs"][0]["tc_K"] == pytest.approx(TC, rel=2e-3)


def test_curves_that_do_not_cross_are_refused():
    t = np.linspace(0.7 * TC, 0.8 * TC, 5)
    curves = {8: (np.full(5, 0.5), np.full(5, 0.01)), 16: (np.full(5, 0.6), np.full(5, 0.01))}
    with pytest.raises(ValueError, match="do not cross"):
        tc_from_binder_crossing(t, curves)


def test_peak_of_a_parabola_with_noise():
    # exact vertex of the generating parabola; tolerance 4 bootstrap errors
    t = np.linspace(20, 30, 11)
    rng = np.random.default_rng(4)
    err = np.full(t.size, 0.05)
    v = 10 - 0.2 * (t - 24.7) ** 2 + err * rng.standard_normal(t.size)
    r = tc_from_peaks(t, v, err)
    assert abs(r["tc_K"] - 24.7) < 4 * r["tc_err_K"] and r["tc_err_K"] < 0.3
    assert not r["at_edge"]


def test_peak_at_the_edge_warns():
    t = np.linspace(20, 30, 6)
    with pytest.warns(ThinFilmWarning, match="end of the temperature range"):
        r = tc_from_peaks(t, t, np.full(6, 0.1))
    assert r["at_edge"]


def test_estimate_tc_picks_the_method_by_the_number_of_sizes():
    t = np.linspace(0.95 * TC, 1.05 * TC, 7)
    rows = []
    for L in (8, 16):
        for k, tk in enumerate(t):
            rows.append((L, {"temperature_K": tk, "binder": binder(tk, L), "binder_err": 1e-3,
                             "susceptibility": 5 - (k - 3.2) ** 2, "susceptibility_err": 0.1}))
    table = table_from_results(rows)
    assert estimate_tc(table, n_boot=30)["method"] == "binder_crossing"
    one = estimate_tc({16: table[16]}, n_boot=30)
    assert one["method"] == "peak" and one["sizes"] == [16]
    assert one["tc_K"] == pytest.approx(t[0] + 3.2 * (t[1] - t[0]), rel=1e-6)


def test_noise_in_the_ordered_plateau_does_not_fake_a_crossing():
    # Below Tc both Binder curves sit at 2/3 (Binder 1981) with tiny errors; noise there can
    # change the sign of U_L2 - U_L1. The real crossing, where the curves fall apart
    # significantly, must win (common practice: look where the curves separate).
    t = np.arange(20.0, 57.0, 3.0)
    u16 = np.array([0.66599, 0.66558, 0.6654, 0.6642, 0.6628, 0.659, 0.652, 0.612, 0.481, 0.326,
                    0.259, 0.135, 0.144])
    u32 = np.array([0.66560, 0.66600, 0.6661, 0.6659, 0.6658, 0.665, 0.662, 0.652, 0.070, 0.077,
                    0.127, 0.032, -0.076])
    e16 = np.array([3e-5, 5e-5, 8e-5, 2e-4, 3e-4, 6e-4, 1e-3, 5e-3, 2e-2, 3e-2, 4e-2, 4e-2, 4e-2])
    e32 = np.array([2e-5, 3e-5, 5e-5, 1e-4, 2e-4, 4e-4, 1e-3, 6e-3, 8e-2, 7e-2, 5e-2, 5e-2, 5e-2])
    res = tc_from_binder_crossing(t, {16: (u16, e16), 32: (u32, e32)}, n_boot=200)
    assert 41.0 < res["tc_K"] < 44.0, res["tc_K"]
