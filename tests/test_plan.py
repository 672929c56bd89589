"""Heating plan on synthetic sweep folders whose Tc is known exactly.

The synthetic curves follow the square-lattice Ising forms around the exact
kB Tc/J = 2/ln(1 + sqrt 2) = 2.269185 (Onsager, Phys. Rev. 65, 117, 1944): correlation
length xi = a/|t| (nu = 1), order parameter (1 - T/Tc)^(1/8) (Yang, Phys. Rev. 85, 808,
1952), susceptibility ~ (t^2 + d^2)^(-7/8) (gamma = 7/4, rounded by a finite size d),
with 5 % Gaussian errors from a fixed seed. Units: moment 1 muB and J = 1 meV, so
Tc = 2.269185 J/kB = 26.33 K.
"""

import json
import math

import numpy as np
import pytest

from thinfilm._io import write_csv, write_json
from thinfilm.analysis.fluctuation import exposure_verdict
from thinfilm.input.errors import InputError
from thinfilm.input.scenario import load_scenario
from thinfilm.plan.curves import crossing
from thinfilm.plan.heating_plan import make_plan
from thinfilm.runs.folder import read_csv_table

JK = 11.604518  # J/kB in K for J = 1 meV (CODATA 2018 constants)
TC = 2.0 / math.log(1.0 + math.sqrt(2.0)) * JK
L, SPACING = 32, 1.0  # film side 32 nm
TEMPS = [float(x) for x in np.arange(14.0, 41.0, 1.0)]
FAST = {"llg_size": 8, "llg_duration": "4 ps", "n_boot": 150}

SCENARIO = {
    "name": "synthetic-ising",
    "lattice": {"shape": "square", "cells": [L, L], "spacing": f"{SPACING} nm",
                "edges": "periodic"},
    "material": {"moment": "1 muB", "exchange": "1 meV",
                 "anisotropy": {"constant": "1 meV", "axis": [0, 0, 1]}},
    "temperature": [f"{t} K" for t in TEMPS],
    "sizes": [16, L],
    "dynamics": {"method": "monte-carlo", "damping": 0.5, "timestep": "1 fs"},
    "seed": 3,
}


def _curves(rng):
    t = np.array(TEMPS)
    red = t / TC - 1.0
    xi = np.minimum(0.5 * SPACING / np.maximum(np.abs(red), 1e-3), 0.5 * L * SPACING)
    xi = np.where(red < 0, 0.5 * xi, xi)  # smaller amplitude on the ordered side
    m = np.where(red < 0, np.abs(np.minimum(-red, 1.0)) ** 0.125, 0.02)
    # majority fraction (1+m)/2 -> area-weighted domain ~ ((1+m)/2)^2 of the film below Tc,
    # domains ~ 2 xi above
    box = L * SPACING
    d_typ = np.where(red < 0, 1.128 * box * (1 + m) / 2, np.minimum(2 * xi, box))
    a_w = math.pi / 4 * d_typ**2
    a_mean = math.pi / 4 * np.minimum(xi, box) ** 2 + 1.0
    chi = 50.0 * (red**2 + 0.02**2) ** (-7 / 8) / 1e3
    noisy = lambda v: v * (1 + 0.05 * rng.standard_normal(v.size))  # noqa: E731
    return t, {"m_abs": noisy(m), "m_abs_err": 0.05 * m, "correlation_length_nm": noisy(xi),
               "correlation_length_nm_err": 0.05 * xi, "correlation_length_fit_nm": xi,
               "mean_domain_area_nm2": noisy(a_mean), "mean_domain_area_nm2_err": 0.05 * a_mean,
               "area_weighted_domain_area_nm2": noisy(a_w), "susceptibility": noisy(chi),
               "susceptibility_err": 0.05 * chi, "binder": np.where(red < 0, 0.66, 0.1),
               "domain_count": 10.0 + 0 * t, "largest_domain_fraction": (1 + m) / 2}


