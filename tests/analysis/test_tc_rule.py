"""One Tc per sweep by a stated rule, or a statement of what the data cannot tell.

Synthetic observables tables follow finite-size scaling forms of the 2D Ising class about a
known Tc: U4(T, L) = U(x), x = (T - Tc)/Tc L^(1/nu), nu = 1 (Onsager, Phys. Rev. 65, 117,
1944), with U(0) = U* = 0.61069 (Kamieniarz and Bloete, J. Phys. A 26, 201, 1993; from memory)
and an optional shift s/L^2 of the curves, which makes the crossing of L and 2L drift as
T*(L) = Tc - s/(2 L^2) (Binder, Z. Phys. B 43, 119, 1981: crossings approach Tc as a power of
1/L); chi = L^(7/4) g(x) (gamma/nu = 7/4) with its maximum at
x = 0.5; <|m|> = (1 - T/Tc)^(1/8) below Tc (Yang, Phys. Rev. 85, 808, 1952). Errors: 0.3 %
on U4 and 2 % on chi, drawn from a fixed seed.
"""

import math

import numpy as np
import pytest

from thinfilm._numbers import fmt_pm
from thinfilm.analysis.critical import tc_from_peaks
from thinfilm.analysis.tc_rule import U_STAR_ISING, choose_tc, mode_keys, tc_text
from thinfilm.runs.sweep_tables import tc_estimate

C_U = (2 / 3) / U_STAR_ISING - 1.0  # U(0) = U*


def table(temps, sizes, tc, *, shift=0.0, n_eff=500.0, seed=1, method="monte-carlo",
          u_err=0.003, chi_err=0.02):
    """Observables rows {(L, T): row} of the synthetic forms (module docstring)."""
    rng = np.random.default_rng(seed)
    rows = {}
    for L in sizes:
        for T in temps:
            x = (T - tc - shift / L**2) / tc * L
            u = (2 / 3) / (1 + C_U * math.exp(1.2 * x))
            chi = L**1.75 / (1 + (x - 0.5) ** 2)
            m = (1 - T / tc) ** 0.125 if T < tc else 0.5 / math.sqrt(L)
            rows[(L, T)] = {
                "size": float(L), "temperature_K": float(T),
                "binder": u + u_err * rng.standard_normal(), "binder_err": u_err,
                "susceptibility": chi * (1 + chi_err * rng.standard_normal()),
                "susceptibility_err": chi_err * chi, "m_abs": m, "m_abs_err": 0.01,
                "n_effective": n_eff, "method": method}
    return rows


def test_transition_inside_two_sizes_gives_the_crossing_with_cross_checks():
    temps = np.arange(20.0, 33.0, 1.0)
    r = tc_estimate(table(temps, (16, 32), 26.3), anisotropy=1.0)
    assert r["status"] == "found" and r["method"] == "binder_crossing"
    # tolerance: 3 quoted errors (the error includes the spread of the methods)
    assert abs(r["tc_K"] - 26.3) < 3 * r["tc_err_K"]
    assert temps[0] < r["tc_K"] < temps[-1]
    labels = {c["label"] for c in r["cross_checks"]}
    assert {"Binder crossing L = 16/32", "susceptibility peak L = 32"} <= labels
    # the error covers every counted estimate
    for c in r["cross_checks"]:
        if c["bracketed"] and c["in_error"]:
            assert abs(c["tc_K"] - r["tc_K"]) <= r["tc_err_K"] + 1e-12


def test_sweep_below_tc_says_ordered_and_gives_no_tc():
    # issue case: MC sweep 10-30 K of a film whose Tc is far above; today: "Tc 30 +- 0.11 K
    # (susceptibility_peak)", the last temperature of the sweep
    temps = np.arange(10.0, 31.0, 2.0)
    r = tc_estimate(table(temps, (16, 32), 80.0), anisotropy=1.0)
    assert r["tc_K"] is None and r["tc_err_K"] is None
    assert r["status"] == "above_sweep"
    assert "ordered at every temperature up to 30 K" in r["message"]
    assert "upward" in r["fix"]


def test_transition_at_the_lower_edge_is_below_the_sweep():
    # issue case: 1000-1250 K in 50 K steps with Tc at about 1009 K: today Tc = 1009 +- 2.6 K
    # without a warning; the crossing is not bracketed (no point below it)
    temps = np.arange(1000.0, 1251.0, 50.0)
    r = tc_estimate(table(temps, (16, 32), 990.0), anisotropy=1.0)
    assert r["tc_K"] is None and r["status"] == "below_sweep"
    assert "Tc lies below the sweep" in r["message"] and "downward" in r["fix"]


def test_single_size_peak_needs_points_on_both_sides():
    temps = np.arange(20.0, 27.0, 1.0)  # peak of L = 16 at Tc (1 + 0.5/16) = 27.1 K: beyond
    r = tc_estimate(table(temps, (16,), 26.3), anisotropy=1.0)
    assert r["tc_K"] is None
    assert r["status"] in ("above_sweep", "not_bracketed")
    temps = np.arange(20.0, 34.0, 1.0)
    r = tc_estimate(table(temps, (16,), 26.3), anisotropy=1.0)
    assert r["status"] == "found" and r["method"] == "susceptibility_peak"
    # the synthetic peak is at Tc (1 + 0.5/L) exactly; 3 quoted errors
    assert abs(r["tc_K"] - 26.3 * (1 + 0.5 / 16)) < 3 * r["tc_err_K"]


