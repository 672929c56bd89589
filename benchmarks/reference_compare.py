"""The engine's fused square-lattice LLG kernel against an outside yardstick kernel, same process.

    python benchmarks/reference_compare.py [--reference PATH] [--sizes 256 1024]
                                           [--threads 1 2] [--repeats 7] [--no-profile]

The yardstick is a separate fused stochastic-Heun kernel for the periodic square lattice (one
file, loaded from ``--reference`` at run time; default ``../shared/bench/reference_heun.py``
beside the repository). Both kernels advance a perfect square film with thermal noise,
anisotropy and a field; the runs are interleaved (engine, yardstick, engine, ...) so that a
change of machine load hits both alike. Printed: median rates (M spin-steps/s) and the median
of the per-pair ratios engine / yardstick (each pair timed back to back).

The per-stage profile (one thread, rows resident in cache, so it is the arithmetic cost of each
stage; minimum thread CPU time of 7 repeats) times the pieces each kernel executes per row and
step, in ns per site:

* noise: the engine's ``normals_row`` (3 normals per site) and the yardstick's generator;
* load: the engine's AoS -> padded SoA de-interleave of a start-of-step row;
* predictor / corrector: the engine's square-lattice stages with the field fused in
  (``_predict_sq``, which also renormalises the predictor, and ``_correct_sq``, which
  renormalises and interleaves the result), the yardstick's predictor and corrector row sweeps
  (field included); for the other shapes the separate ``field_soa`` (twice per step),
  ``_predict`` and ``_correct`` are printed too;
* normalisation: one 1/sqrt renormalisation of a row (the engine does two per step, the
  yardstick one);
* sync: one empty parallel region on the current thread count (the wait at the end of every
  step), and the fused step's wall time at 1 vs 2 threads (parallel efficiency).

"sum of stages" vs "fused step" shows what the stages do not: memory traffic, loop overhead.
The thread wait policy (``OMP_WAIT_POLICY``) is read once per process, so ``--wait-policy``
reruns the 2-thread comparison in child processes with PASSIVE and ACTIVE.

On a loaded machine only the ratios mean anything; regenerate all figures on an idle machine.
"""

import argparse
import importlib.util
import json
import math
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numba as nb
import numpy as np

from thinfilm.engines._kernels.field import field_soa, load_row, row_pad
from thinfilm.engines._kernels.llg import (
    _correct,
    _correct_sq,
    _noise,
    _predict,
    _predict_sq,
    heun_run,
    heun_work,
)
from thinfilm.engines._kernels.rng import key

HERE = Path(__file__).resolve().parent
DEFAULT_REF = HERE.parent.parent / "shared" / "bench" / "reference_heun.py"


def load_reference(path):
    """The yardstick module, imported from its file (never copied into the repository)."""
    path = Path(path)
    if not path.is_file():
        sys.exit(f"reference_compare: the yardstick kernel file {path} does not exist; pass its "
                 "path with --reference PATH (a Python file defining Lattice(L, ...) with "
                 "advance(n), fill_normals and sweep_row).")
    spec = importlib.util.spec_from_file_location("yardstick_heun", path)
    mod = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = mod  # numba's on-disk cache looks the module up by name
    # its compiled code is cached in a private directory, not beside the (shared) file
    old = nb.config.CACHE_DIR
    nb.config.CACHE_DIR = str(Path(tempfile.gettempdir()) / "thinfilm-yardstick-cache")
    try:
        spec.loader.exec_module(mod)
    finally:
        nb.config.CACHE_DIR = old
    return mod