def make_synthetic_sweep(folder, *, tc_json=True, seed=5, scenario=SCENARIO):
    """A finished sweep folder with the synthetic curves (size L only) and its manifest."""
    sc = load_scenario(scenario)
    t, cols = _curves(np.random.default_rng(seed))
    names = ["size", "temperature_K", *cols]
    rows = [[L, t[i], *(float(cols[c][i]) for c in cols)] for i in range(t.size)]
    write_csv(folder / "observables.csv", names, rows)
    write_json(folder / "tc.json",
               {"tc_K": TC + 0.05, "tc_err_K": 0.15, "method": "binder_crossing"}
               if tc_json else {"tc_K": None, "tc_err_K": None, "method": None})
    desc = json.loads(json.dumps(sc.describe(), default=lambda o: o.tolist()))
    write_json(folder / "manifest.json", {"kind": "sweep", "finished": True, "scenario": desc})
    return sc


@pytest.fixture(scope="module")
def plan(tmp_path_factory):
    folder = tmp_path_factory.mktemp("plan")
    sc = make_synthetic_sweep(folder)
    res = make_plan(sc, folder, resolution="2 nm", exposure="10 ms", field_of_view="5 um",
                    reuse=True, progress=False, **FAST)
    return res, folder


def test_plan_tc_and_window_bracket_the_exact_tc(plan):
    res, folder = plan
    p = json.loads((folder / "plan.json").read_text())
    # Tc comes from the sweep's data by the stated rule (one size: the susceptibility peak,
    # symmetric about the exact Tc in the synthetic forms), not from the value the fixture put
    # into tc.json (TC + 0.05); tolerance: 3 quoted errors
    assert p["tc_method"] == f"susceptibility peak L = {L}"
    assert abs(p["tc_K"] - TC) < 3 * p["tc_err_K"]
    assert p["tc_K"] != pytest.approx(TC + 0.05, abs=1e-9)
    tcj = json.loads((folder / "tc.json").read_text())
    assert tcj["tc_K"] == p["tc_K"] and tcj["tc_err_K"] == p["tc_err_K"]  # one source of truth
    lo, hi = p["breakup_window_K"]
    elo, ehi = p["breakup_window_err_K"]
    assert lo + 2 * elo < TC < hi - 2 * ehi
    # expected edges from the synthetic forms: xi = 0.5 nm/t falls below 2 nm at t = 1/4;
    # (1+m)/2 * 1.128 falls below 1 at m = 0.773, 1 - T/Tc = 0.773^8 (Yang exponent 1/8)
    assert hi == pytest.approx(1.25 * TC, abs=4 * ehi + 0.5)
    assert lo == pytest.approx(TC * (1 - 0.7730**8), abs=4 * elo + 0.5)
    assert p["resolved_window_K"][0] < TC < p["resolved_window_K"][1]
    for key in ("temperature_K", "correlation_length_nm", "mean_domain_diameter_nm", "resolved",
                "fluctuation_time_ps", "verdict"):
        assert all(key in q for q in p["points"])
    assert (folder / "plan.md").read_text().count("thinfilm plan") >= 1
    assert all((folder / f).is_file() for f in ("plan_xi.png", "plan_tau.png", "plan_schedule.png"))
    assert 5 <= len(res["summary_text"].splitlines()) <= 12


def test_verdicts_and_timescale_note(plan):
    res, _ = plan
    p = res["plan"]
    # ps fluctuations against a 10 ms exposure: everything is time-averaged
    assert {q["verdict"] for q in p["points"]} <= {"averaged out to grey",
                                                    "averaged to the mean contrast"}
    assert "orders of magnitude shorter than the exposure" in p["timescale_note"]
    above = [q for q in p["points"] if q["temperature_K"] > TC + 1]
    assert above and all(q["verdict"] == "averaged out to grey" for q in above)


def test_schedule_is_denser_near_tc(plan):
    s = np.array(plan[0]["plan"]["schedule_K"])
    gaps, mids = np.diff(s), 0.5 * (s[1:] + s[:-1])
    near = gaps[np.abs(mids - TC) < 3.0]
    far = gaps[np.abs(mids - TC) > 7.0]
    assert near.size >= 2 and far.size >= 1
    assert near.mean() < 0.5 * far.mean()
    assert s[0] >= TEMPS[0] and s[-1] <= TEMPS[-1] and np.all(gaps > 0)


