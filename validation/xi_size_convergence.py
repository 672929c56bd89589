"""Correlation lengths of a 16-64 sweep near Tc against large lattices (L >= 256) of the same film.

The film: the square Ising limit (K/J = 1000, J = 1 meV, 1 muB, 0.4 nm spacing), Metropolis
sweeps plus Wolff cluster moves, run through the public API like any scenario. A sweep of
sizes 16, 32 and 64 over T = Tc' (1 + t) is analysed as the heating plan does
(:func:`thinfilm.plan.extrapolated.extrapolated_lengths`): every row is flagged converged in
the film size or finite-size limited, and the infinite-film length comes from the converged
sizes ("measured") or from the finite-size scaling fit ("finite-size scaling"). Independent
large lattices (default L = 256, film side >= 10 xi at the chosen t) give the reference at a
few temperatures near Tc, through their S(k) fit (the precise estimator where L >> xi; the
second moment and the C(r) fit are printed beside it). Both are also set beside the exact
length.

Exact reference above Tc: the one-particle second-moment length h/(2 sinh(gamma/2)) of the exact
gap gamma = 2 (K* - K), tanh K* = exp(-2K), at the softened Ising coupling K = (1 - kB T/K)
J/(kB T) (Onsager, Phys. Rev. 65, 117, 1944; McCoy and Wu, The Two-Dimensional Ising Model,
1973; derivations in validation/xi_exact.py). Tc' = Tc (1 - Tc/(K/J)) (validation/ising_tc.py).

Pass: at each large-lattice temperature, the sweep's infinite-film value (the converged lattice
value where flagged measured, the scaling fit where flagged finite-size scaling) agrees with the
large-lattice value within two combined standard errors; the largest sweep lattice's own value
and its convergence flag are printed beside it.

    python validation/xi_size_convergence.py [--t 0.03 0.05 0.08] [--large 256]
        [--samples 3000] [--large-samples 1500] [--out outputs/validation-xi-size]
"""

import argparse
import math
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
import xi_exact as xe  # noqa: E402
from ising_tc import corrected_tc  # noqa: E402

from thinfilm.api import run  # noqa: E402
from thinfilm.plan.extrapolated import extrapolated_lengths  # noqa: E402
from thinfilm.runs.folder import read_csv_table  # noqa: E402

KELVIN_PER_MEV = 11.604518  # kB = 8.617333e-5 eV/K (CODATA)
SPACING_NM = 0.4
SWEEP_T = (0.02, 0.03, 0.05, 0.08, 0.12, 0.18, 0.25)  # reduced temperatures above Tc'


def scenario(sizes, ts, warmup, samples, snapshots=40, seed=5):
    """Scenario dict of the film at T = Tc' (1 + t) (kelvin), sizes as given."""
    tcp = corrected_tc("square") * KELVIN_PER_MEV
    return {
        "name": "ising-limit-size-convergence",
        "description": "Validation: size convergence of correlation lengths near Tc.",
        "lattice": {"shape": "square", "cells": [max(sizes)] * 2, "spacing": f"{SPACING_NM} nm",
                    "edges": "periodic"},
        "material": {"moment": "1 muB", "exchange": "1 meV",
                     "anisotropy": {"constant": "1000 meV", "axis": [0, 0, 1]}},
        "temperature": [f"{tcp * (1 + t):.6f} K" for t in ts],
        "sizes": list(sizes),
        "dynamics": {"method": "monte-carlo", "moves": ["metropolis", "cluster"],
                     "sweeps": {"warmup": warmup, "samples": samples}},
        "sweep": {"order": "independent", "snapshots": snapshots},
        "initial": "random", "seed": seed,
    }


def exact_nm(temp_K):
    """Exact second-moment length (nm) above Tc at a temperature in kelvin."""
    return SPACING_NM * xe.xi_second_moment("square", xe.ising_coupling(temp_K / KELVIN_PER_MEV))