class Engine:
    """The engine's fused kernel on an L x L periodic square film (what LLGSimulation calls)."""

    def __init__(self, n, threads):
        rng = np.random.default_rng(1)
        s = rng.normal(size=(n, n, 3))
        self.s = s / np.linalg.norm(s, axis=-1, keepdims=True)
        self.nb = min(max(1, threads), n // 2)
        self.work = heun_work(n, n, self.nb)
        self.step = 0

    def advance(self, k):
        heun_run(self.s, k, self.step, 1, 0, True, 10.0, 1.0, np.array([0.0, 0.0, 1.0]),
                 np.array([0.0, 0.0, 0.1]), np.zeros(3), 10.0, 0.0, 1.0, 1e-3, 0.1, self.nb,
                 *self.work)
        self.step += k


def compare(ref, n, threads, repeats, steps):
    """Interleaved timings: (median engine rate, median yardstick rate, median pair ratio)."""
    nb.set_num_threads(threads)
    eng = Engine(n, threads)
    lat = ref.Lattice(n, K=0.1, B=(0, 0, 0.2), alpha=0.1, T=0.5, bands=threads)
    eng.advance(1)
    lat.advance(1)
    re, rr = [], []
    for _ in range(repeats):
        t = time.perf_counter()
        eng.advance(steps)
        re.append(n * n * steps / (time.perf_counter() - t) / 1e6)
        t = time.perf_counter()
        lat.advance(steps)
        rr.append(n * n * steps / (time.perf_counter() - t) / 1e6)
    ratios = [a / b for a, b in zip(re, rr, strict=True)]
    return statistics.median(re), statistics.median(rr), statistics.median(ratios)


# ------------------------------------------------------------------ per-stage profile

@nb.njit(cache=True)
def _st_noise(n, rows, nz):
    for r in range(rows):
        _noise(key(1, 0, r), r, n, 3.0, nz)


@nb.njit(cache=True)
def _st_load(src, rows, buf):
    for _ in range(rows):
        load_row(src, buf, True)


@nb.njit(cache=True)
def _st_field(n, rows, dn, cur, up, nz, h):
    for r in range(rows):
        field_soa(0, r, dn, cur, up, 10.0, 1.0, 0.0, 0.0, 1.0, 0.0, 0.0, 0.1, nz, n, h)


@nb.njit(cache=True)
def _st_predict(n, rows, cur, h, d1, sp):
    for _ in range(rows):
        _predict(cur, h, 1e-3, 0.1, n, True, d1, sp)


@nb.njit(cache=True)
def _st_correct(n, rows, pcur, h, old, d1, out):
    for _ in range(rows):
        _correct(pcur, h, old, d1, 1e-3, 0.1, n, out)


@nb.njit(cache=True)
def _st_predict_sq(n, rows, dn, cur, up, nz, d1, sp):
    for _ in range(rows):
        _predict_sq(dn, cur, up, 10.0, 1.0, 0.0, 0.0, 1.0, 0.0, 0.0, 0.1, nz, 1e-3, 0.1, n, True,
                    d1, sp)


@nb.njit(cache=True)
def _st_correct_sq(n, rows, dn, pcur, up, nz, old, d1, out):
    for _ in range(rows):
        _correct_sq(dn, pcur, up, 10.0, 1.0, 0.0, 0.0, 1.0, 0.0, 0.0, 0.1, nz, old, d1, 1e-3, 0.1,
                    n, out)


@nb.njit(cache=True, error_model="numpy")
def _st_normalise(n, rows, b):
    x = b[0]
    y = b[1]
    z = b[2]
    for _ in range(rows):
        for j in range(n):
            inv = 1.0 / math.sqrt(x[j] * x[j] + y[j] * y[j] + z[j] * z[j])
            x[j] *= inv
            y[j] *= inv
            z[j] *= inv


@nb.njit(parallel=True, cache=True)
def _st_empty(reps, out):
    for _ in range(reps):
        for c in nb.prange(out.size):
            out[c] += 1.0


def _reference_stages(ref):
    """njit loops over the yardstick's own row functions (compiled here, not copied)."""
    fill, sweep = ref.fill_normals, ref.sweep_row

    @nb.njit(error_model="numpy")  # as in the yardstick's parallel loop body
    def noise(rows, L, out, k):
        for r in range(rows):
            for cc in range(3):
                fill(out[cc, :L], k, np.uint64((3 * r + cc) * (L // 2)), 3.0, True)

    @nb.njit(error_model="numpy")
    def predict(rows, L, m, o, q, nz, a, out, p):
        for _ in range(rows):
            sweep(True, m, o, q, nz, a, out, p, L)

    @nb.njit(error_model="numpy")
    def correct(rows, L, m, o, q, nz, a, out, p):
        for _ in range(rows):
            sweep(False, m, o, q, nz, a, out, p, L)

    return noise, predict, correct


def _ns_per_site(f, n, rows, reps=7):
    """Minimum over repeats of the calling thread's CPU time (robust to other processes)."""
    f()
    ts = []
    for _ in range(reps):
        t = time.thread_time()
        f()
        ts.append(time.thread_time() - t)
    return min(ts) / (n * rows) * 1e9


def profile(ref, n, rows):
    """ns per site of each stage, one thread, one row buffer reused (cache resident)."""
    nb.set_num_threads(1)
    rng = np.random.default_rng(2)
    L = row_pad(n)

    def soa():
        b = np.zeros((3, L))
        v = rng.normal(size=(3, n))
        b[:, 1:n + 1] = v / np.sqrt((v * v).sum(0))
        b[:, 0], b[:, n + 1] = b[:, n], b[:, 1]
        return b

    dn, cur, up, old, sp = soa(), soa(), soa(), soa(), soa()
    aos = np.ascontiguousarray(cur[:, 1:n + 1].T)
    out = np.empty((n, 3))
    nz = rng.normal(size=3 * n)
    h = np.zeros((3, L))
    d1 = np.zeros((3, L))
    e = {  # the square lattice's path: the field is fused into the Heun stages
        "noise": _ns_per_site(lambda: _st_noise(n, rows, nz), n, rows),
        "load (AoS -> SoA row)": _ns_per_site(lambda: _st_load(aos, rows, old), n, rows),
        "predictor (field fused)": _ns_per_site(
            lambda: _st_predict_sq(n, rows, dn, cur, up, nz, d1, sp), n, rows),
        "corrector (field fused)": _ns_per_site(
            lambda: _st_correct_sq(n, rows, dn, sp, up, nz, old, d1, out), n, rows),
    }
    other = {  # the triangular / honeycomb path: separate field rows
        "field (x2 per step)": 2 * _ns_per_site(
            lambda: _st_field(n, rows, dn, cur, up, nz, h), n, rows),
        "predictor": _ns_per_site(lambda: _st_predict(n, rows, cur, h, d1, sp), n, rows),
        "corrector": _ns_per_site(lambda: _st_correct(n, rows, sp, h, old, d1, out), n, rows),
    }
    norm = _ns_per_site(lambda: _st_normalise(n, rows, soa()), n, rows)
    rn, rp, rc = _reference_stages(ref)
    P = n + ref.PAD
    rows3 = rng.normal(size=(3, 3, P))
    nzr = np.zeros((3, P))
    a, o2 = np.zeros((3, P)), np.zeros((3, P))
    p = tuple(float(v) for v in (1.0, 0.2, 0, 0, 0.2, 0.1, 1 / 1.01, 0.01, 0.005, 1.0))
    k = np.uint64(12345)
    r = {
        "noise": _ns_per_site(lambda: rn(rows, n, nzr, k), n, rows),
        "predictor (field fused)": _ns_per_site(
            lambda: rp(rows, n, rows3[0], rows3[1], rows3[2], nzr, a, o2, p), n, rows),
        "corrector (field fused)": _ns_per_site(
            lambda: rc(rows, n, rows3[0], rows3[1], rows3[2], nzr, a, o2, p), n, rows),
    }
    return e, r, norm, other


def fused_step_ns(ref, n, steps, threads):
    nb.set_num_threads(threads)
    eng = Engine(n, threads)
    lat = ref.Lattice(n, K=0.1, B=(0, 0, 0.2), alpha=0.1, T=0.5, bands=threads)
    out = {}
    for name, obj in (("engine", eng), ("yardstick", lat)):
        obj.advance(1)
        ts = []
        for _ in range(5):
            t = time.perf_counter()
            obj.advance(steps)
            ts.append(time.perf_counter() - t)
        out[name] = statistics.median(ts) / (n * n * steps) * 1e9
    return out


def empty_region_us(threads, reps=2000):
    nb.set_num_threads(threads)
    buf = np.zeros(threads)
    _st_empty(1, buf)
    ts = []
    for _ in range(5):
        t = time.perf_counter()
        _st_empty(reps, buf)
        ts.append(time.perf_counter() - t)
    return statistics.median(ts) / reps * 1e6


def steps_for(n, quick):
    return max(2, (2 if quick else 6) * 10**6 // (n * n))


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--reference", default=str(DEFAULT_REF),
                    help="path of the yardstick kernel file (default: %(default)s)")
    ap.add_argument("--sizes", type=int, nargs="+", default=[256, 1024])
    ap.add_argument("--threads", type=int, nargs="+", default=[1, 2])
    ap.add_argument("--repeats", type=int, default=7)
    ap.add_argument("--quick", action="store_true", help="shorter timed runs")
    ap.add_argument("--no-profile", action="store_true")
    ap.add_argument("--wait-policy", action="store_true",
                    help="rerun the 2-thread comparison with OMP_WAIT_POLICY PASSIVE and ACTIVE")
    ap.add_argument("--json", action="store_true", help=argparse.SUPPRESS)
    a = ap.parse_args(argv)
    ref = load_reference(a.reference)
    res = {}
    print(f"engine fused heun_run vs yardstick {a.reference}; periodic square film, noise on;"
          f" medians of {a.repeats} interleaved repeats (M spin-steps/s)")
    for n in a.sizes:
        for th in a.threads:
            e, r, q = compare(ref, n, th, a.repeats, steps_for(n, a.quick))
            res[f"{n}x{th}"] = (e, r, q)
            print(f"  L={n:5d} threads={th}: engine {e:7.1f}  yardstick {r:7.1f}  "
                  f"engine/yardstick {q:.2f} (median of pair ratios)")
    if a.json:
        print("JSON " + json.dumps(res))
        return res
    if not a.no_profile:
        n = a.sizes[0]
        e, r, norm, other = profile(ref, n, 4000 if not a.quick else 1000)
        print(f"\nper-stage profile, L = {n}, 1 thread, row buffers in cache (ns per site):")
        for name, v in e.items():
            print(f"  engine    {name:26s} {v:6.2f}")
        print(f"  engine    {'sum of stages':26s} {sum(e.values()):6.2f}")
        for name, v in other.items():
            print(f"  (engine, other shapes: {name} {v:.2f})")
        for name, v in r.items():
            print(f"  yardstick {name:26s} {v:6.2f}")
        print(f"  yardstick {'sum of stages':26s} {sum(r.values()):6.2f}")
        print(f"  one renormalisation of a row: {norm:.2f} ns/site (engine: 2 per step, "
              "yardstick: 1)")
        for th in a.threads:
            f = fused_step_ns(ref, n, steps_for(n, True), th)
            print(f"  fused step, {th} thread(s): engine {f['engine']:.2f}  yardstick "
                  f"{f['yardstick']:.2f} ns per site (wall / sites; with 2 threads x2 = CPU)")
            us = empty_region_us(th)
            print(f"  empty parallel region on {th} thread(s): {us:.1f} us = "
                  f"{us * 1e3 / (n * n):.3f} ns per site of an L = {n} step")
    if a.wait_policy:
        print("\nthread wait policy (child processes, 2 threads):")
        for pol in ("PASSIVE", "ACTIVE"):
            env = dict(os.environ, OMP_WAIT_POLICY=pol)
            cmd = [sys.executable, str(Path(__file__).resolve()), "--reference", a.reference,
                   "--threads", "2", "--repeats", str(a.repeats), "--json", "--sizes",
                   *map(str, a.sizes)] + (["--quick"] if a.quick else [])
            out = subprocess.run(cmd, env=env, capture_output=True, text=True, check=True).stdout
            d = json.loads(out.split("JSON ", 1)[1])
            for k, (e, r, q) in d.items():
                print(f"  OMP_WAIT_POLICY={pol:7s} L={k.split('x')[0]:>5s}: engine {e:7.1f}  "
                      f"yardstick {r:7.1f}  engine/yardstick {q:.2f}")
    return res


if __name__ == "__main__":
    main()
