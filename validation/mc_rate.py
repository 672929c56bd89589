"""Metropolis throughput on a 256 x 256 square lattice for 1 and 2 numba threads.

Run: ``python validation/mc_rate.py`` (prints site visits per second; each visit is one
Gaussian trial, one axis reflection and one over-relaxation move). Shared machines give noisy
numbers: run it on an idle machine for a fair thread comparison.
"""

import time

import numba

from thinfilm.lattice import Lattice
from thinfilm.model import Model
from thinfilm.montecarlo import MonteCarlo
from thinfilm.units import MEV_J, MU_B_J_PER_T


def rate(threads, n=256, sweeps=20):
    """Site visits per second with the threaded kernel on `threads` threads."""
    numba.set_num_threads(threads)
    model = Model(Lattice("square", n, n, 0.3, True), MU_B_J_PER_T, MEV_J, 0.1 * MEV_J,
                  (0.0, 0.0, 1.0))
    mc = MonteCarlo(model, 10.0, seed=1, parallel=True)
    mc.sweep(2)  # compile / warm caches
    t = time.perf_counter()
    mc.sweep(sweeps)
    return sweeps * n * n / (time.perf_counter() - t)


if __name__ == "__main__":
    for th in sorted({1, min(2, numba.config.NUMBA_NUM_THREADS)}):
        print(f"threads={th}: {rate(th) / 1e6:.2f} M site visits/s")
