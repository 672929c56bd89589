"""Wall time of a 3-size (16, 24, 32), 30-temperature Monte Carlo sweep on the local cores.

Usage: python benchmarks/sweep_timing.py [--workers N] [--out DIR]

The film is the invented Veltrium monolayer of scenarios/monolayer_sweep.yaml (square
lattice, K/J = 0.4) with 300 warm-up and 2000 sampling sweeps per point.
"""

import argparse
import tempfile
import time
import warnings
from pathlib import Path

from thinfilm.input.scenario import load_scenario
from thinfilm.runs.sweep import available_cores, run_sweep

__all__ = ["main"]

SCENARIO = Path(__file__).resolve().parent.parent / "scenarios" / "monolayer_sweep.yaml"


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--workers", type=int, default=None)
    ap.add_argument("--out", default=None)
    args = ap.parse_args()
    sc = load_scenario(SCENARIO)
    sw = sc.sweep
    temps = tuple(round(15.0 + 0.6 * k, 3) for k in range(30))  # 15 .. 32.4 K
    sc = sc.with_changes(
        sweep=type(sw)(temps, (16, 24, 32), None, "independent", None, 10),
        dynamics=type(sc.dynamics)(**{**sc.dynamics.__dict__, "sweeps_warmup": 300,
                                      "sweeps_samples": 2000}))
    out = Path(args.out) if args.out else Path(tempfile.mkdtemp(prefix="sweep-timing-"))
    t0 = time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        run_sweep(sc, out, overwrite=True, workers=args.workers, progress=False)
    wall = time.perf_counter() - t0
    n = 3 * len(temps)
    print(f"sweep: 3 sizes x {len(temps)} temperatures = {n} points, Monte Carlo "
          f"300 + 2000 sweeps, {args.workers or available_cores()} workers on "
          f"{available_cores()} cores: wall time {wall:.1f} s ({wall / n:.2f} s per point); "
          f"folder {out}")


if __name__ == "__main__":
    main()
