"""Benchmark suite of the thinfilm kernels: rates, scaling, memory, compile time, recording.

    python benchmarks/run_all.py            # full (several minutes)
    python benchmarks/run_all.py --quick    # short version

Writes benchmarks/results/bench.csv and benchmarks/results/rate_vs_size.png. Rates are medians
of repeated runs, in million spin-steps (Heun), sites (field, noise: 3 normals per site) or
spin-updates (Metropolis) per second; 'cpu_rate' divides by process CPU time instead of wall
time (robust on a shared machine for one thread; with two threads it includes spin-waiting).
Ratios to the NumPy peer are taken within the same process and size.
"""

import argparse
import csv
import json
import math
import os
import statistics
import subprocess
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

import numba
import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent))

from numpy_peer import NumpyHeun  # noqa: E402

from thinfilm.engines._kernels.field import effective_field  # noqa: E402
from thinfilm.engines._kernels.llg import (  # noqa: E402
    heun_run,
    heun_run_twopass,
    heun_work,
    noise_field,
    twopass_work,  # noqa: E402
)
from thinfilm.model.lattice import SHAPE_CODE, Lattice  # noqa: E402

try:
    from thinfilm.engines._kernels import metropolis as _mc
except ImportError:  # another engineer's kernel; benchmarked when present
    _mc = None

JT, KT, ALPHA = 10.0, 1.0, 0.1
AXIS = np.array([0.0, 0.0, 1.0])
B0 = np.array([0.0, 0.0, 0.1])
GDT = 1e-3
TEMP = 10.0
SIGMA_COEF = 1.0
COLUMNS = ["kernel", "shape", "size", "threads", "rate_M_per_s", "cpu_rate_M_per_s",
           "numpy_peer_M_per_s", "ratio_vs_numpy", "repeats", "unit", "note"]


def spins(n, seed=1):
    s = np.random.default_rng(seed).normal(size=(n, n, 3))
    return np.ascontiguousarray(s / np.linalg.norm(s, axis=-1, keepdims=True))


def timed(fn, work, repeats, min_time):
    """Median wall and CPU rate (work / s) of fn(); each repeat runs at least min_time s."""
    fn()
    t = time.perf_counter()
    fn()
    one = max(time.perf_counter() - t, 1e-6)
    inner = max(1, int(math.ceil(min_time / one)))
    walls, cpus = [], []
    for _ in range(repeats):
        t, c = time.perf_counter(), time.process_time()
        for _ in range(inner):
            fn()
        walls.append((time.perf_counter() - t) / inner)
        cpus.append((time.process_time() - c) / inner)
    return work / statistics.median(walls) / 1e6, work / statistics.median(cpus) / 1e6


