"""Coarse-film (stochastic LLB) step rate against the atomistic dipolar LLG, in one run.

    PYTHONPATH=. python benchmarks/coarse_rate.py --sizes 256 512

For each size N x N: median wall time per step of ``CoarseFilm.advance`` (4 nm prism cells,
dipolar on, T = 100 K of the example table) and of the atomistic ``LLGSimulation.advance`` with
the prism dipolar field in single precision on the same grid; rates in M cell-steps/s and the
ratio coarse/atomistic of the times per step. The coarse step evaluates the field twice
(Heun) with the dipolar FFTs in single precision (as coarse runs at T > 0 do), with plain
numba loops. Shared machine: compare the ratios.
"""

import argparse
import time
from pathlib import Path

import numpy as np

from thinfilm.engines.llb import CoarseFilm
from thinfilm.engines.stochastic_llg import LLGSimulation, initial_spins
from thinfilm.input.parameter_table import ParameterTable
from thinfilm.input.units import MEV_J, MU_B_J_PER_T
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model

TABLE = Path(__file__).resolve().parents[1] / "scenarios" / "coarse" / "parameters.csv"


def _median(fn, steps, repeats):
    fn(1)
    out = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn(steps)
        out.append((time.perf_counter() - t0) / steps)
    return float(np.median(out))


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", nargs="+", type=int, default=[256, 512])
    ap.add_argument("--repeats", type=int, default=3)
    args = ap.parse_args()
    tab = ParameterTable.read(TABLE)
    for n in args.sizes:
        steps = max(5, int(2e6 // (n * n)))
        cf = CoarseFilm(tab, 4.0, n, n, dipolar=True, coupling=0.5, dipolar_precision="single")
        t_c = _median(lambda k, cf=cf: cf.advance(k, 100.0), steps, args.repeats)
        lat = Lattice("square", n, n, 4.0, True)
        model = Model(lat, 2 * MU_B_J_PER_T, 10 * MEV_J, 1 * MEV_J, dipolar=True,
                      dipolar_thickness_nm=0.5)
        sim = LLGSimulation(model, temperature_K=10.0, damping=0.1, time_step_s=1e-15,
                            spins=initial_spins(lat, "random", seed=1))
        t_a = _median(sim.advance, steps, args.repeats)
        print(f"{n} x {n}: coarse LLB {n * n / t_c / 1e6:.2f} M cell-steps/s, atomistic dipolar "
              f"LLG {n * n / t_a / 1e6:.2f} M spin-steps/s, time ratio coarse/atomistic "
              f"{t_c / t_a:.2f}", flush=True)


if __name__ == "__main__":
    main()
