"""The heating plan gives one consistent answer, or says what the data cannot tell.

Synthetic sweep folders (observables.csv of several sizes, no simulation) follow
finite-size-scaling forms of the 2D Ising class about a chosen Tc: U4(T, L) = U(x),
x = (T - Tc)/Tc L (nu = 1, Onsager, Phys. Rev. 65, 117, 1944), U(0) = U* = 0.61069
(Kamieniarz and Bloete, J. Phys. A 26, 201, 1993; from memory); chi = L^(7/4) g(x)
(gamma/nu = 7/4); xi = 0.5 nm/|t| capped by L/2 (nu = 1); <|m|> = (1 - T/Tc)^(1/8) (Yang,
Phys. Rev. 85, 808, 1952). The plan's outputs are read back as a user would: console summary,
plan.md, plan.json, tc.json, captions.md.
"""

import json
import math
import re
import warnings

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from sweep_helpers import tiny_sweep

from thinfilm._io import write_csv, write_json
from thinfilm._numbers import fmt_pm
from thinfilm.analysis.tc_rule import U_STAR_ISING
from thinfilm.input.errors import ThinFilmWarning
from thinfilm.input.scenario import load_scenario
from thinfilm.plan.heating_plan import make_plan
from thinfilm.runs.sweep import run_sweep

FAST = {"llg_size": 4, "llg_duration": "1 ps", "n_boot": 60, "n_points": 8}
C_U = (2 / 3) / U_STAR_ISING - 1.0


def scenario(sizes, method="monte-carlo"):
    dyn = ({"method": "monte-carlo", "damping": 0.5, "timestep": "1 fs"} if method == "monte-carlo"
           else {"method": "llg", "damping": 0.5, "timestep": "1 fs", "duration": "20 ps"})
    return {"name": "synthetic-fss",
            "lattice": {"shape": "square", "cells": [16, 16], "spacing": "1 nm",
                        "edges": "periodic"},
            "material": {"moment": "1 muB", "exchange": "1 meV",
                         "anisotropy": {"constant": "1 meV", "axis": [0, 0, 1]}},
            "temperature": {"start": "10 K", "stop": "40 K", "step": "1 K"},
            "sizes": list(sizes), "dynamics": dyn, "seed": 3}


def rows_for(temps, sizes, tc, *, shift=0.0, seed=1, n_eff=500.0, method="monte-carlo",
             nan_cols=(), flat=False):
    """Observables rows of the synthetic forms (module docstring)."""
    rng = np.random.default_rng(seed)
    names = ["size", "temperature_K", "m_abs", "m_abs_err", "binder", "binder_err",
             "susceptibility", "susceptibility_err", "correlation_length_nm",
             "correlation_length_nm_err", "mean_domain_area_nm2", "mean_domain_area_nm2_err",
             "area_weighted_domain_area_nm2", "n_effective", "method"]
    rows = []
    for L in sizes:
        for T in temps:
            x = (T - tc - shift / L**2) / tc * L
            t = T / tc - 1.0
            u = 0.3 if flat else (2 / 3) / (1 + C_U * math.exp(1.2 * x))
            chi = 1.0 if flat else L**1.75 / (1 + (x - 0.5) ** 2)
            xi = 2.0 if flat else min(0.5 / max(abs(t), 1e-3), L / 2) * (0.5 if t < 0 else 1)
            m = 0.3 if flat else ((1 - T / tc) ** 0.125 if T < tc else 0.5 / math.sqrt(L))
            d_typ = L * 1.128 * (1 + m) / 2 if (t < 0 and not flat) else min(2 * xi, L)
            row = {"size": L, "temperature_K": float(T), "m_abs": m, "m_abs_err": 0.01,
                   "binder": u + 0.003 * rng.standard_normal(), "binder_err": 0.003,
                   "susceptibility": chi * (1 + 0.02 * rng.standard_normal()),
                   "susceptibility_err": 0.02 * chi,
                   "correlation_length_nm": xi * (1 + 0.03 * rng.standard_normal()),
                   "correlation_length_nm_err": 0.03 * xi,
                   "mean_domain_area_nm2": math.pi / 4 * min(xi, L) ** 2 + 1.0,
                   "mean_domain_area_nm2_err": 0.05 * (math.pi / 4 * min(xi, L) ** 2 + 1.0),
                   "area_weighted_domain_area_nm2": math.pi / 4 * d_typ**2,
                   "n_effective": n_eff, "method": method}
            for c in nan_cols:
                row[c] = float("nan")
            rows.append([row[c] for c in names])
    return names, rows


