"""Swendsen-Wang (parallel labelling) against Wolff cluster moves at Tc, side by side.

    python benchmarks/sw_vs_wolff.py [--sizes 64 128 256] [--steps 1500] [--threads 2]

Square Ising limit (K/J = 1000, J = 1 meV, moment 1 muB, periodic) at the exact Onsager
temperature kB Tc/J = 2/ln(1 + sqrt 2) (Onsager, Phys. Rev. 65, 117 (1944)), as
``cluster_tau.py``. One step of either set is one Metropolis sweep plus the cluster move:
``clusters_per_sweep`` Wolff clusters (tuned to cover about N sites, grown serially) or one
Swendsen-Wang move of every cluster (labelled in parallel). The two samplers run interleaved in
chunks of steps, so a change of machine load hits both alike. Printed per L: tau_int of |m|
(steps; Sokal window c = 5, Madras-Sokal error), median ms per step, ms per independent sample
(2 tau_int x time per step) and the ratio SW / Wolff of the time per independent sample, and
z from a fit of ln tau against ln L. On a loaded machine only the ratios mean anything.
"""

import argparse
import math
import statistics
import time

import numba
import numpy as np

from thinfilm.analysis.thermo import integrated_autocorrelation_time
from thinfilm.engines.montecarlo import MonteCarlo
from thinfilm.input.units import KB_J_PER_K, MEV_J, MU_B_J_PER_T
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model

JK = MEV_J / KB_J_PER_K
TC = 2.0 / math.log(1.0 + math.sqrt(2.0))
ALGS = ("wolff", "swendsen-wang")


def run_pair(L, n_steps, n_warm, seed=1, chunks=15):
    model = Model(Lattice("square", L, L, 0.3, True), MU_B_J_PER_T, MEV_J, 1000.0 * MEV_J,
                  (0.0, 0.0, 1.0))
    mcs = {a: MonteCarlo(model, TC * JK, seed=seed, initial_spins="ordered",
                         moves=("metropolis", "cluster"), cluster_algorithm=a) for a in ALGS}
    for mc in mcs.values():
        mc.warmup(n_warm)
    series = {a: [] for a in ALGS}
    times = {a: [] for a in ALGS}
    chunk = max(1, n_steps // chunks)
    for done in range(0, n_steps, chunk):
        m = min(chunk, n_steps - done)
        for a, mc in mcs.items():
            t = time.perf_counter()
            r = mc.run(0, m, 1, tune=False)
            times[a].append((time.perf_counter() - t) / m)
            series[a].append(np.abs(r["m_order"]))
    out = {}
    for a in ALGS:
        x = np.concatenate(series[a])
        tau = integrated_autocorrelation_time(x)
        err = tau * math.sqrt((4 * 5.0 * tau + 2) / len(x))
        out[a] = (tau, err, statistics.median(times[a]), mcs[a].clusters_per_sweep)
    return out


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=int, nargs="+", default=[64, 128, 256])
    ap.add_argument("--steps", type=int, default=1500)
    ap.add_argument("--threads", type=int, default=2)
    a = ap.parse_args(argv)
    numba.set_num_threads(a.threads)
    print(f"threads={a.threads}; square Ising limit at Onsager's Tc; {a.steps} steps per run, "
          "interleaved chunks")
    print(f"{'L':>4} {'moves':<14} {'tau_int':>8} {'err':>6} {'cl/step':>7} {'ms/step':>8} "
          f"{'ms/indep':>9} {'min/1e4':>8}")
    taus = {x: [] for x in ALGS}
    for L in a.sizes:
        res = run_pair(L, a.steps, 200)
        for alg, (tau, err, sec, ncl) in res.items():
            taus[alg].append(tau)
            print(f"{L:>4} {alg:<14} {tau:>8.2f} {err:>6.2f} "
                  f"{ncl if alg == 'wolff' else '-':>7} {1e3 * sec:>8.3f} "
                  f"{2e3 * tau * sec:>9.2f} {2e4 * tau * sec / 60:>8.1f}", flush=True)
        w, s = res["wolff"], res["swendsen-wang"]
        print(f"{L:>4} SW / Wolff: time per step {s[2] / w[2]:.2f}, time per independent "
              f"sample {s[0] * s[2] / (w[0] * w[2]):.2f}", flush=True)
    if len(a.sizes) > 1:
        for alg in ALGS:
            z = float(np.polyfit(np.log(a.sizes), np.log(taus[alg]), 1)[0])
            print(f"z({alg}) = {z:.2f} (fit of ln tau vs ln L, L = {a.sizes[0]}..{a.sizes[-1]})")


if __name__ == "__main__":
    main()