def test_drifting_crossings_are_extrapolated_and_their_disagreement_is_covered():
    # issue case (demo): pairs 16/32 and 32/64 give crossings 3 sigma apart; one Tc must cover
    # both, with a warning. Synthetic drift T*(L) = Tc + 180/L^2: 16/32 at Tc + 0.70 K,
    # 32/64 at Tc + 0.18 K
    temps = np.arange(38.0, 46.01, 0.5)
    r = tc_estimate(table(temps, (16, 32, 64), 41.3, shift=-360.0, u_err=0.002), anisotropy=1.0)
    assert r["status"] == "found" and r["method"] == "binder_crossing_extrapolated"
    pairs = [c for c in r["cross_checks"] if c["method"] == "binder_crossing"]
    assert len(pairs) == 2 and all(p["bracketed"] for p in pairs)
    for p in pairs:
        assert abs(p["tc_K"] - r["tc_K"]) <= r["tc_err_K"]
    assert r["disagreement"] and "16/32" in r["disagreement"]
    # the extrapolation lands nearer the true Tc than the largest pair's crossing
    assert abs(r["tc_K"] - 41.3) < abs(pairs[-1]["tc_K"] - 41.3)


def test_u4_that_never_falls_through_the_universal_value_gives_no_tc():
    # issue case: LLG set of 5 temperatures, U4 0.64-0.67 at every point; today Tc = 1328 +-
    # 205 K from a susceptibility peak in the noise
    rng = np.random.default_rng(4)
    rows = {}
    for T in (800.0, 1000.0, 1200.0, 1400.0, 1600.0):
        chi = 0.05 + (0.03 if T == 1400.0 else 0.0)
        rows[(16, T)] = {"size": 16.0, "temperature_K": T,
                         "binder": 0.64 + 0.03 * rng.random(), "binder_err": 0.002,
                         "susceptibility": chi, "susceptibility_err": 0.002,
                         "m_abs": 0.85 - 0.0002 * (T - 800), "m_abs_err": 0.01,
                         "n_effective": 120.0, "method": "llg"}
    r = tc_estimate(rows, anisotropy=1.0)
    assert r["tc_K"] is None and r["status"] == "above_sweep"
    assert r["mode"] == "llg-set"
    assert "dynamics.duration" in r["message"] and "dynamics.sweeps" not in r["message"] + r["fix"]


@pytest.mark.parametrize("method, key, wrong", [("llg", "dynamics.duration", "dynamics.sweeps"),
                                                 ("monte-carlo", "dynamics.sweeps.samples",
                                                  "dynamics.duration")])
def test_unequilibrated_set_names_the_keys_of_its_mode(method, key, wrong):
    temps = np.arange(20.0, 33.0, 1.0)
    r = tc_estimate(table(temps, (16, 32), 26.3, n_eff=8.0, method=method), anisotropy=1.0)
    assert r["status"] == "unequilibrated" and r["tc_K"] is None
    assert key in r["fix"] and wrong not in r["fix"] and wrong not in r["message"]
    assert mode_keys({"llg": "llg-set", "monte-carlo": "mc-set"}[method])["samples"] in r["fix"]


def test_one_temperature_and_nan_columns_are_statements_not_tracebacks():
    r = tc_estimate(table([26.0], (16, 32), 26.3), anisotropy=1.0)
    assert r["status"] == "too_few_temperatures" and r["tc_K"] is None
    rows = table(np.arange(20.0, 33.0, 1.0), (16, 32), 26.3)
    for row in rows.values():
        row["binder"] = row["binder_err"] = row["susceptibility"] = float("nan")
    r = tc_estimate(rows, anisotropy=1.0)
    assert r["tc_K"] is None and r["message"]


def test_peak_value_is_never_below_the_measured_points():
    # issue case: L = 16 alone gave a peak value 0.0137 below measured chi up to 0.060: a
    # parabola through a sharp peak. The maximum of a curve is at least its largest point
    # (definition of the maximum) within the point's error.
    t = np.arange(1000.0, 1251.0, 25.0)
    chi = 0.002 + 0.058 * np.exp(-np.abs(t - 1150.0) / 12.0)
    r = tc_from_peaks(t, chi, 0.02 * chi, n_boot=100)
    assert r["peak_value"] >= chi.max() - 2 * 0.02 * chi.max()
    assert abs(r["tc_K"] - 1150.0) <= r["tc_err_K"] + 1e-9


@pytest.mark.parametrize("v, e, text", [(41.6053, 0.049, "41.61 +- 0.05 K"),
                                        (30.0, 0.11, "30.00 +- 0.11 K"),
                                        (1009.3, 2.6, "1009.3 +- 2.6 K"),
                                        (1328.0, 205.0, "1330 +- 200 K"),
                                        (36.71, 0.995, "36.7 +- 1.0 K")])
def test_digits_follow_the_error(v, e, text):
    # rounding convention of the Particle Data Group (two digits of the error when its
    # leading digits are 10-35, else one; the value to the same place): common practice
    assert fmt_pm(v, e) == text


def test_tc_text_is_the_one_text_of_tc():
    r = tc_estimate(table(np.arange(20.0, 33.0, 1.0), (16, 32), 26.3), anisotropy=1.0)
    assert tc_text(r) == f"Tc = {fmt_pm(r['tc_K'], r['tc_err_K'])} (Binder crossing L = 16/32)"
    assert tc_text({"status": "above_sweep"}) == "Tc not determined (Tc lies above the sweep)"


def test_rule_reads_an_observables_table_directly():
    rows = table(np.arange(20.0, 33.0, 1.0), (16, 32), 26.3)
    cols = {k: np.array([r[k] for r in rows.values()]) for k in next(iter(rows.values()))}
    a = choose_tc(cols, anisotropy=1.0)
    b = tc_estimate(rows, anisotropy=1.0)
    assert a["tc_K"] == b["tc_K"] and a["mode"] == "mc-set"