def test_a_tc_json_from_an_earlier_rule_is_rewritten(tmp_path):
    sc = make_synthetic_sweep(tmp_path, tc_json=False)
    man = json.loads((tmp_path / "manifest.json").read_text())
    write_json(tmp_path / "manifest.json", dict(man, tc_K=33.0))
    write_json(tmp_path / "tc.json", {"tc_K": 33.0, "tc_err_K": 0.01, "method": "binder_crossing"})
    p = make_plan(sc, tmp_path, resolution="2 nm", exposure="10 ms", reuse=True, progress=False,
                  **FAST)["plan"]
    assert p["tc_json_rewritten"] and p["tc_K"] != 33.0
    assert json.loads((tmp_path / "tc.json").read_text())["tc_K"] == p["tc_K"]
    assert json.loads((tmp_path / "manifest.json").read_text())["tc_K"] == p["tc_K"]
    assert "rewritten by this plan" in (tmp_path / "plan.md").read_text()


def test_coarse_resolution_takes_the_resolved_window_from_the_extrapolation(tmp_path):
    sc = make_synthetic_sweep(tmp_path)
    p = make_plan(sc, tmp_path, resolution="30 nm", exposure="10 ms", field_of_view="5 um",
                  reuse=True, progress=False, **FAST)["plan"]
    assert not any(q["resolved"] for q in p["points"])  # no lattice point reaches 30 nm
    assert p["resolved_window_extrapolated"] and "extrapolated beyond it" in p["resolved_note"]
    lo, hi = p["resolved_window_K"]
    # synthetic xi = 0.5 nm / |t| above Tc and 0.25 nm / |t| below (see _curves): xi > 30 nm
    # for T - Tc < Tc / 60 above and Tc - T < Tc / 120 below (exact for the synthetic forms,
    # with the plan's Tc in t); tolerance: 3 standard errors of the fitted half-widths plus
    # 10 % for the fit's correction term c |t|
    assert lo < p["tc_K"] < hi
    hw = p["extrapolation"]["resolved_halfwidth_K"]
    assert hi - p["tc_K"] == pytest.approx(hw["above"][0], rel=1e-9)
    assert abs(hw["above"][0] - p["tc_K"] / 60) < 3 * hw["above"][1] + 0.1 * p["tc_K"] / 60


@pytest.mark.parametrize("kw, words", [
    ({"resolution": "-30 nm"}, ["resolution '-30 nm'", "positive", 'resolution="30 nm"']),
    ({"resolution": "30"}, ["resolution '30'", "no unit"]),
    ({"exposure": "10 nm"}, ["exposure '10 nm'", "wrong kind of unit"]),
    ({"resolution": "10 um", "field_of_view": "5 um"},
     ["resolution", "smaller than field_of_view"]),
    ({"exposure": None}, ["no instrument exposure", 'exposure="10 ms"']),
    ({"dwell": "five minutes"}, ["dwell"]),
])
def test_bad_instrument_values_are_input_errors(tmp_path, kw, words):
    """Called from Python, the messages name the keywords (no command-line flags)."""
    args = {"resolution": "30 nm", "exposure": "10 ms", "field_of_view": "5 um", **kw}
    with pytest.raises(InputError) as exc:
        make_plan(SCENARIO, tmp_path, reuse=True, progress=False, **args)
    for w in words:
        assert w in str(exc.value)
    assert "--" not in str(exc.value)


def test_bad_instrument_value_on_the_command_line_names_the_flag(tmp_path, capsys):
    import yaml

    from thinfilm.cli import main

    f = tmp_path / "film.yaml"
    f.write_text(yaml.safe_dump(SCENARIO))
    assert main(["plan", str(f), "-o", str(tmp_path / "out"), "--resolution", "30",
                 "--exposure", "10 ms", "-q"]) == 2
    err = capsys.readouterr().err
    assert "--resolution '30'" in err and '--resolution "30 nm"' in err


