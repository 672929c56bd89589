"""The fused LLG kernel of the working tree against the same file at another git revision.

    python benchmarks/llg_ab.py [--rev main] [--sizes 256 1024] [--threads 1 2] [--repeats 7]
                                [--shapes square triangular honeycomb]

``thinfilm/engines/_kernels/llg.py`` at ``--rev`` is loaded as a separate module (its imports
are the working tree's helpers) and both ``heun_run`` are timed interleaved on the same film
(noise, anisotropy, field, periodic). Printed per case: median rates (M spin-steps/s), the
median of the per-pair wall-time ratios new / old, the ratio of the minimum process CPU
times (less sensitive to other processes; with 2 threads it also counts waiting), and
whether both produced bitwise the same spins.
On a loaded machine only the ratios mean anything.
"""

import argparse
import importlib.util
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numba as nb
import numpy as np

from thinfilm.engines._kernels import llg as new

ROOT = Path(__file__).resolve().parent.parent
CODES = {"square": 0, "triangular": 1, "honeycomb": 2}


def load_old(rev):
    src = subprocess.run(["git", "show", f"{rev}:thinfilm/engines/_kernels/llg.py"], cwd=ROOT,
                         capture_output=True, text=True)
    if src.returncode:
        sys.exit(f"llg_ab: cannot read thinfilm/engines/_kernels/llg.py at revision {rev!r}: "
                 f"{src.stderr.strip()}")
    path = Path(tempfile.mkdtemp()) / "llg_old.py"
    path.write_text(src.stdout)
    spec = importlib.util.spec_from_file_location("llg_old", path)
    mod = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = mod
    spec.loader.exec_module(mod)
    return mod


def run(mod, s, k, step0, code, nbands, work):
    mod.heun_run(s, k, step0, 1, code, True, 10.0, 1.0, np.array([0.0, 0.6, 0.8]),
                 np.array([0.0, 0.0, 0.1]), np.zeros(3), 10.0, 0.0, 1.0, 1e-3, 0.1, nbands, *work)


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rev", default="main")
    ap.add_argument("--sizes", type=int, nargs="+", default=[256, 1024])
    ap.add_argument("--threads", type=int, nargs="+", default=[1, 2])
    ap.add_argument("--shapes", nargs="+", default=["square"], choices=list(CODES))
    ap.add_argument("--repeats", type=int, default=7)
    a = ap.parse_args(argv)
    old = load_old(a.rev)
    print(f"heun_run: working tree (new) vs {a.rev} (old); medians of {a.repeats} interleaved "
          "repeats, M spin-steps/s")
    for shape in a.shapes:
        code = CODES[shape]
        for n in a.sizes:
            k = max(2, 4 * 10**6 // (n * n))
            for th in a.threads:
                nb.set_num_threads(th)
                nbands = min(th, n // 2)
                rng = np.random.default_rng(1)
                s0 = rng.normal(size=(n, n, 3))
                s0 /= np.linalg.norm(s0, axis=-1, keepdims=True)
                st = {m: s0.copy() for m in ("new", "old")}
                wk = {m: new.heun_work(n, n, nbands) for m in st}
                mods = {"new": new, "old": old}
                for m in st:
                    run(mods[m], st[m], 1, 0, code, nbands, wk[m])
                same = np.array_equal(st["new"], st["old"])
                rates = {m: [] for m in st}
                cpu = {m: [] for m in st}
                step = 1
                for _ in range(a.repeats):
                    for m in st:
                        c = time.process_time()
                        t = time.perf_counter()
                        run(mods[m], st[m], k, step, code, nbands, wk[m])
                        rates[m].append(n * n * k / (time.perf_counter() - t) / 1e6)
                        cpu[m].append(time.process_time() - c)
                    step += k
                same = same and np.array_equal(st["new"], st["old"])
                q = statistics.median(x / y for x, y in zip(rates["new"], rates["old"],
                                                            strict=True))
                print(f"  {shape:10s} L={n:5d} threads={th}: new "
                      f"{statistics.median(rates['new']):7.1f}  old "
                      f"{statistics.median(rates['old']):7.1f}  new/old {q:.2f} (wall), "
                      f"{min(cpu['old']) / min(cpu['new']):.2f} (min CPU time)  "
                      f"bitwise {'same' if same else 'DIFFERENT'}", flush=True)


if __name__ == "__main__":
    main()
