"""A Monte Carlo sweep near Tc up to 2048 x 2048 sites, through the public API, against the
exact correlation length of the square-lattice Ising model.

The scenario (built here as a dict and run by :func:`thinfilm.api.run`, exactly as a YAML file
would be) is the strong-anisotropy limit K/J = 1000 of an invented square monolayer
(J = 1 meV, 1 muB, spacing 0.3 nm), sampled with the default move set (Metropolis sweeps plus
Wolff embedded-cluster reflections along the axis), at temperatures just above Tc where the
correlation length is tens of sites, on L = 256 .. 2048 tori (L / xi >= 8, so finite-size
effects are exponentially small).

Reference: above Tc the exact (exponential) correlation length of the square Ising model is
xi = 1 / (2 (K* - K)) lattice spacings, tanh K* = exp(-2 K), K = J_eff / kB T (Onsager,
Phys. Rev. 65, 117, 1944; McCoy and Wu, The Two-Dimensional Ising Model, 1973). The finite
anisotropy softens the Ising coupling to J_eff = J (1 - kB T / K) to first order (derived in
validation/ising_tc.py). The table's correlation_length_sk_nm is an Ornstein-Zernike fit of
S(k) at small k, a second-moment-type length; near Tc its ratio to the exponential length
tends to 1 (to about 0.1 %, from memory), far below the statistical error here.

    python validation/large_lattice_sweep.py [--sizes 256 512 1024 2048] [--samples 300]
        [--out outputs/validation-large-lattice] [--workers 1]

Prints, per size and temperature, the measured lengths with their errors, the exact length,
the wall time and the peak resident memory of the process.
"""

import argparse
import csv
import math
import resource
import time
from pathlib import Path

import numpy as np

from thinfilm.api import run

TC_ISING = 2.0 / math.log(1.0 + math.sqrt(2.0))  # kB Tc / J (Onsager 1944)
K_OVER_J = 1000.0
J_K = 11.604518  # kelvin per meV (kB = 8.617333e-5 eV/K)
SPACING_NM = 0.3


def exact_xi_sites(t_over_j, k_over_j=K_OVER_J):
    """Exact exponential xi (sites) above Tc at kB T / J = t_over_j, finite-K softened."""
    k = (1.0 - t_over_j / k_over_j) / t_over_j
    kstar = math.atanh(math.exp(-2.0 * k))
    if kstar <= k:
        return math.inf
    return 1.0 / (2.0 * (kstar - k))


def scenario(sizes, temps_over_j, warmup, samples, snapshots, seed=11):
    """The sweep scenario as a dict (the same keys as a YAML file)."""
    temps = [round(t * J_K, 4) for t in temps_over_j]
    return {
        "name": "large-lattice-ising-limit",
        "description": "Validation: square Ising limit near Tc up to 2048 x 2048 sites.",
        "lattice": {"shape": "square", "cells": [max(sizes)] * 2,
                    "spacing": f"{SPACING_NM} nm", "edges": "periodic"},
        "material": {"moment": "1 muB", "exchange": "1 meV",
                     "anisotropy": {"constant": f"{K_OVER_J} meV", "axis": [0, 0, 1]}},
        "temperature": [f"{t} K" for t in temps],
        "sizes": list(sizes),
        "dynamics": {"method": "monte-carlo", "moves": ["metropolis", "cluster"],
                     "sweeps": {"warmup": warmup, "samples": samples}},
        "sweep": {"order": "independent", "snapshots": snapshots},
        "initial": "random",
        "seed": seed,
    }


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=int, nargs="+", default=[256, 512, 1024, 2048])
    ap.add_argument("--t", type=float, nargs="+", default=[0.03, 0.06],
                    help="reduced temperatures (T - Tc)/Tc above the Ising Tc")
    ap.add_argument("--warmup", type=int, default=100)
    ap.add_argument("--samples", type=int, default=300)
    ap.add_argument("--snapshots", type=int, default=30)
    ap.add_argument("--out", default="outputs/validation-large-lattice")
    ap.add_argument("--workers", type=int, default=None,
                    help="sweep worker processes (1: in this process, so that the printed peak "
                         "memory covers the points; default one per core)")
    args = ap.parse_args()
    temps = [TC_ISING * (1 + t) for t in args.t]
    sc = scenario(args.sizes, temps, args.warmup, args.samples, args.snapshots)
    t0 = time.perf_counter()
    out = run(sc, args.out, resume=True, progress=True, workers=args.workers)
    wall = time.perf_counter() - t0
    # peak resident memory of this process (it holds the points only with --workers 1)
    rss_gb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024**2
    with open(Path(out) / "observables.csv") as fh:
        rows = [r for r in csv.DictReader(fh)]
    print(f"square Ising limit K/J = {K_OVER_J:g}, cluster moves, {args.warmup} + "
          f"{args.samples} steps per point, {args.snapshots} snapshots; wall {wall:.0f} s, "
          f"peak RSS {rss_gb:.2f} GB ({rss_gb * 1e9 / max(args.sizes) ** 2:.0f} B/site "
          f"of the largest lattice)")
    print("    L   kT/J      xi_sk (sites)      xi_2nd (sites)     exact   sk/exact  "
          "point s")
    for r in rows:
        t_over_j = float(r["temperature_K"]) / J_K
        ex = exact_xi_sites(t_over_j)
        sk = float(r["correlation_length_sk_nm"]) / SPACING_NM
        sk_e = float(r["correlation_length_sk_nm_err"]) / SPACING_NM
        m2 = float(r["correlation_length_nm"]) / SPACING_NM
        m2_e = float(r["correlation_length_nm_err"]) / SPACING_NM
        print(f"{int(r['size']):5d} {t_over_j:6.4f} {sk:8.2f} +- {sk_e:5.2f} "
              f"{m2:8.2f} +- {m2_e:5.2f} {ex:8.2f} {sk / ex:8.3f}  "
              f"{r.get('compute_time_s', '')}")
    dev = [(float(r["correlation_length_sk_nm"]) / SPACING_NM
            - exact_xi_sites(float(r["temperature_K"]) / J_K))
           / (float(r["correlation_length_sk_nm_err"]) / SPACING_NM) for r in rows]
    print(f"(sk - exact) / error: {np.round(dev, 2).tolist()}")


if __name__ == "__main__":
    main()