def folder(path, temps, sizes, tc, method="monte-carlo", **kw):
    sc = load_scenario(scenario(sizes, method))
    names, rows = rows_for(temps, sizes, tc, method=method, **kw)
    path.mkdir(parents=True, exist_ok=True)
    write_csv(path / "observables.csv", names, rows)
    write_json(path / "tc.json", {})
    desc = json.loads(json.dumps(sc.describe(), default=lambda o: o.tolist()))
    write_json(path / "manifest.json", {"kind": "sweep", "finished": True, "scenario": desc})
    return sc


def plan_texts(res, path):
    p = res["plan"]
    caps = (path / "captions.md").read_text() if (path / "captions.md").is_file() else ""
    return p, res["summary_text"], res["plan_md"].read_text(), caps


def tc_values(text):
    """Every number printed as 'Tc = <number> +-' or, in the summary, 'Tc   <number> +-'."""
    return re.findall(r"(?:T_?c\$? = |  Tc {2,})([0-9][0-9.]*) (?:\+-|±)", text)


def test_sweep_below_tc_gives_no_tc_window_or_schedule(tmp_path):
    # issue case: a sweep 10-30 K of a film whose Tc is far above; today the plan prints
    # "Tc 30 +- 0.11 K (susceptibility_peak)" and a schedule around it
    sc = folder(tmp_path, np.arange(10.0, 31.0, 2.0), (8, 16), 80.0)
    res = make_plan(sc, tmp_path, resolution="2 nm", exposure="10 ms", reuse=True,
                    progress=False, **FAST)
    p, summary, md, _ = plan_texts(res, tmp_path)
    assert p["tc_K"] is None and p["breakup_window_K"] is None and p["schedule_K"] == []
    assert p["resolved_window_K"] is None
    assert "ordered at every temperature up to 30 K" in summary
    assert "extend the temperature range upward" in summary
    assert "refused" not in md and not tc_values(summary + md)
    tcj = json.loads((tmp_path / "tc.json").read_text())
    assert tcj["tc_K"] is None and tcj["status"] == "above_sweep"
    assert (tmp_path / "plan_sweep.png").is_file()


def test_llg_set_of_three_temperatures_ends_in_a_statement(tmp_path):
    # issue case: an LLG set with 3 temperatures ended in "ValueError: All-NaN slice
    # encountered"; and a warning advised dynamics.sweeps.samples, a key the llg-set refuses
    sc = folder(tmp_path, [800.0, 1200.0, 1600.0], (16,), 3000.0, method="llg",
                nan_cols=("correlation_length_nm", "correlation_length_nm_err"), n_eff=12.0)
    res = make_plan(sc, tmp_path, resolution="30 nm", exposure="10 ms", reuse=True,
                    progress=False, **FAST)
    p, summary, md, _ = plan_texts(res, tmp_path)
    assert p["tc_K"] is None and p["tc_status"] == "unequilibrated"
    assert "dynamics.duration" in summary and "dynamics.sweeps" not in summary + md


def test_drifting_crossings_give_one_tc_printed_once(tmp_path):
    # issue case (demo): crossings 16/32 and 32/64 disagree by ~3 sigma and the collapse gives
    # a third value; today plan.md prints Tc = 41.64 +- 0.049 K and, further down, Tc = 41.95
    # +- 0.1 K, and two different resolved windows
    sc = folder(tmp_path, np.arange(38.0, 46.01, 0.5), (16, 32, 64), 41.3, shift=-360.0)
    res = make_plan(sc, tmp_path, resolution="2 nm", exposure="10 ms", reuse=True,
                    progress=False, **FAST)
    p, summary, md, caps = plan_texts(res, tmp_path)
    tc = p["tc"]
    assert tc["status"] == "found" and 38.0 < p["tc_K"] < 46.0
    one = fmt_pm(p["tc_K"], p["tc_err_K"])
    # one Tc in every output, with the digits of its error
    assert set(tc_values(summary + md + caps)) == {one.split()[0]}
    assert json.loads((tmp_path / "tc.json").read_text())["tc_K"] == p["tc_K"]
    # the disagreement is covered by the error and stated
    pairs = [c for c in tc["cross_checks"] if c["method"] == "binder_crossing"]
    assert all(abs(c["tc_K"] - p["tc_K"]) <= p["tc_err_K"] for c in pairs)
    assert "disagree" in summary and "disagree" in md
    # one resolved window: the same text in the summary and plan.md; none in 'Beyond'
    window = summary.split("resolved     ")[1].splitlines()[0]
    assert window in md
    assert "between refused" not in md
    # the largest lattice xi stated is the largest of the plan's lattice curve, which the
    # table's lattice column is read from (its infinite-film column is a separate quantity)
    xs = [q.get("correlation_length_lattice_nm", q["correlation_length_nm"]) for q in p["points"]]
    xs = [x for x in xs if x]
    assert max(xs) <= p["max_correlation_length_nm"] * (1 + 1e-9)


