"""Per-site (disorder) path against the uniform fast path, same process, same sizes.

Rates: LLG in million spin-steps/s (Heun with thermal noise, T = 10 K), Metropolis in million
site visits/s (Gaussian trial + axis reflection + one over-relaxation, the defaults for K > 0).
Each number is the median of ``--repeats`` timed repeats after a warm-up call. The per-site
path runs the realisation "10 % vacancies + 20 % Gaussian K spread" and, to separate the cost of
the general kernel from the cost of the disorder, the same uniform film through it (zero
disorder).

Run: ``python benchmarks/disorder_rate.py [--size 256] [--repeats 5] [--threads 1]``.
The machine may be shared: compare the ratios of one run; check ``uptime``.
"""

import argparse
import statistics
import time

import numba

from thinfilm.engines.disordered_llg import SiteLLG
from thinfilm.engines.disordered_mc import SiteMonteCarlo
from thinfilm.engines.montecarlo import MonteCarlo
from thinfilm.engines.stochastic_llg import LLGSimulation
from thinfilm.input.disorder_spec import DisorderSpec, SpreadSpec
from thinfilm.input.units import MEV_J, MU_B_J_PER_T
from thinfilm.model.disorder import realise_disorder
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model
from thinfilm.model.site_parameters import uniform_site_parameters


def _median_rate(call, work, repeats):
    call()  # compile / warm caches
    out = []
    for _ in range(repeats):
        t = time.perf_counter()
        call()
        out.append(work / (time.perf_counter() - t))
    return statistics.median(out) / 1e6


def rates(shape="square", n=256, repeats=5, parallel=True):
    """{path: (LLG rate, MC rate)} in M/s for the uniform, per-site uniform and per-site
    disordered paths."""
    model = Model(Lattice(shape, n, n, 0.3, True), MU_B_J_PER_T, MEV_J, 0.1 * MEV_J,
                  (0.0, 0.0, 1.0))
    dis = realise_disorder(model, DisorderSpec(vacancies=0.1, anisotropy=SpreadSpec(0.2)), 1)
    steps = max(2, int(1e6 // (n * n)))
    sweeps = max(2, int(1e6 // (n * n)))
    llg_kw = dict(temperature_K=10.0, damping=0.1, time_step_s=1e-15, seed=1)
    out = {}
    paths = {"uniform": None, "per-site, zero disorder": uniform_site_parameters(model),
             "per-site, disordered": dis}
    for name, params in paths.items():
        if params is None:
            llg = LLGSimulation(model, **llg_kw)
            mc = MonteCarlo(model, 10.0, seed=1, parallel=parallel)
        else:
            llg = SiteLLG(params, **llg_kw)
            mc = SiteMonteCarlo(params, 10.0, seed=1, parallel=parallel)
        r_llg = _median_rate(lambda llg=llg: llg.advance(steps), steps * n * n, repeats)
        r_mc = _median_rate(lambda mc=mc: mc.sweep(sweeps), sweeps * n * n, repeats)
        out[name] = (r_llg, r_mc)
    return out


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--size", type=int, default=256)
    ap.add_argument("--shape", default="square")
    ap.add_argument("--repeats", type=int, default=5)
    ap.add_argument("--threads", type=int, default=1)
    args = ap.parse_args(argv)
    numba.set_num_threads(args.threads)
    res = rates(args.shape, args.size, args.repeats, parallel=args.threads > 1)
    base = res["uniform"]
    print(f"{args.shape} {args.size} x {args.size}, {args.threads} thread(s), median of "
          f"{args.repeats}; rates in M/s (LLG spin-steps, MC site visits)")
    for name, (a, b) in res.items():
        print(f"  {name:26s} LLG {a:7.2f} ({a / base[0]:5.2f} x uniform)   "
              f"MC {b:7.2f} ({b / base[1]:5.2f} x uniform)")


if __name__ == "__main__":
    main()
