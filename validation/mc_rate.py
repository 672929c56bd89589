"""Metropolis throughput on square lattices (256 x 256 and 1024 x 1024) for 1 and 2 threads.

Run: ``python validation/mc_rate.py [--sizes 256 1024] [--repeats 7] [--modes sweep run kernel]
[--moves all gaussian]``

Prints the median of the repeats in million site visits per second; with ``--moves all`` each
visit is one Gaussian trial, one axis reflection and one over-relaxation move (the MonteCarlo
defaults for K > 0), with ``gaussian`` the Gaussian trial alone (reflection off, no
over-relaxation).

* sweep: ``MonteCarlo.sweep(n)`` calls, n = max(2, 2e6 / N) sweeps each (the public path);
* run: ``MonteCarlo.run(0, n, 1)``, a measurement after every sweep;
* kernel: the threaded sweep kernel alone on spins already in its layout (the ceiling).

Shared machines give noisy numbers: the load average is printed; compare modes taken in one run.
"""

import argparse
import os
import statistics
import time

import numba
import numpy as np

from thinfilm.engines._kernels import metropolis as mk
from thinfilm.engines.montecarlo import MonteCarlo
from thinfilm.input.units import MEV_J, MU_B_J_PER_T
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model


def _sampler(n, moves="all"):
    model = Model(Lattice("square", n, n, 0.3, True), MU_B_J_PER_T, MEV_J, 0.1 * MEV_J,
                  (0.0, 0.0, 1.0))
    if moves == "gaussian":
        return MonteCarlo(model, 10.0, seed=1, parallel=True, reflection=False,
                          over_relaxation=0)
    return MonteCarlo(model, 10.0, seed=1, parallel=True)


def _kernel_call(mc):
    """A function making n sweeps with the bare kernel on spins in its own layout."""
    order, bounds = mk.row_colouring(mc.model.lattice.ny, True)
    s = np.array(mc.spins)
    cb, ch, bands, T, zc, buf, g, cnt = mk.make_work(s, order, bounds)
    mk._convert(s, T, bands, True, True, True)
    code, per, jt, kt, axis = mc.model.kernel_args()
    axis = np.ascontiguousarray(axis)
    b = np.ascontiguousarray(mc.model.field_T)
    counts = np.zeros((s.shape[0], mk.N_COUNTS), dtype=np.int64)
    state = {"sweep": 0}

    def call(n):
        mk._run_sweeps(T, zc, cb, ch, bands, s.shape[0], code, per, jt, kt, axis, b, mc._beta,
                       mc.sigma, 1, 1, state["sweep"], n, mc.reflection, mc.n_or, counts, buf,
                       g, cnt, True)
        state["sweep"] += n

    return call


def rate(threads, n=256, mode="sweep", sweeps=None, repeats=5, moves="all"):
    """Median site visits per second on `threads` threads for one mode (see module doc)."""
    numba.set_num_threads(threads)
    mc = _sampler(n, moves)
    sweeps = sweeps or max(2, int(2e6 // (n * n)))
    if mode == "sweep":
        call = mc.sweep
    elif mode == "run":
        def call(k):
            mc.run(0, k, 1, tune=False)
    elif mode == "kernel":
        call = _kernel_call(mc)
    else:
        raise ValueError(f"unknown mode {mode!r}")
    call(2)  # compile / warm caches
    out = []
    for _ in range(repeats):
        t = time.perf_counter()
        call(sweeps)
        out.append(sweeps * n * n / (time.perf_counter() - t))
    return statistics.median(out)


if __name__ == "__main__":
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=int, nargs="+", default=[256, 1024])
    ap.add_argument("--repeats", type=int, default=7)
    ap.add_argument("--modes", nargs="+", default=["sweep", "run", "kernel"])
    ap.add_argument("--moves", nargs="+", default=["all"], choices=["all", "gaussian"])
    a = ap.parse_args()
    print(f"load average before: {os.getloadavg()[0]:.2f}")
    for moves in a.moves:
        for n in a.sizes:
            for th in sorted({1, min(2, numba.config.NUMBA_NUM_THREADS)}):
                for mode in a.modes:
                    r = rate(th, n, mode, repeats=a.repeats, moves=moves)
                    print(f"moves={moves} n={n} threads={th} {mode:>6}: {r / 1e6:6.2f} M site "
                          "visits/s", flush=True)
    print(f"load average after: {os.getloadavg()[0]:.2f}")
