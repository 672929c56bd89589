"""Metropolis throughput on square lattices (256 x 256 and 1024 x 1024) for 1 and 2 threads.

Run: ``python validation/mc_rate.py [--sizes 256 1024] [--repeats 5]`` (prints the median of
the repeats in million site visits per second; each visit is one Gaussian trial, one axis
reflection and one over-relaxation move, the MonteCarlo defaults for K > 0). Shared machines
give noisy numbers: check ``uptime`` and run it on an idle machine for a fair thread comparison.
"""

import argparse
import statistics
import time

import numba

from thinfilm.engines.montecarlo import MonteCarlo
from thinfilm.input.units import MEV_J, MU_B_J_PER_T
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model


def rate(threads, n=256, sweeps=None, repeats=5):
    """Median site visits per second of the threaded kernel on `threads` threads."""
    numba.set_num_threads(threads)
    model = Model(Lattice("square", n, n, 0.3, True), MU_B_J_PER_T, MEV_J, 0.1 * MEV_J,
                  (0.0, 0.0, 1.0))
    mc = MonteCarlo(model, 10.0, seed=1, parallel=True)
    sweeps = sweeps or max(2, int(2e6 // (n * n)))
    mc.sweep(2)  # compile / warm caches
    out = []
    for _ in range(repeats):
        t = time.perf_counter()
        mc.sweep(sweeps)
        out.append(sweeps * n * n / (time.perf_counter() - t))
    return statistics.median(out)


if __name__ == "__main__":
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=int, nargs="+", default=[256, 1024])
    ap.add_argument("--repeats", type=int, default=5)
    a = ap.parse_args()
    for n in a.sizes:
        for th in sorted({1, min(2, numba.config.NUMBA_NUM_THREADS)}):
            print(f"n={n} threads={th}: {rate(th, n, repeats=a.repeats) / 1e6:.2f} M site "
                  "visits/s", flush=True)