def compare(sweep_dir, large_dir):
    """Rows (T, sweep value, error, flag, L=64 value, error, large value, error, exact, dev)."""
    tab = read_csv_table(Path(sweep_dir) / "observables.csv")
    big = read_csv_table(Path(large_dir) / "observables.csv")
    tc = corrected_tc("square") * KELVIN_PER_MEV
    temps = np.unique(big["temperature_K"])
    ext = extrapolated_lengths(tab, SPACING_NM, tc_K=tc, tc_err_K=0.0, anisotropy=1.0,
                               temperatures_K=temps, amplitude_ratio=None)
    cols = ext["columns"]
    out = []
    for k, temp in enumerate(temps):
        v, e = cols["correlation_length_nm"][k], cols["correlation_length_err_nm"][k]
        if cols["correlation_length_flag"][k] == "measured" and cols["converged_length_nm"][k]:
            # measured: the converged lattice value itself, not the fitted curve through it
            v, e = cols["converged_length_nm"][k], cols["converged_length_err_nm"][k]
        b = big["temperature_K"] == temp
        # reference: the S(k) fit, the precise estimator where L >> xi (the second moment's
        # S(0)/S(k_min) - 1 = (khat_min xi)^2 is tiny there and its error large)
        lv, le = float(big["correlation_length_sk_nm"][b][0]), float(
            big["correlation_length_sk_nm_err"][b][0])
        others = {k: (float(big[f"correlation_length{k}_nm"][b][0]),
                      float(big[f"correlation_length{k}_nm_err"][b][0])) for k in ("", "_fit")}
        s64 = (tab["size"] == tab["size"].max()) & np.isclose(tab["temperature_K"], temp)
        own = (float(tab["correlation_length_nm"][s64][0]),
               float(tab["correlation_length_nm_err"][s64][0])) if s64.any() else (math.nan,) * 2
        conv64 = float(tab["correlation_length_converged"][s64][0]) if s64.any() else math.nan
        dev = (v - lv) / math.hypot(e, le) if v is not None and e is not None else math.nan
        out.append({"T": float(temp), "t": temp / tc - 1, "value": v, "err": e,
                    "flag": cols["correlation_length_flag"][k], "own": own[0], "own_err": own[1],
                    "own_converged": conv64, "large": lv, "large_err": le,
                    "large_size": int(big["size"][b][0]), "large_second_moment": others[""],
                    "large_cr_fit": others["_fit"], "exact": exact_nm(temp), "dev": dev})
    return out, ext["fits"]["correlation_length"]


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--t", type=float, nargs="+", default=[0.03, 0.05, 0.08],
                   help="reduced temperatures of the large lattices (from the sweep's list)")
    p.add_argument("--large", type=int, default=256)
    p.add_argument("--samples", type=int, default=3000)
    p.add_argument("--large-samples", type=int, default=1500)
    p.add_argument("--large-snapshots", type=int, default=100,
                   help="snapshots of the large lattices (the S(k) and C(r) fits use them)")
    p.add_argument("--workers", type=int, default=1)
    p.add_argument("--out", default="outputs/validation-xi-size")
    a = p.parse_args(argv)
    t0 = time.time()
    out = Path(a.out)
    sweep = run(scenario((16, 32, 64), SWEEP_T, 300, a.samples), out / "sweep", resume=True,
                progress=False, workers=a.workers)
    large = run(scenario((a.large,), a.t, 200, a.large_samples, snapshots=a.large_snapshots,
                         seed=6),
                out / f"L{a.large}-s{a.large_snapshots}", resume=True, progress=False,
                workers=a.workers)
    rows, fit = compare(sweep, large)
    print(f"square Ising limit, 0.4 nm spacing; sweep L = 16, 32, 64 ({a.samples} sweeps per "
          f"point); reference L = {a.large} ({a.large_samples} sweeps). Fit: A = "
          f"{fit['amplitude_nm']:.4g} +- {fit['amplitude_err_nm']:.2g} nm, chi2/dof "
          f"{fit['chi2_dof']:.2f}, finite-size form {fit.get('finite_size')}")
    print("    t     T (K)   sweep infinite-film (nm)  flag                 L=64 own (conv)"
          f"      L={a.large} S(k) fit (nm)  exact   dev/sigma   L={a.large} 2nd moment, "
          "C(r) fit")
    for r in rows:
        sm, cr = r["large_second_moment"], r["large_cr_fit"]
        print(f"  {r['t']:.3f}  {r['T']:.4f}  {r['value']:7.3f} +- {r['err']:.3f}   "
              f"{r['flag']:<20} {r['own']:6.3f} +- {r['own_err']:.3f} ({r['own_converged']:.0f})"
              f"  {r['large']:7.3f} +- {r['large_err']:.3f}  {r['exact']:7.3f}  {r['dev']:+.2f}"
              f"      {sm[0]:.3f} +- {sm[1]:.3f}, {cr[0]:.3f} +- {cr[1]:.3f}")
    ok = all(abs(r["dev"]) <= 2.0 for r in rows)
    print(f"all within 2 combined standard errors: {ok}; wall time {time.time() - t0:.0f} s")
    return rows


if __name__ == "__main__":
    main()