# transition inside the range, the range below Tc (ordered throughout), the range above Tc,
# a flat set, two temperatures only, NaN in the U4 and susceptibility columns
KINDS = ("inside", "range_below_tc", "range_above_tc", "flat", "short", "nan")


@settings(max_examples=18, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(kind=st.sampled_from(KINDS), n_sizes=st.integers(1, 2), seed=st.integers(0, 50),
       step=st.sampled_from([1.0, 2.0]))
def test_plan_states_one_tc_inside_the_range_or_says_it_cannot(tmp_path_factory, kind, n_sizes,
                                                               seed, step):
    path = tmp_path_factory.mktemp("prop")
    sizes = (16, 32)[:n_sizes] if n_sizes == 2 else (32,)
    temps = np.arange(16.0, 36.01, step)
    tc = {"inside": 26.0, "range_below_tc": 60.0, "range_above_tc": 8.0}.get(kind, 26.0)
    kw = {"flat": {"flat": True}, "nan": {"nan_cols": ("binder", "binder_err", "susceptibility",
                                                       "susceptibility_err")}}.get(kind, {})
    if kind == "short":
        temps = temps[:2]
    sc = folder(path, temps, sizes, tc, seed=seed, **kw)
    res = make_plan(sc, path, resolution="2 nm", exposure="10 ms", reuse=True, progress=False,
                    **FAST)
    p, summary, md, caps = plan_texts(res, path)
    tcj = json.loads((path / "tc.json").read_text())
    assert tcj["tc_K"] == p["tc_K"]  # one source of truth
    if p["tc_K"] is None:
        assert p["tc_status"] != "found" and "not determined" in summary
        assert p["tc"]["message"] and p["tc"]["fix"]
        assert not tc_values(summary + md + caps)
        assert p["schedule_K"] == [] and p["breakup_window_K"] is None
    else:
        assert temps[0] < p["tc_K"] < temps[-1]
        assert set(tc_values(summary + md + caps)) == {fmt_pm(p["tc_K"], p["tc_err_K"]).split()[0]}
        window = summary.split("resolved     ")[1].splitlines()[0]
        assert window.split(":")[0] in md
    # the transition's truth where the data bracket it; never a Tc for data that cannot
    if kind != "inside":
        assert p["tc_K"] is None
    elif p["tc_K"] is not None:
        assert abs(p["tc_K"] - tc * (1 + 0.5 / max(sizes) * (n_sizes == 1))) < \
            3 * p["tc_err_K"] + step  # 3 errors, plus a grid step for a one-size peak


@pytest.mark.parametrize("bad", ["{not json", "[1, 2]"])
def test_unreadable_tc_json_is_replaced_not_a_traceback(tmp_path, bad):
    sc = folder(tmp_path, np.arange(20.0, 33.0, 1.0), (16, 32), 26.3)
    (tmp_path / "tc.json").write_text(bad)
    res = make_plan(sc, tmp_path, resolution="2 nm", exposure="10 ms", reuse=True,
                    progress=False, **FAST)
    assert json.loads((tmp_path / "tc.json").read_text())["tc_K"] == res["plan"]["tc_K"]


def test_a_short_llg_set_is_told_to_lengthen_its_duration_not_its_sweeps(tmp_path):
    # issue case: a warning advised dynamics.sweeps.samples, which an llg-set refuses
    # (thinfilm.input.modes.KEY_MODES); the key that lengthens an LLG set is dynamics.duration
    sc = tiny_sweep(sizes=(4,), temps=("2 K", "3 K"), method="llg")
    assert sc.mode == "llg-set"
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        out = run_sweep(sc, tmp_path / "llg", workers=1, progress=False)
    texts = [str(w.message) for w in caught if issubclass(w.category, ThinFilmWarning)]
    advice = [t for t in texts if "raise" in t]
    assert advice and all("dynamics.duration" in t and "sweeps" not in t for t in advice)
    tc = json.loads((out / "tc.json").read_text())
    assert tc["tc_K"] is None and "dynamics.sweeps" not in json.dumps(tc)
