"""Dipolar LLG step rate against the local (dipolar-off) step, in one run.

    PYTHONPATH=. python benchmarks/dipolar_rate.py                  # square 256..1024, periodic
    PYTHONPATH=. python benchmarks/dipolar_rate.py --sizes 512 --shape honeycomb --open

For each size: median wall time per step (and per-process CPU time per step) of
``LLGSimulation.advance`` at T = 10 K with dipolar off (fused local kernel), dipolar on in
double precision and in single precision; rates in M spin-steps/s, and the ratio dipolar/local
of the times per step taken in the same run. Also the cost of one ``DipolarField.field`` call,
the tensor build time and its memory (bytes per site). Shared machine: compare the ratios,
rerun when ``uptime`` shows load.
"""

import argparse
import time

import numpy as np

from thinfilm.config import set_threads
from thinfilm.engines.dipolar import DipolarField, cache_clear
from thinfilm.engines.fft_plan import fftw_available
from thinfilm.engines.stochastic_llg import LLGSimulation, initial_spins
from thinfilm.input.units import MEV_J, MU_B_J_PER_T
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model

# (row name, precision, FFT library): FFTW plans (pyFFTW) against scipy.fft, double and single
PATHS = [("fftw-f64", "double", "fftw"), ("fftw-f32", "single", "fftw"),
         ("scipy-f64", "double", "scipy"), ("scipy-f32", "single", "scipy")]


def _median_step(fn, steps, repeats):
    """Median wall and CPU seconds per step of fn(steps) over repeats (after one warm-up)."""
    fn(1)
    wall, cpu = [], []
    for _ in range(repeats):
        t0, c0 = time.perf_counter(), time.process_time()
        fn(steps)
        wall.append((time.perf_counter() - t0) / steps)
        cpu.append((time.process_time() - c0) / steps)
    return float(np.median(wall)), float(np.median(cpu))


def run(shape, n, periodic, repeats):
    lat = Lattice(shape, n, n, 0.3, periodic)
    mu = 2.0 * MU_B_J_PER_T
    model = Model(lat, mu, 1.0 * MEV_J, 0.1 * MEV_J)
    spins = initial_spins(lat, "random", seed=1)
    steps = max(10, int(1e7 // lat.n_sites))
    kw = dict(temperature_K=10.0, damping=0.1, time_step_s=1e-15, spins=spins)
    rows = {}
    local = LLGSimulation(model, **kw)
    rows["local"] = _median_step(local.advance, steps * 20, repeats)
    for name, prec, backend in PATHS:
        if backend == "fftw" and not fftw_available():
            continue
        cache_clear()
        t0 = time.perf_counter()
        dip = DipolarField(lat, mu, precision=prec, backend=backend)
        build = time.perf_counter() - t0
        sim = LLGSimulation(model, dipolar=dip, **kw)
        rows[name] = _median_step(sim.advance, steps, repeats)
        out = np.empty_like(spins)
        fld = _median_step(lambda k, d=dip, o=out: [d.field(spins, o) for _ in range(k)],
                           steps, repeats)
        rows[name] += (fld[0], build, dip.bytes_per_site)
    edges = "periodic" if periodic else "open"
    for name, r in rows.items():
        rate = lat.n_sites / r[0] / 1e6
        line = (f"{shape:10s} {n:5d} {edges:8s} {name:9s} {r[0] * 1e3:9.2f} {r[1] * 1e3:9.2f} "
                f"{rate:8.1f} {r[0] / rows['local'][0]:7.1f}")
        if name != "local":
            line += f" {r[2] * 1e3:9.2f} {r[3]:7.2f} {r[4]:6.0f}"
        print(line, flush=True)


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=int, nargs="+", default=[256, 512, 1024])
    ap.add_argument("--shape", default="square")
    ap.add_argument("--open", action="store_true", help="open edges (default periodic)")
    ap.add_argument("--repeats", type=int, default=5)
    ap.add_argument("--threads", type=int, default=None)
    args = ap.parse_args()
    nthreads = set_threads(args.threads)
    print(f"threads {nthreads}; medians of {args.repeats} repeats; times per step in ms")
    print("shape       size edges    path       wall_ms   cpu_ms  Mspin/s  x_local "
          "field_ms build_s B/site")
    for n in args.sizes:
        run(args.shape, n, not args.open, args.repeats)


if __name__ == "__main__":
    main()
