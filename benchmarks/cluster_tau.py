"""Integrated autocorrelation time of |m| at Tc versus L, local moves against cluster moves.

Run: ``python benchmarks/cluster_tau.py`` (quick: local L = 16..64, cluster L = 16..256, a few
minutes on one thread) or ``--full`` (local up to 128, cluster up to 512; much longer). The
512 x 512 point alone on two threads:
``python benchmarks/cluster_tau.py --threads 2 --local-sizes --cluster-sizes 512 --steps 3000``.

Square lattice, J = 1 meV, moment 1 muB, periodic, two systems:

* Ising limit, K/J = 1000, at the exact Onsager temperature kB Tc/J = 2/ln(1 + sqrt2)
  (Onsager, Phys. Rev. 65, 117 (1944)); finite K shifts the true Tc by about -Tc/(K/J) = -0.2 %;
* K/J = 0.1 at kB T/J = 0.72, measured with this code: the Binder cumulants of m_z for
  L = 32 and 64 cross there (U4 = 0.60 at both; 8000 cluster steps per point, T step 0.01).
  The Monte Carlo fit of Torelli & Olsen, 2D Mater. 6, 015028 (2019) gives 0.602 for this K/J;
  at 0.60 this code's L = 16..64 runs are clearly ordered (U4 = 0.665).

Move sets (one "step" each, the unit of tau):

* local: one Metropolis sweep (Gaussian step, axis reflection, one over-relaxation per site);
* cluster: one Metropolis sweep plus ``clusters_per_sweep`` Wolff clusters along r = n, the
  number tuned in the warm-up so that the clusters of one step cover N sites on average.

tau_int(|m|) in steps comes from thinfilm.analysis.thermo.integrated_autocorrelation_time
(Sokal window, c = 5), its error from the Madras-Sokal formula tau sqrt((4 W + 2)/n), W = 5 tau.
The dynamic exponent z is a least-squares fit of ln tau against ln L. Wall time per
independent sample is 2 tau_int times the wall time of a step (median of the run's chunks).
Published values to compare (from memory): Metropolis z = 2.1665(12) (Nightingale & Bloete,
Phys. Rev. Lett. 76, 4548 (1996)); Wolff z ~ 0.25, or logarithmic growth, in the 2D Ising model
(Coddington & Baillie, Phys. Rev. Lett. 68, 962 (1992)).
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

JK = MEV_J / KB_J_PER_K  # kelvin per unit of kB T/J
SYSTEMS = {"ising K/J=1000": (1000.0, 2.0 / math.log(1.0 + math.sqrt(2.0))),
           "K/J=0.1": (0.1, 0.72)}


def measure(k_over_j, t_over_j, L, moves, n_steps, n_warmup, seed=1):
    """(tau_int, tau_err, seconds per step, clusters per step) of |m.n| for one run."""
    model = Model(Lattice("square", L, L, 0.3, True), MU_B_J_PER_T, MEV_J, k_over_j * MEV_J,
                  (0.0, 0.0, 1.0))
    mc = MonteCarlo(model, t_over_j * JK, seed=seed, initial_spins="ordered", moves=moves)
    mc.warmup(n_warmup)
    chunk = max(1, n_steps // 20)
    series, times = [], []
    for done in range(0, n_steps, chunk):
        m = min(chunk, n_steps - done)
        t = time.perf_counter()
        r = mc.run(0, m, 1, tune=False)
        times.append((time.perf_counter() - t) / m)
        series.append(np.abs(r["m_order"]))
    x = np.concatenate(series)
    tau = integrated_autocorrelation_time(x)
    err = tau * math.sqrt((4 * 5.0 * tau + 2) / len(x))
    return tau, err, statistics.median(times), getattr(mc, "clusters_per_sweep", 0)


def fit_z(Ls, taus):
    if len(Ls) < 2:
        return float("nan")
    return float(np.polyfit(np.log(Ls), np.log(taus), 1)[0])


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--full", action="store_true", help="larger sizes and longer runs")
    ap.add_argument("--threads", type=int, default=1)
    ap.add_argument("--systems", nargs="+", default=list(SYSTEMS), choices=list(SYSTEMS))
    ap.add_argument("--local-sizes", type=int, nargs="*", default=None,
                    help="L of the local-move runs (default 16 32 64, --full adds 128)")
    ap.add_argument("--cluster-sizes", type=int, nargs="*", default=None,
                    help="L of the cluster runs (default 16 .. 256, --full adds 512)")
    ap.add_argument("--steps", type=int, default=None, help="cluster steps per run")
    a = ap.parse_args()
    numba.set_num_threads(a.threads)
    sizes = {"local": [16, 32, 64] + ([128] if a.full else []),
             "cluster": [16, 32, 64, 128, 256] + ([512] if a.full else [])}
    if a.local_sizes is not None:
        sizes["local"] = a.local_sizes
    if a.cluster_sizes is not None:
        sizes["cluster"] = a.cluster_sizes
    # steps per run: ~ 150 tau for local moves (tau ~ 0.3 L^2.2 sweeps guessed), fixed for
    # clusters (tau of a few steps)
    t_start = time.perf_counter()
    print(f"threads={a.threads}; tau in steps (see module doc); time/indep = 2 tau x time/step; "
          f"min/1e4 = minutes for 10^4 independent samples")
    print(f"{'system':<15} {'moves':<8} {'L':>4} {'tau_int':>9} {'err':>7} {'clusters':>8} "
          f"{'ms/step':>8} {'ms/indep':>9} {'min/1e4':>8}")
    for name in a.systems:
        kj, tj = SYSTEMS[name]
        for kind, moves in (("local", ("metropolis",)), ("cluster", ("metropolis", "cluster"))):
            Ls, taus = [], []
            if not sizes[kind]:
                continue
            for L in sizes[kind]:
                if kind == "local":
                    n_steps = int(min(4e5, max(2e4, 50 * L**2.2))) // (1 if a.full else 2)
                    n_warm = n_steps // 10
                else:
                    n_steps = a.steps or (4000 if a.full else 2000)
                    n_warm = 200
                tau, err, sec, ncl = measure(kj, tj, L, moves, n_steps, n_warm)
                Ls.append(L)
                taus.append(tau)
                print(f"{name:<15} {kind:<8} {L:>4} {tau:>9.2f} {err:>7.2f} {ncl:>8} "
                      f"{1e3 * sec:>8.3f} {2e3 * tau * sec:>9.2f} "
                      f"{2e4 * tau * sec / 60:>8.1f}", flush=True)
            print(f"{name:<15} {kind:<8} z = {fit_z(Ls, taus):.2f} (fit of ln tau vs ln L, "
                  f"L = {Ls[0]}..{Ls[-1]})", flush=True)
    print(f"total wall time {time.perf_counter() - t_start:.0f} s")


if __name__ == "__main__":
    main()
