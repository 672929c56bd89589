"""Heating plans of synthetic sweep folders that a plan must not over-interpret.

Each case writes a sweep folder (observables.csv of finite-size-scaling forms of the 2D Ising
class, no simulation; see tests/test_plan_consistency.py for the forms) and prints the plan's
console summary, or the last line of the error it ends in. Usage:

    python validation/plan_consistency_cases.py OUT_DIR

Figures land in OUT_DIR/<case>/ (plan_*.png).
"""

import json
import math
import sys
import traceback
import warnings
from pathlib import Path

import numpy as np

from thinfilm._io import write_csv, write_json
from thinfilm.input.scenario import load_scenario
from thinfilm.plan.heating_plan import make_plan
from thinfilm.runs.sweep_tables import tc_estimate

U_STAR = 0.61069  # 2D Ising, Kamieniarz and Bloete (1993), from memory
C_U = (2 / 3) / U_STAR - 1.0
NAMES = ["size", "temperature_K", "m_abs", "m_abs_err", "binder", "binder_err", "susceptibility",
         "susceptibility_err", "correlation_length_nm", "correlation_length_nm_err",
         "mean_domain_area_nm2", "mean_domain_area_nm2_err", "area_weighted_domain_area_nm2",
         "n_effective", "method"]


def _row(L, T, tc, rng, shift=0.0, n_eff=500.0, method="monte-carlo"):
    x = (T - tc - shift / L**2) / tc * L
    t = T / tc - 1.0
    u = (2 / 3) / (1 + C_U * math.exp(min(1.2 * x, 50.0)))
    chi = L**1.75 / (1 + (x - 0.5) ** 2)
    xi = min(0.5 / max(abs(t), 1e-3), L / 2) * (0.5 if t < 0 else 1)
    m = (1 - T / tc) ** 0.125 if T < tc else 0.5 / math.sqrt(L)
    d_typ = L * 1.128 * (1 + m) / 2 if t < 0 else min(2 * xi, L)
    area = math.pi / 4 * min(xi, L) ** 2 + 1.0
    return {"size": L, "temperature_K": float(T), "m_abs": m, "m_abs_err": 0.01,
            "binder": u + 0.003 * rng.standard_normal(), "binder_err": 0.003,
            "susceptibility": chi * (1 + 0.02 * rng.standard_normal()),
            "susceptibility_err": 0.02 * chi,
            "correlation_length_nm": xi * (1 + 0.03 * rng.standard_normal()),
            "correlation_length_nm_err": 0.03 * xi, "mean_domain_area_nm2": area,
            "mean_domain_area_nm2_err": 0.05 * area,
            "area_weighted_domain_area_nm2": math.pi / 4 * d_typ**2,
            "n_effective": n_eff, "method": method}


def _scenario(sizes, method):
    dyn = ({"method": "monte-carlo", "damping": 0.5, "timestep": "1 fs"} if method == "monte-carlo"
           else {"method": "llg", "damping": 0.5, "timestep": "1 fs", "duration": "20 ps"})
    d = {"name": "synthetic-film",
         "lattice": {"shape": "square", "cells": [16, 16], "spacing": "1 nm", "edges": "periodic"},
         "material": {"moment": "1 muB", "exchange": "1 meV",
                      "anisotropy": {"constant": "1 meV", "axis": [0, 0, 1]}},
         "temperature": {"start": "10 K", "stop": "40 K", "step": "1 K"},
         "dynamics": dyn, "seed": 3}
    if len(sizes) > 1 or method == "monte-carlo":
        d["sizes"] = list(sizes)
    return load_scenario(d)


def _folder(path, rows, sizes, method="monte-carlo"):
    sc = _scenario(sizes, method)
    path.mkdir(parents=True, exist_ok=True)
    write_csv(path / "observables.csv", NAMES, [[r[c] for c in NAMES] for r in rows])
    # tc.json as the sweep writes it (thinfilm.runs.sweep_tables.tc_estimate of the rows)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        tc = tc_estimate({(int(r["size"]), float(r["temperature_K"])): r for r in rows})
    write_json(path / "tc.json", tc)
    desc = json.loads(json.dumps(sc.describe(), default=lambda o: o.tolist()))
    write_json(path / "manifest.json", {"kind": "sweep", "finished": True, "scenario": desc})
    return sc


def cases():
    rng = np.random.default_rng(2)
    out = {}
    out["range_below_tc"] = ([_row(L, T, 80.0, rng) for L in (16, 32)
                              for T in np.arange(10.0, 31.0, 2.0)], (16, 32), "monte-carlo")
    out["tc_at_lower_edge"] = ([_row(L, T, 990.0, rng) for L in (16, 32)
                                for T in np.arange(1000.0, 1251.0, 50.0)], (16, 32),
                               "monte-carlo")
    rows = []
    for T in (800.0, 1000.0, 1200.0, 1400.0, 1600.0):  # U4 0.64-0.67 everywhere
        r = _row(16, T, 3000.0, rng, n_eff=120.0, method="llg")
        r.update(binder=0.64 + 0.03 * rng.random(), binder_err=0.002,
                 susceptibility=0.05 + (0.03 if T == 1400.0 else 0.0), susceptibility_err=0.002)
        rows.append(r)
    out["llg_ordered_5_temperatures"] = (rows, (16,), "llg")
    rows = [_row(16, T, 3000.0, rng, n_eff=12.0, method="llg") for T in (800.0, 1200.0, 1600.0)]
    for r in rows:
        r["correlation_length_nm"] = r["correlation_length_nm_err"] = float("nan")
    out["llg_3_temperatures"] = (rows, (16,), "llg")
    out["drifting_crossings"] = ([_row(L, T, 41.3, rng, shift=-360.0) for L in (16, 32, 64)
                                  for T in np.arange(38.0, 46.01, 0.5)], (16, 32, 64),
                                 "monte-carlo")
    return out


def main(root):
    root = Path(root)
    for name, (rows, sizes, method) in cases().items():
        path = root / name
        sc = _folder(path, rows, sizes, method)
        print(f"=== {name}")
        try:
            res = make_plan(sc, path, resolution="2 nm", exposure="10 ms", reuse=True,
                            progress=False, llg_size=4, llg_duration="1 ps", n_boot=100)
            keep = ("Tc", "warning", "fix", "break-up", "resolved", "plan ", "beyond")
            for line in res["summary_text"].splitlines():
                if line.strip().split(" ")[0] in keep or line.strip().startswith(keep):
                    print(line)
            md = res["plan_md"].read_text()
            for line in md.splitlines():
                if "Tc =" in line or "between" in line and "refused" in line:
                    print("  plan.md:", line[:160])
        except Exception as exc:  # noqa: BLE001 (the point is to show what a user sees)
            last = traceback.format_exception_only(type(exc), exc)[-1].strip()
            print(f"  ends in: {last[:300]}")


if __name__ == "__main__":
    main(sys.argv[1] if len(sys.argv) > 1 else "outputs/plan_consistency_cases")