def test_a_folder_with_a_run_needs_reuse(tmp_path):
    make_synthetic_sweep(tmp_path)
    with pytest.raises(InputError, match=r"reuse=True.*\(out_dir\)"):
        make_plan(SCENARIO, tmp_path, resolution="2 nm", exposure="1 s", progress=False, **FAST)


def test_crossing_of_an_exact_power_law():
    # xi = a/(T - Tc) crosses xi0 at T = Tc + a/xi0 exactly; the linear-in-ln interpolation
    # is exact to O(step^2), and the bootstrap error shrinks with the input errors
    t = np.linspace(26.0, 40.0, 29)
    xi = 20.0 / (t - 25.0)
    r = crossing("fall_after_peak", t, xi, 0.02 * xi, 4.0, n_boot=300, seed=1)
    assert r["bound"] is None
    assert abs(r["value_K"] - 30.0) < 3 * r["err_K"] + 0.05
    assert 0 < r["err_K"] < 0.5
    never = crossing("fall_after_peak", t, xi, 0.02 * xi, 100.0, n_boot=50)
    assert never["bound"] == "never" and never["value_K"] is None


def test_exposure_verdict_flips_with_exposure():
    # definition of the verdict (factor 10 either way; common practice for "much longer")
    assert exposure_verdict(5e-12, 1e-14) == "frozen"
    assert exposure_verdict(5e-12, 5e-12) == "blurred/partly averaged"
    assert exposure_verdict(5e-12, 1e-2) == "averaged out to grey"
    assert exposure_verdict(5e-12, 1e-2, ordered=True) == "averaged to the mean contrast"


def test_a_plan_per_named_instrument_reuses_the_fluctuation_runs(tmp_path):
    two = [{"name": "peem", "resolution": "2 nm", "exposure": "1 s", "field_of_view": "5 um"},
           {"name": "kerr", "resolution": "8 nm", "exposure": "10 ms", "field_of_view": "50 um"}]
    sc = make_synthetic_sweep(tmp_path, scenario=dict(SCENARIO, instrument=two))
    a = make_plan(sc, tmp_path, reuse=True, progress=False, instrument="peem", **FAST)
    stamp = (tmp_path / "fluctuations.json").stat().st_mtime_ns
    b = make_plan(sc, tmp_path, reuse=True, progress=False, instrument="kerr", **FAST)
    assert (tmp_path / "fluctuations.json").stat().st_mtime_ns == stamp  # reused, not rerun
    assert a["plan"]["llg"]["runs"] == b["plan"]["llg"]["runs"]
    for name, res in (("peem", 2.0), ("kerr", 8.0)):
        p = json.loads((tmp_path / f"plan-{name}.json").read_text())
        assert p["instrument"]["resolution_nm"] == pytest.approx(res)
        assert (tmp_path / f"plan-{name}_xi.png").is_file()
    # a coarser instrument resolves a narrower window (xi must exceed its resolution)
    wa, wb = a["plan"]["resolved_window_K"], b["plan"]["resolved_window_K"]
    assert wb[1] - wb[0] < wa[1] - wa[0]
    with pytest.raises(InputError, match="^instrument 'sem'"):  # from Python: the keyword
        make_plan(sc, tmp_path, reuse=True, progress=False, instrument="sem", **FAST)


def test_the_plan_says_what_is_measured_and_what_is_extrapolated(plan):
    res, folder = plan
    b = res["plan"]["extrapolation"]
    # the synthetic table has one size and no binder errors: no finite-size collapse, said in words
    assert "collapse_refused" in b and b["collapse_refused"]
    rows = read_csv_table(folder / "extrapolation.csv")
    flags = set(rows["correlation_length_flag"].tolist())
    assert "extrapolated" in flags and flags <= {"measured", "extrapolated"}
    # synthetic xi = 0.5 nm / |t| above Tc (see _curves): the half-width where xi > 2 nm is
    # Tc * 0.5 / 2 (exact for the synthetic form), within the fit's stated error
    w, err = b["resolved_halfwidth_K"]["above"]
    assert abs(w - 0.25 * TC) < 4 * err + 0.02 * TC
    assert "Beyond the lattice" in (folder / "plan.md").read_text()