def steps_for(n, target=2e6):
    return max(1, int(target // (n * n)))


def bench_heun(shape, n, threads, repeats, min_time, noise=True):
    numba.set_num_threads(threads)
    s = spins(n)
    nb_ = min(threads, n // 2)
    work = heun_work(n, n, nb_)
    k = steps_for(n)
    temp = TEMP if noise else 0.0
    code = SHAPE_CODE[shape]
    return timed(lambda: heun_run(s, k, 0, 1, code, True, JT, KT, AXIS, B0, np.zeros(3), temp,
                                  0.0, SIGMA_COEF, GDT, ALPHA, nb_, *work), n * n * k, repeats,
                 min_time)


def bench_twopass(shape, n, threads, repeats, min_time):
    numba.set_num_threads(threads)
    s = spins(n)
    work = twopass_work(n, n)
    k = steps_for(n)
    code = SHAPE_CODE[shape]
    return timed(lambda: heun_run_twopass(s, k, 0, 1, code, True, JT, KT, AXIS, B0, np.zeros(3),
                                          TEMP, 0.0, SIGMA_COEF, GDT, ALPHA, *work),
                 n * n * k, repeats, min_time)


def bench_noise(n, threads, repeats, min_time):
    numba.set_num_threads(threads)
    out = np.empty((n, n, 3))
    return timed(lambda: noise_field(n, n, 1, 3, 1.0, out), n * n, repeats, min_time)


def bench_field(shape, n, threads, repeats, min_time):
    numba.set_num_threads(threads)
    s = spins(n)
    out = np.empty_like(s)
    code = SHAPE_CODE[shape]
    return timed(lambda: effective_field(s, code, True, JT, KT, AXIS, B0, out), n * n, repeats,
                 min_time)


def bench_metropolis(shape, n, threads, repeats, min_time):
    numba.set_num_threads(threads)
    s = spins(n)
    order, bounds = _mc.row_colouring(n, True)
    counts = np.zeros((n, 3), dtype=np.int64)
    k = max(1, steps_for(n, 1e6))
    code = SHAPE_CODE[shape]
    state = {"sweep": 0}

    def run():
        _mc.metropolis_sweeps(s, order, bounds, code, True, JT, KT, AXIS, B0, 0.05, 0.5, 1, 1,
                              state["sweep"], k, False, 0, counts)
        state["sweep"] += k

    return timed(run, n * n * k, repeats, min_time)


def bench_numpy(shape, n, repeats, min_time):
    peer = NumpyHeun(shape, JT, KT, AXIS, B0, GDT, ALPHA, SIGMA_COEF * math.sqrt(TEMP))
    box = {"s": spins(n)}

    def run():
        box["s"] = peer.step(box["s"])

    return timed(run, n * n, repeats, min_time)


def engine_memory(n, threads):
    """tracemalloc peak (bytes per site) of building an LLGSimulation and advancing it."""
    from thinfilm.engines.stochastic_llg import LLGSimulation
    from thinfilm.model.parameters import Model

    numba.set_num_threads(threads)
    lat = Lattice("square", n, n, 0.3, True)
    model = Model(lat, 2 * 9.274e-24, 1e-21, 1e-23)
    sim = LLGSimulation(model, temperature_K=10.0, damping=0.1, time_step_s=1e-15)
    sim.advance(1)
    del sim
    import gc

    gc.collect()
    tracemalloc.start()
    tracemalloc.reset_peak()
    sim = LLGSimulation(model, temperature_K=10.0, damping=0.1, time_step_s=1e-15)
    sim.advance(3)
    sim.measure()
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return peak / (n * n)


def recording_overhead(n, steps, every, threads):
    """Wall time of `steps` steps with a RunFolder snapshot every `every` steps vs none."""
    from thinfilm.engines.stochastic_llg import LLGSimulation
    from thinfilm.model.parameters import Model
    from thinfilm.runs.folder import RunFolder

    numba.set_num_threads(threads)
    lat = Lattice("square", n, n, 0.3, True)
    model = Model(lat, 2 * 9.274e-24, 1e-21, 1e-23)
    sim = LLGSimulation(model, temperature_K=10.0, damping=0.1, time_step_s=1e-16)
    sim.advance(1)
    times = {"none": [], "snap": []}
    with tempfile.TemporaryDirectory() as tmp:
        folder = RunFolder(Path(tmp) / "run")
        for rep in range(3):
            for mode in ("none", "snap"):
                t = time.perf_counter()
                for i in range(steps // every):
                    sim.advance(every)
                    if mode == "snap":
                        folder.write_snapshot(f"s{rep}_{i:04d}", sim.spins, lat, step=sim.step)
                times[mode].append(time.perf_counter() - t)
    a, b = statistics.median(times["none"]), statistics.median(times["snap"])
    return a, b, (b - a) / a


COMPILE_SNIPPET = r"""
import time, json, sys
t0 = time.perf_counter()
import numpy as np
from thinfilm.engines._kernels.llg import heun_run, heun_work
t1 = time.perf_counter()
s = np.zeros((8, 8, 3)); s[..., 2] = 1.0
w = heun_work(8, 8, 2); ax = np.array([0.0, 0.0, 1.0])
heun_run(s, 1, 0, 1, 0, True, 1.0, 1.0, ax, ax, np.zeros(3), 1.0, 0.0, 1.0, 1e-3, 0.1, 2, *w)
t2 = time.perf_counter()
print(json.dumps({"import_s": t1 - t0, "first_call_s": t2 - t1}))
"""


def compile_times():
    """(first-run compile, cached second run) seconds of heun_run in fresh processes."""
    out = []
    with tempfile.TemporaryDirectory() as cache:
        env = dict(os.environ, NUMBA_CACHE_DIR=cache, PYTHONPATH=str(HERE.parent))
        for _ in range(2):
            r = subprocess.run([sys.executable, "-c", COMPILE_SNIPPET], env=env, check=True,
                               capture_output=True, text=True)
            out.append(json.loads(r.stdout.strip().splitlines()[-1]))
    return out


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="fewer sizes and repeats (~1-2 min)")
    ap.add_argument("--out", default=str(HERE / "results"))
    ap.add_argument("--no-cli", action="store_true",
                    help="skip the command-line rate (thinfilm run, 4000 - 1000 steps)")
    a = ap.parse_args(argv)
    out = Path(a.out)
    out.mkdir(parents=True, exist_ok=True)
    repeats = 5 if a.quick else 7
    min_time = 0.05 if a.quick else 0.2
    sizes = [64, 256, 1024] if a.quick else [64, 128, 256, 512, 1024, 2048]
    shape_sizes = [256] if a.quick else [256, 1024]
    max_threads = min(2, numba.config.NUMBA_NUM_THREADS)
    thread_list = sorted({1, max_threads})
    rows = []
    peers = {}

    def peer(shape, n):
        if (shape, n) not in peers:
            if n > 1024 and a.quick:
                peers[(shape, n)] = (float("nan"), float("nan"))
            else:
                peers[(shape, n)] = bench_numpy(shape, n, 3 if n >= 1024 else repeats, min_time)
        return peers[(shape, n)][0]

    def add(kernel, shape, n, threads, rates, unit, note="", with_peer=True):
        p = peer(shape, n) if with_peer else float("nan")
        r = dict(kernel=kernel, shape=shape, size=n, threads=threads,
                 rate_M_per_s=round(rates[0], 3), cpu_rate_M_per_s=round(rates[1], 3),
                 numpy_peer_M_per_s=round(p, 3), ratio_vs_numpy=round(rates[0] / p, 1)
                 if p == p else float("nan"), repeats=repeats, unit=unit, note=note)
        rows.append(r)
        print(f"{kernel:16s} {shape:10s} {n:5d} t={threads} {rates[0]:8.2f} M/s "
              f"(cpu {rates[1]:8.2f}) numpy {p:7.3f} x{r['ratio_vs_numpy']}", flush=True)

    for n in sizes:
        for th in thread_list:
            add("heun_fused", "square", n, th, bench_heun("square", n, th, repeats, min_time),
                "spin-steps")
            add("heun_fused_T0", "square", n, th,
                bench_heun("square", n, th, repeats, min_time, noise=False), "spin-steps",
                "noise off")
            add("heun_twopass", "square", n, th, bench_twopass("square", n, th, repeats, min_time),
                "spin-steps")
            add("noise", "-", n, th, bench_noise(n, th, repeats, min_time), "sites (3 normals)",
                with_peer=False)
            add("effective_field", "square", n, th,
                bench_field("square", n, th, repeats, min_time), "sites", with_peer=False)
    for n in shape_sizes:
        for shape in ("triangular", "honeycomb"):
            for th in thread_list:
                add("heun_fused", shape, n, th, bench_heun(shape, n, th, repeats, min_time),
                    "spin-steps")
    if _mc is not None and hasattr(_mc, "metropolis_sweeps"):
        for shape in ("square",):
            for th in thread_list:
                add("metropolis", shape, 256, th,
                    bench_metropolis(shape, 256, th, repeats, min_time), "spin-updates",
                    "Gaussian move, no reflection/over-relaxation", with_peer=False)

    extra = {}
    for n in ([256] if a.quick else [256, 1024]):
        extra[f"engine_bytes_per_site_{n}"] = engine_memory(n, max_threads)
    rec_n = 256 if a.quick else 512
    rec_steps = 2000 if a.quick else 5000
    t_none, t_snap, frac = recording_overhead(rec_n, rec_steps, 1000, max_threads)
    extra.update(recording_size=rec_n, recording_steps=rec_steps, recording_none_s=t_none,
                 recording_snapshot_s=t_snap, recording_overhead=frac)
    if not a.no_cli:
        from cli_rate import cli_rate, kernel_rates

        cli, _ = cli_rate(256, max_threads, 3 if a.quick else 5)
        ker = kernel_rates(256, max_threads, 3 if a.quick else 5)
        extra.update(cli_rate_256_M_per_s=cli, cli_kernel_256_M_per_s=ker["kernel"],
                     cli_over_kernel=cli / ker["kernel"],
                     kernel_over_plain_fused=ker["kernel"] / ker["plain_fused"],
                     kernel_over_plain_two_sweep=ker["kernel"] / ker["plain_two_sweep"])
    ct = compile_times()
    extra.update(compile_first_call_s=ct[0]["first_call_s"],
                 cached_first_call_s=ct[1]["first_call_s"])
    for k, v in extra.items():
        rows.append(dict(kernel=k, shape="", size="", threads=max_threads, rate_M_per_s=round(v, 4),
                         cpu_rate_M_per_s="", numpy_peer_M_per_s="", ratio_vs_numpy="",
                         repeats="", unit="", note="extra"))
        print(f"{k:28s} {v:.4g}")

    with open(out / "bench.csv", "w", newline="") as f:
        w = csv.DictWriter(f, fieldnames=COLUMNS)
        w.writeheader()
        w.writerows(rows)
    plot(rows, sizes, out / "rate_vs_size.png")
    print(f"wrote {out / 'bench.csv'} and {out / 'rate_vs_size.png'}")
    return rows


def plot(rows, sizes, path):
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, ax = plt.subplots(figsize=(7, 4.5))
    for kernel in ("heun_fused", "heun_fused_T0", "heun_twopass", "noise", "effective_field"):
        for th, ls in ((1, "--"), (2, "-")):
            pts = [(r["size"], r["rate_M_per_s"]) for r in rows if r["kernel"] == kernel
                   and r["shape"] in ("square", "-") and r["threads"] == th]
            if pts:
                x, y = zip(*pts, strict=True)
                ax.plot(x, y, ls, marker="o", label=f"{kernel} t={th}")
    pts = sorted({(r["size"], r["numpy_peer_M_per_s"]) for r in rows
                  if r["kernel"] == "heun_fused" and r["shape"] == "square"})
    if pts:
        x, y = zip(*pts, strict=True)
        ax.plot(x, y, ":", marker="s", color="k", label="numpy peer")
    ax.set_xscale("log", base=2)
    ax.set_yscale("log")
    ax.set_xlabel("lattice side n (n x n sites)")
    ax.set_ylabel("million per second (median)")
    ax.legend(fontsize=7, ncol=2)
    ax.grid(True, which="both", alpha=0.3)
    fig.tight_layout()
    fig.savefig(path, dpi=120)
    plt.close(fig)


if __name__ == "__main__":
    main()
