"""Time-resolved runs: run folder contents, ramps, resume after an interruption."""

import json

import numpy as np
import pytest

from thinfilm.engines.stochastic_llg import LLGSimulation
from thinfilm.input.scenario import load_scenario
from thinfilm.runs.folder import load_snapshot, read_csv_table
from thinfilm.runs.time_resolved import run_dynamics

SC = {
    "lattice": {"shape": "triangular", "cells": [12, 10], "spacing": "0.3 nm"},
    "material": {"moment": "2 muB", "exchange": "2 meV", "anisotropy": {"constant": "0.2 meV"}},
    "temperature": "10 K",
    "dynamics": {"damping": 0.2, "timestep": "1 fs", "duration": "2 ps",
                 "ramp": {"temperature": "30 K", "field": {"value": [0, 0, 0.5], "unit": "T"}}},
    "record": {"every": "0.1 ps", "snapshots": "0.5 ps"},
    "initial": "up",
    "seed": 3,
}


def test_run_folder_is_self_describing(tmp_path):
    out = tmp_path / "run"
    run_dynamics(load_scenario(SC), out, progress=False)
    man = json.loads((out / "manifest.json").read_text())
    assert man["finished"] and man["kind"] == "dynamics"
    assert man["scenario"]["material"]["exchange_meV"] == pytest.approx(2.0)
    for f in man["files"]:
        assert (out / f).is_file(), f
    ts = read_csv_table(out / "timeseries.csv")
    assert len(ts["time_ps"]) == 21  # t = 0, 0.1, ..., 2 ps
    # linear protocol: temperature and field ramp from the start to the end values
    assert ts["temperature_K"][0] == 10.0 and ts["temperature_K"][-1] == pytest.approx(30.0)
    assert ts["bz_T"][-1] == pytest.approx(0.5)
    snap = load_snapshot(out / "snapshots" / "final.npz")
    assert snap["spins"].shape == (10, 12, 3) and snap["positions_nm"].shape == (10, 12, 2)
    assert snap["shape"] == "triangular"
    assert sorted(p.name for p in (out / "snapshots").glob("snap_*.npz")) == [
        f"snap_{k:06d}.npz" for k in range(5)]
    # no temporary files left behind
    assert not list(out.rglob("*.tmp"))


def _run_interrupted(sc, out, monkeypatch, at_call=8):
    """Run sc into out and interrupt it (KeyboardInterrupt) at the at_call-th advance."""
    calls = {"n": 0}
    original = LLGSimulation.advance

    def interrupted(self, *a, **k):
        calls["n"] += 1
        if calls["n"] == at_call:
            raise KeyboardInterrupt
        return original(self, *a, **k)

    monkeypatch.setattr(LLGSimulation, "advance", interrupted)
    with pytest.raises(KeyboardInterrupt):
        run_dynamics(sc, out, progress=False)
    monkeypatch.setattr(LLGSimulation, "advance", original)


def test_resume_after_interruption_equals_uninterrupted_run(tmp_path, monkeypatch):
    sc = load_scenario(SC)
    full = tmp_path / "full"
    run_dynamics(sc, full, progress=False)

    part = tmp_path / "part"
    _run_interrupted(sc, part, monkeypatch)
    assert not json.loads((part / "manifest.json").read_text())["finished"]
    run_dynamics(sc, part, resume=True, progress=False)
    assert (part / "timeseries.csv").read_bytes() == (full / "timeseries.csv").read_bytes()
    a = load_snapshot(full / "snapshots" / "final.npz")["spins"]
    b = load_snapshot(part / "snapshots" / "final.npz")["spins"]
    assert np.array_equal(a, b)


def test_refuses_to_overwrite_a_run(tmp_path):
    from thinfilm.input.errors import InputError

    sc = load_scenario(SC | {"dynamics": {"duration": "0.1 ps"}})
    run_dynamics(sc, tmp_path / "r", progress=False)
    with pytest.raises(InputError, match="already holds a run"):
        run_dynamics(sc, tmp_path / "r", progress=False)


def test_initial_state_from_a_saved_snapshot(tmp_path):
    # A run started from a saved snapshot starts exactly from its spins (common practice).
    out = tmp_path / "first"
    run_dynamics(load_scenario(SC | {"dynamics": {"duration": "0.2 ps"}}), out, progress=False)
    snap = out / "snapshots" / "final.npz"
    sc = load_scenario(SC | {"initial": str(snap), "temperature": "0 K",
                             "dynamics": {"duration": "0.1 ps", "damping": 0.2}})
    second = tmp_path / "second"
    run_dynamics(sc, second, progress=False)
    first_spins = load_snapshot(snap)["spins"]
    start = load_snapshot(second / "snapshots" / "snap_000000.npz")["spins"]
    # renormalised on loading; both files hold float32 (rounding 2^-24 relative per component,
    # twice, plus the renormalisation of a vector whose norm is 1 to that rounding)
    assert np.allclose(first_spins, start, rtol=0, atol=5e-7)


def test_dipolar_run_resumed_in_a_new_process_equals_uninterrupted(tmp_path, monkeypatch):
    # end to end: a dipolar run interrupted, then resumed by another process, is bitwise the
    # uninterrupted run (FFT plans from the plan cache, thinfilm.engines.fft_wisdom; on a grid
    # this small FFTW seldom measures its way to other plans, so the cache itself is tested in
    # tests/test_fft_plan.py)
    import os
    import subprocess
    import sys

    import yaml

    monkeypatch.setenv("THINFILM_FFT_CACHE", str(tmp_path / "fft"))
    raw = json.loads(json.dumps(SC))
    raw["lattice"] = {"shape": "square", "cells": [16, 12], "spacing": "0.3 nm"}
    raw["material"]["dipolar"] = True
    raw["material"]["moment"] = "20 muB"
    path = tmp_path / "dipolar.yaml"
    path.write_text(yaml.safe_dump(raw))
    sc = load_scenario(str(path))
    run_dynamics(sc, tmp_path / "full", progress=False)
    part = tmp_path / "part"
    _run_interrupted(sc, part, monkeypatch)
    code = ("import sys; from thinfilm.input.scenario import load_scenario; "
            "from thinfilm.runs.time_resolved import run_dynamics; "
            "run_dynamics(load_scenario(sys.argv[1]), sys.argv[2], resume=True, progress=False)")
    subprocess.run([sys.executable, "-c", code, str(path), str(part)], check=True,
                   env=dict(os.environ), timeout=300)
    a = load_snapshot(tmp_path / "full" / "snapshots" / "final.npz")["spins"]
    b = load_snapshot(part / "snapshots" / "final.npz")["spins"]
    assert np.array_equal(a, b)
