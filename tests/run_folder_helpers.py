"""Small films and a kill-and-resume driver for the run-folder tests (invented films)."""

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import yaml

from thinfilm.runs.lifecycle import LOCK_NAME, is_temp_name

# a 16 x 16 easy-axis film; 2 ps of stochastic LLG (2000 steps)
DYNAMICS = {
    "name": "rf-dynamics",
    "lattice": {"shape": "square", "cells": [16, 16], "spacing": "0.3 nm"},
    "material": {"moment": "2 muB", "exchange": "2 meV", "anisotropy": {"constant": "0.2 meV"}},
    "temperature": "30 K",
    "dynamics": {"damping": 0.2, "timestep": "1 fs", "duration": "2 ps"},
    "record": {"every": "0.1 ps", "snapshots": "0.5 ps"},
    "initial": "up",
    "seed": 3,
}

# the same film with the dipolar field (point dipoles, large moment so that it matters)
DIPOLAR = json.loads(json.dumps(DYNAMICS)) | {"name": "rf-dipolar"}
DIPOLAR["lattice"]["cells"] = [12, 12]
DIPOLAR["material"] = {"moment": "20 muB", "exchange": "2 meV", "dipolar": True,
                       "anisotropy": {"constant": "0.4 meV"}}

# a Monte Carlo sweep with Tc near 2.5 K (J = 0.25 meV), two sizes, three temperatures
SWEEP = {
    "name": "rf-sweep",
    "lattice": {"shape": "square", "cells": [8, 8], "spacing": "0.3 nm"},
    "material": {"moment": "1 muB", "exchange": "0.25 meV",
                 "anisotropy": {"constant": "0.1 meV", "axis": [0, 0, 1]}},
    "temperature": ["1.5 K", "2.5 K", "3.5 K"],
    "sizes": [6, 8],
    "dynamics": {"method": "monte-carlo", "damping": 1.0, "timestep": "5 fs",
                 "sweeps": {"warmup": 40, "samples": 160}},
    "sweep": {"order": "independent", "snapshots": 2},
    "initial": "up",
    "seed": 11,
}

# two disorder realisations (vacancies) of the sweep film
ENSEMBLE = json.loads(json.dumps(SWEEP)) | {
    "name": "rf-ensemble", "disorder": {"seed": 1, "realisations": 2, "vacancies": 0.1}}

SEQUENCE_OPTIONS = dict(size=8, temperatures_K=[1.0, 2.0, 3.0, 4.0], frames=3, between=20,
                        warmup=10)


def write_yaml(path, data):
    path = Path(path)
    path.write_text(yaml.safe_dump(data))
    return path


def env():
    """Environment of a subprocess: this worktree's package first."""
    e = dict(os.environ)
    root = str(Path(__file__).resolve().parents[1])
    e["PYTHONPATH"] = root + os.pathsep + e.get("PYTHONPATH", "")
    e.setdefault("MPLBACKEND", "Agg")
    e["THINFILM_POINT_CHECKPOINT_S"] = "0"  # Monte Carlo points save their state at every chunk
    return e


def cli(*args):
    """The command line of ``python -m thinfilm --threads 1 <args>``."""
    return [sys.executable, "-m", "thinfilm", "--threads", "1", *map(str, args)]


def run(cmd, timeout=600):
    """Run a command to completion; returns CompletedProcess (text)."""
    return subprocess.run(cmd, env=env(), capture_output=True, text=True, timeout=timeout)


def start(cmd):
    """Start a command in its own process group (so a kill reaches its workers too)."""
    return subprocess.Popen(cmd, env=env(), stdout=subprocess.DEVNULL,
                            stderr=subprocess.DEVNULL, start_new_session=True)


def kill(proc):
    """SIGKILL the process group of a process this test started, and reap it."""
    try:
        os.killpg(proc.pid, signal.SIGKILL)
    except ProcessLookupError:
        pass
    proc.wait(timeout=60)


def wait_for(path, proc, timeout=120):
    """Wait until ``path`` exists (or the process ended); True when it exists."""
    t0 = time.time()
    while time.time() - t0 < timeout:
        if Path(path).exists():
            return True
        if proc.poll() is not None:
            return Path(path).exists()
        time.sleep(0.02)
    return False


def kill_at_random_times(cmd_first, cmd_resume, out, rng, kills, span_s):
    """Start, SIGKILL at a random time in (0, span_s) after the run took its lock, resume and
    kill again ``kills`` times; then resume to the end. Returns the number of kills that hit a
    running process."""
    hits = 0
    for k in range(kills):
        proc = start(cmd_first if k == 0 else cmd_resume)
        wait_for(Path(out) / LOCK_NAME, proc)
        time.sleep(float(rng.uniform(0.0, span_s)))
        if proc.poll() is None:
            hits += 1
        kill(proc)
    done = run(cmd_resume)
    assert done.returncode == 0, done.stderr
    return hits


BOOKKEEPING = ("wall_time_s", "processes", "versions", "executor", "files",
               "point_compute_time_s")


def temp_files(folder):
    return [p for p in Path(folder).rglob("*") if is_temp_name(p.name)]


def assert_same_folder(ref, got, *, ignore_keys=(), normalise=None):
    """Every file of ``ref`` and ``got`` byte for byte equal (manifests apart from their
    bookkeeping: wall time, process count, versions, executor, compute times; JSON files apart
    from ``ignore_keys``; text of .md/.json files after ``normalise(text, folder)``); no
    temporary or lock file."""
    ref, got = Path(ref), Path(got)
    names = lambda d: sorted(p.relative_to(d).as_posix() for p in d.rglob("*") if p.is_file())  # noqa: E731
    a, b = names(ref), names(got)
    assert a == b, (sorted(set(a) ^ set(b)))
    assert not temp_files(got) and not (got / LOCK_NAME).exists()
    for n in a:
        x, y = (ref / n).read_bytes(), (got / n).read_bytes()
        if normalise and n.endswith((".md", ".json")):
            x, y = normalise(x.decode(), ref).encode(), normalise(y.decode(), got).encode()
        if n.endswith("manifest.json") or n.endswith(".json") and ignore_keys:
            jx, jy = json.loads(x), json.loads(y)
            if n.endswith("manifest.json"):
                assert jx["files"] == jy["files"]
            for k in (*BOOKKEEPING, *ignore_keys) if n.endswith("manifest.json") else ignore_keys:
                jx.pop(k, None)
                jy.pop(k, None)
            assert jx == jy, n
        else:
            assert x == y, n
