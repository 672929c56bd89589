"""Heun time-step bias of stochastic LLG equilibrium averages, against Monte Carlo.

The film of tests/test_sweep.py (16 x 16 square, J = 1 meV, K = 0.5 meV, 1 muB, damping 1):
one Monte Carlo point and stochastic LLG points at several time steps (samples 60 fs apart,
2000 ps each by default), through the sweep's own point function. The Heun scheme converges
weakly with order 1 (Kloeden and Platen, Numerical Solution of SDEs, 1992), so its error in
a long-time average is c1 dt + O(dt^2) (Talay and Tubaro, Stoch. Anal. Appl. 8, 483, 1990;
both from memory); the script fits the weighted straight line and prints its dt -> 0 value.

Measured at 9.3 K (seed 3): E = -1.4960(19), -1.4968(22), -1.5053(22), -1.5216(17) meV per spin
at dt = 1, 2, 4, 8 fs against Monte Carlo -1.4857(13); slope -0.0041 meV/fs, the line through
2, 4, 8 fs gives -1.4887(26).

    python validation/llg_timestep_bias.py [--temperature 9.3] [--steps 1 2 4 8]
        [--duration "2000 ps"] [--seed 3]
"""

import argparse
import time
import warnings

import numpy as np

from thinfilm.input.scenario import load_scenario
from thinfilm.runs.sweep_point import PointTask, compute_point, point_seed


def point(method, temperature_K, *, timestep_fs=2.0, duration="2000 ps", samples=100000,
          seed=3):
    """Table row of one point (as tests/test_sweep.py builds it)."""
    every = 30 if method == "monte-carlo" else int(round(60.0 / timestep_fs))
    sc = load_scenario({
        "lattice": {"shape": "square", "cells": [16, 16], "spacing": "0.3 nm"},
        "material": {"moment": "1 muB", "exchange": "1 meV",
                     "anisotropy": {"constant": "0.5 meV"}},
        "temperature": [f"{temperature_K} K", f"{temperature_K + 1} K"], "initial": "up",
        "seed": seed, "sweep": {"snapshots": 2},
        "dynamics": {"method": method, "damping": 1.0, "timestep": f"{timestep_fs:g} fs",
                     "sample_every": every,
                     **({"sweeps": {"warmup": 500, "samples": samples}} if method == "monte-carlo"
                        else {"duration": duration, "warmup": "10 ps"})}})
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return compute_point(PointTask(sc, 16, temperature_K,
                                       point_seed(seed, 16, temperature_K)))["row"]


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--temperature", type=float, default=9.3, help="K")
    ap.add_argument("--steps", type=float, nargs="+", default=[2.0, 4.0, 8.0], help="fs")
    ap.add_argument("--duration", default="2000 ps")
    ap.add_argument("--seed", type=int, default=3)
    a = ap.parse_args(argv)
    t0 = time.time()
    mc = point("monte-carlo", a.temperature, seed=a.seed)
    print(f"T = {a.temperature:g} K, 16 x 16, K/J = 0.5; Monte Carlo: E = "
          f"{mc['energy_meV']:.4f}({mc['energy_meV_err'] * 1e4:.0f}) meV, <|m|> = "
          f"{mc['m_abs']:.4f}({mc['m_abs_err'] * 1e4:.0f})", flush=True)
    rows = []
    for dt in a.steps:
        r = point("llg", a.temperature, timestep_fs=dt, duration=a.duration, seed=a.seed)
        rows.append(r)
        print(f"  LLG dt = {dt:g} fs: E = {r['energy_meV']:.4f}({r['energy_meV_err'] * 1e4:.0f})"
              f", <|m|> = {r['m_abs']:.4f}({r['m_abs_err'] * 1e4:.0f})", flush=True)
    if len(rows) >= 2:
        dts = np.array(a.steps)
        for key in ("energy_meV", "m_abs"):
            y = np.array([r[key] for r in rows])
            e = np.array([r[key + "_err"] for r in rows])
            if len(rows) > 2:
                (slope, icpt), cov = np.polyfit(dts, y, 1, w=1.0 / e, cov="unscaled")
                err = float(np.sqrt(cov[1, 1]))
            else:  # two points: the line through them, error propagated
                slope, icpt = np.polyfit(dts, y, 1)
                err = float(np.hypot(e[0] * dts[1], e[1] * dts[0]) / abs(dts[1] - dts[0]))
            sig = float(np.hypot(err, mc[key + "_err"]))
            print(f"{key}: slope {slope:+.5f} per fs, dt -> 0: {icpt:.4f} +- {err:.4f}; "
                  f"Monte Carlo {mc[key]:.4f}: {(icpt - mc[key]) / sig:+.1f} sigma")
    print(f"wall time {time.time() - t0:.0f} s")


if __name__ == "__main__":
    main()
