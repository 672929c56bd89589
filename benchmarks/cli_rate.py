"""What the command line delivers against the kernel: stochastic LLG spin-steps per second.

    python benchmarks/cli_rate.py [--size 256] [--threads 2] [--repeats 5]

`thinfilm run` of a plain scenario (thermal noise, anisotropy and a field; one time-series row
and one snapshot per 1000 steps) is timed at 1000 and at 4000 Heun steps; the difference of the
two wall times cancels start-up (imports, cache loading, the first and last files). In the same
run, the fused kernel alone and the plain peers of ``plain_heun.py`` are timed in a fresh
process on the same lattice. Medians over the repeats; ratios are taken within this run.
"""

import argparse
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent

SCENARIO = """name: cli-rate
lattice: {{shape: square, cells: [{n}, {n}], spacing: "0.4 nm", edges: periodic}}
material: {{moment: "2 muB", exchange: "2 meV",
  anisotropy: {{constant: "0.2 meV", axis: [0, 0, 1]}}}}
field: {{value: [0, 0, 0.1], unit: T}}
temperature: "10 K"
dynamics: {{method: llg, damping: 0.1, timestep: "1 fs", duration: "{ps} ps"}}
record: {{every: "1 ps", snapshots: "1 ps"}}
initial: random
seed: 3
"""

KERNEL_SNIPPET = r"""
import json, statistics, sys, time
import numba, numpy as np
sys.path.insert(0, {here!r})
from plain_heun import plain_fused_heun, plain_fused_work, plain_heun, plain_work
from thinfilm.engines._kernels.llg import heun_run, heun_work
n, th, reps = {n}, {threads}, {repeats}
numba.set_num_threads(th)
rng = np.random.default_rng(1)
s = rng.normal(size=(n, n, 3)); s /= np.linalg.norm(s, axis=-1, keepdims=True)
ax = np.array([0.0, 0.0, 1.0]); b = np.array([0.0, 0.0, 0.1]); nb_ = min(th, n // 2)
w, pw, fw = heun_work(n, n, nb_), plain_work(n, n), plain_fused_work(n, n, nb_)
k = 1000
runs = {{
    "kernel": lambda: heun_run(s, k, 0, 1, 0, True, 10.0, 1.0, ax, b, np.zeros(3), 10.0, 0.0,
                               1.0, 1e-3, 0.1, nb_, *w),
    "plain_fused": lambda: plain_fused_heun(s, k, 0, 1, 10.0, 1.0, ax, b, 3.16, 1e-3, 0.1, nb_,
                                            *fw),
    "plain_two_sweep": lambda: plain_heun(s, k, 0, 1, 10.0, 1.0, ax, b, 3.16, 1e-3, 0.1, *pw),
}}
out = {{name: [] for name in runs}}
for f in runs.values():
    f()
for _ in range(reps):
    for name, f in runs.items():
        t = time.perf_counter(); f(); out[name].append(n * n * k / (time.perf_counter() - t) / 1e6)
print(json.dumps({{name: statistics.median(v) for name, v in out.items()}}))
"""


def cli_rate(n=256, threads=2, repeats=5):
    """Median M spin-steps/s of `thinfilm run` from the 4000 - 1000 step difference."""
    env = dict(os.environ, THINFILM_THREADS=str(threads), PYTHONPATH=str(HERE.parent))
    rates = []
    with tempfile.TemporaryDirectory() as tmp:
        files = {}
        for ps in (1, 4):
            files[ps] = Path(tmp) / f"s{ps}.yaml"
            files[ps].write_text(SCENARIO.format(n=n, ps=ps))
        cmd = [sys.executable, "-m", "thinfilm", "--threads", str(threads), "run", "--quiet"]
        subprocess.run(cmd + [str(files[1]), "-o", f"{tmp}/warm", "--overwrite"], env=env,
                       check=True, capture_output=True)
        for _ in range(repeats):
            wall = {}
            for ps in (1, 4):
                t = time.perf_counter()
                subprocess.run(cmd + [str(files[ps]), "-o", f"{tmp}/o{ps}", "--overwrite"],
                               env=env, check=True, capture_output=True)
                wall[ps] = time.perf_counter() - t
            rates.append(3000 * n * n / (wall[4] - wall[1]) / 1e6)
    return statistics.median(rates), rates


def kernel_rates(n=256, threads=2, repeats=5):
    """Median M spin-steps/s of the fused kernel and the plain peers, in a fresh process."""
    code = KERNEL_SNIPPET.format(here=str(HERE), n=n, threads=threads, repeats=repeats)
    env = dict(os.environ, PYTHONPATH=str(HERE.parent))
    r = subprocess.run([sys.executable, "-c", code], env=env, check=True, capture_output=True,
                       text=True)
    return json.loads(r.stdout.strip().splitlines()[-1])


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--size", type=int, default=256)
    ap.add_argument("--threads", type=int, default=2)
    ap.add_argument("--repeats", type=int, default=5)
    a = ap.parse_args(argv)
    cli, each = cli_rate(a.size, a.threads, a.repeats)
    ker = kernel_rates(a.size, a.threads, a.repeats)
    print(f"{a.size} x {a.size}, {a.threads} threads, medians of {a.repeats}")
    print(f"  thinfilm run (4000 - 1000 steps)  {cli:7.1f} M spin-steps/s  "
          f"(repeats {', '.join(f'{x:.0f}' for x in each)})")
    for name, v in ker.items():
        print(f"  {name:32s} {v:7.1f} M spin-steps/s")
    print(f"  CLI / kernel {cli / ker['kernel']:.2f};  kernel / plain fused "
          f"{ker['kernel'] / ker['plain_fused']:.2f};  kernel / plain two-sweep "
          f"{ker['kernel'] / ker['plain_two_sweep']:.2f}")
    return {"cli": cli, **ker}


if __name__ == "__main__":
    main()
