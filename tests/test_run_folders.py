"""Run folders hold one scenario, have one writer at a time, lose at most a few percent of a
run to a kill, and leave no temporary files (each numbered case of the folder-lifecycle issue).

Kills are SIGKILLs of subprocesses that these tests start (their process group only).
"""

import errno
import json
import os
import shlex
import stat
import sys
import time

import numpy as np
import pytest
from run_folder_helpers import (
    DIPOLAR,
    DYNAMICS,
    ENSEMBLE,
    SEQUENCE_OPTIONS,
    SWEEP,
    cli,
    kill,
    run,
    start,
    temp_files,
    wait_for,
    write_yaml,
)

import thinfilm.runs.ensemble_sweep as ens_mod
import thinfilm.runs.sweep as sweep_mod
from thinfilm import _io
from thinfilm.cli import build_parser, main
from thinfilm.engines.stochastic_llg import LLGSimulation
from thinfilm.input.errors import InputError
from thinfilm.input.scenario import load_scenario
from thinfilm.runs.folder import RunFolder
from thinfilm.runs.heating_sequence import run_heating_sequence
from thinfilm.runs.lifecycle import LOCK_NAME, folder_files, scenario_identity
from thinfilm.runs.sweep import run_sweep
from thinfilm.runs.time_resolved import run_dynamics

pytestmark = pytest.mark.filterwarnings("ignore::thinfilm.input.errors.ThinFilmWarning")


def _edit(data, path, value):
    d = json.loads(json.dumps(data))
    node = d
    for k in path[:-1]:
        node = node[k]
    node[path[-1]] = value
    return d


def _interrupted_dynamics(sc, out, monkeypatch, at_call=8):
    """Run sc into out and stop it (KeyboardInterrupt) at the at_call-th advance."""
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


# --- 1. a time-resolved resume checks the scenario --------------------------------------------

@pytest.mark.parametrize("film, key, value, named", [
    (DYNAMICS, ("temperature",), "45 K", "temperature_K: 30 in the folder, 45 now"),
    (DIPOLAR, ("dynamics", "damping"), 0.3, "dynamics.damping: 0.2 in the folder, 0.3 now"),
])
def test_1_a_resume_with_an_edited_scenario_is_refused(tmp_path, monkeypatch, film, key, value,
                                                       named):
    out = tmp_path / "run"
    _interrupted_dynamics(load_scenario(film), out, monkeypatch)
    before = (out / "timeseries.csv").read_bytes()
    with pytest.raises(InputError) as exc:
        run_dynamics(load_scenario(_edit(film, key, value)), out, resume=True, progress=False)
    msg = str(exc.value)
    assert named in msg and "overwrite=True" in msg and "out_dir" in msg and "\n" not in msg
    assert (out / "timeseries.csv").read_bytes() == before  # nothing was written
    assert not (out / LOCK_NAME).exists()
    run_dynamics(load_scenario(film), out, resume=True, progress=False)  # the same one resumes


def test_1_a_heating_sequence_resumed_with_another_temperature_step_is_refused(tmp_path):
    sc = load_scenario(SWEEP)
    out = tmp_path / "seq"
    run_heating_sequence(sc, out, progress=False, **SEQUENCE_OPTIONS)
    for p in sorted((out / "snapshots").glob("snap_*.npz"))[5:]:
        p.unlink()  # as if stopped after the fifth frame
    edited = dict(SEQUENCE_OPTIONS, temperatures_K=[1.0, 2.5, 4.0, 5.5])
    with pytest.raises(InputError, match=r"run\.temperatures_K: \[1, 2, 3, 4\] in the "
                                         r"folder, \[1, 2\.5, 4, 5\.5\] now"):
        run_heating_sequence(sc, out, resume=True, progress=False, **edited)
    assert len(list((out / "snapshots").glob("snap_*.npz"))) == 5


# --- 2. an ensemble member is checked --------------------------------------------------------

def _ensemble_cut_after_first(sc, out, monkeypatch):
    """Run the ensemble into out, stopped (KeyboardInterrupt) before realisation r01."""
    real = ens_mod.run_sweep
    calls = {"n": 0}

    def once(*a, **k):
        calls["n"] += 1
        if calls["n"] > 1:
            raise KeyboardInterrupt
        return real(*a, **k)

    monkeypatch.setattr(ens_mod, "run_sweep", once)
    with pytest.raises(KeyboardInterrupt):
        ens_mod.run_ensemble_sweep(sc, out, workers=1, progress=False)
    monkeypatch.setattr(ens_mod, "run_sweep", real)


def test_2_an_ensemble_resumed_after_an_edit_is_refused(tmp_path, monkeypatch):
    out = tmp_path / "ens"
    _ensemble_cut_after_first(load_scenario(ENSEMBLE), out, monkeypatch)
    assert (out / "realisations" / "r00" / "observables.csv").is_file()
    edited = load_scenario(_edit(ENSEMBLE, ("material", "exchange"), "0.3 meV"))
    with pytest.raises(InputError, match=r"material\.exchange_meV: 0\.25 in the folder, 0\.3 now"):
        ens_mod.run_ensemble_sweep(edited, out, resume=True, workers=1, progress=False)
    assert not (out / "realisations" / "r01").exists()
    # a member folder that differs is refused on its own too (e.g. copied in from elsewhere)
    man = json.loads((out / "manifest.json").read_text())
    man["identity"]["material"]["exchange_meV"] = \
        scenario_identity(edited)["material"]["exchange_meV"]
    (out / "manifest.json").write_text(json.dumps(man))
    with pytest.raises(InputError, match=r"r00: cannot resume it .*exchange_meV"):
        ens_mod.run_ensemble_sweep(edited, out, resume=True, workers=1, progress=False)


# --- 3. one writer at a time, a finished ensemble is not silently recomputed -----------------

def test_3_a_finished_ensemble_is_not_recomputed_without_resume(tmp_path):
    sc = load_scenario(ENSEMBLE)
    out = tmp_path / "ens"
    ens_mod.run_ensemble_sweep(sc, out, workers=1, progress=False)
    stamp = (out / "observables.csv").stat().st_mtime_ns
    with pytest.raises(InputError, match="already holds a run"):
        ens_mod.run_ensemble_sweep(sc, out, workers=1, progress=False)
    assert (out / "observables.csv").stat().st_mtime_ns == stamp


def test_3_a_second_writer_is_refused_and_a_killed_writers_lock_is_taken_over(tmp_path):
    data = _edit(ENSEMBLE, ("dynamics", "sweeps"), {"warmup": 200, "samples": 40000})
    path = write_yaml(tmp_path / "ens.yaml", data)
    out = tmp_path / "ens"
    proc = start(cli("run", path, "-o", out, "-q", "--workers", "1"))
    try:
        assert wait_for(out / LOCK_NAME, proc)
        time.sleep(0.5)
        assert proc.poll() is None, "the first run ended too soon for this test"
        holder = json.loads((out / LOCK_NAME).read_text())
        assert holder["pid"] == proc.pid
        for resume in (False, True):
            with pytest.raises(InputError, match=rf"another thinfilm process is writing this "
                                                 rf"folder \(process {proc.pid} on host"):
                ens_mod.run_ensemble_sweep(load_scenario(str(path)), out, resume=resume,
                                           workers=1, progress=False)
    finally:
        kill(proc)
    assert (out / LOCK_NAME).exists()  # left behind by the killed process
    f = RunFolder(out, resume=True, kind="sweep")
    assert f._hold.lock.took_over["pid"] == proc.pid
    f.close()
    assert not (out / LOCK_NAME).exists()


def test_3_a_stale_lock_of_a_dead_process_is_taken_over(tmp_path):
    (tmp_path / "r").mkdir()
    dead = start([sys.executable, "-c", "pass"])
    dead.wait()
    (tmp_path / "r" / LOCK_NAME).write_text(json.dumps({"pid": dead.pid, "host": "here"}))
    sc = load_scenario(_edit(DYNAMICS, ("dynamics", "duration"), "0.2 ps"))
    run_dynamics(sc, tmp_path / "r", progress=False)
    assert json.loads((tmp_path / "r" / "manifest.json").read_text())["finished"]
    assert not (tmp_path / "r" / LOCK_NAME).exists()


# --- 4. --overwrite empties the folder first --------------------------------------------------

def test_4_overwrite_removes_the_earlier_runs_files(tmp_path, capsys):
    long = write_yaml(tmp_path / "long.yaml", _edit(DYNAMICS, ("dynamics", "duration"), "4 ps"))
    short = write_yaml(tmp_path / "short.yaml", _edit(DYNAMICS, ("dynamics", "duration"), "1 ps"))
    out = tmp_path / "run"
    assert main(["run", str(long), "-o", str(out), "-q"]) == 0
    assert len(list((out / "snapshots").glob("snap_*.npz"))) == 9
    (out / "notes.txt").write_text("mine")  # not written by a run: kept
    assert main(["run", str(short), "-o", str(out), "-q", "--overwrite"]) == 0
    snaps = sorted(p.name for p in (out / "snapshots").glob("snap_*.npz"))
    assert snaps == [f"snap_{k:06d}.npz" for k in range(3)]  # 0, 0.5, 1 ps only
    assert (out / "notes.txt").read_text() == "mine"
    man = json.loads((out / "manifest.json").read_text())
    assert man["scenario"]["dynamics"]["duration_ps"] == pytest.approx(1.0)


# --- 5. temporary files of killed writes are removed -------------------------------------------

def test_5_stray_temporary_files_are_removed_at_the_next_start(tmp_path, monkeypatch):
    sc = load_scenario(DYNAMICS)
    out = tmp_path / "run"
    _interrupted_dynamics(sc, out, monkeypatch)
    # what a SIGKILL in the middle of two snapshot writes leaves behind
    (out / "snapshots" / ".snap_000111.npz.bns6yye9.tmp").write_bytes(b"PK\x03\x04trunc")
    (out / "snapshots" / ".snap_000112.npz.x0k2_a9q.tmp").write_bytes(b"")
    (out / ".timeseries.csv.abcd1234.tmp").write_text("time_ps,")
    run_dynamics(sc, out, resume=True, progress=False)
    assert temp_files(out) == []
    man = json.loads((out / "manifest.json").read_text())
    assert not any(".tmp" in f for f in man["files"])


def test_5_temporary_files_of_a_run_folder_inside_are_left_to_that_run(tmp_path):
    from thinfilm.runs.lifecycle import remove_stray_temps

    sub = tmp_path / "step"
    sub.mkdir()
    (sub / LOCK_NAME).write_text("{}")  # another run writes (or wrote) this subfolder
    (sub / ".timeseries.csv.k2j4h5g6.tmp").write_text("")
    (tmp_path / ".tc.json.a1b2c3d4.tmp").write_text("")
    assert remove_stray_temps(tmp_path) == 1
    assert [p.name for p in temp_files(tmp_path)] == [".timeseries.csv.k2j4h5g6.tmp"]


# --- 6. a resume does not depend on the path spelling or the instrument -----------------------

def test_6_path_spelling_and_instrument_do_not_change_the_identity(tmp_path, monkeypatch):
    write_yaml(tmp_path / "x.yaml", SWEEP)
    monkeypatch.chdir(tmp_path)
    ref = run_sweep(load_scenario("x.yaml"), tmp_path / "ref", workers=1, progress=False)
    real = sweep_mod.compute_point
    n = {"k": 0}

    def flaky(task):
        n["k"] += 1
        if n["k"] > 2:
            raise KeyboardInterrupt
        return real(task)

    monkeypatch.setattr(sweep_mod, "compute_point", flaky)
    with pytest.raises(KeyboardInterrupt):
        run_sweep(load_scenario("x.yaml"), "out", workers=1, progress=False)
    n["k"] = -100
    run_sweep(load_scenario(str(tmp_path / "x.yaml")), "out", resume=True, workers=1,
              progress=False)
    with_instrument = write_yaml(tmp_path / "y.yaml", SWEEP | {
        "instrument": {"resolution": "3 nm", "exposure": "1 s"}, "name": "renamed"})
    run_sweep(load_scenario(f"./{with_instrument.name}"), "out", resume=True, workers=1,
              progress=False)
    assert (tmp_path / "out" / "observables.csv").read_bytes() == \
        (ref / "observables.csv").read_bytes()


def test_6_the_plan_accepts_overwrite(tmp_path):
    from thinfilm.api import plan

    args = build_parser().parse_args(["plan", "x.yaml", "-o", "out", "--overwrite"])
    assert args.overwrite is True
    out = tmp_path / "out"
    run_dynamics(load_scenario(_edit(DYNAMICS, ("dynamics", "duration"), "0.5 ps")), out,
                 progress=False)
    sc = load_scenario(_edit(SWEEP, ("temperature",), ["1.5 K", "2 K", "2.5 K", "3 K", "3.5 K"]))
    opts = dict(resolution="1 nm", exposure="1 ms", progress=False, llg_size=6,
                llg_duration="2 ps", n_boot=20, workers=1)
    with pytest.raises(InputError, match="overwrite=True"):
        plan(sc, out, **opts)
    res = plan(sc, out, overwrite=True, **opts)
    assert res["plan"]["sweep"] == "ran"
    assert not (out / "snapshots").exists() and not (out / "timeseries.csv").exists()
    assert json.loads((out / "manifest.json").read_text())["kind"] == "sweep"


# --- 7. nothing finished is recomputed; checkpoints are frequent --------------------------------

def test_7_plan_reuse_continues_an_interrupted_ensemble(tmp_path, monkeypatch):
    from thinfilm.api import plan

    data = _edit(ENSEMBLE, ("temperature",), ["1.5 K", "2 K", "2.5 K", "3 K", "3.5 K"])
    sc = load_scenario(data)
    out = tmp_path / "ens"
    _ensemble_cut_after_first(sc, out, monkeypatch)
    r00 = out / "realisations" / "r00" / "observables.csv"
    stamp = r00.stat().st_mtime_ns
    res = plan(sc, out, resolution="1 nm", exposure="1 ms", reuse=True, progress=False,
               llg_size=6, llg_duration="2 ps", n_boot=20, workers=1)
    assert res["plan"]["sweep"] == "resumed"
    assert r00.stat().st_mtime_ns == stamp  # the finished realisation was reused
    assert len(res["plan"]["tc_realisations_K"]) == 2


def test_7_the_plans_fluctuation_runs_are_saved_one_by_one(tmp_path, monkeypatch):
    from test_plan import FAST, SCENARIO, make_synthetic_sweep

    import thinfilm.plan.heating_plan as hp

    sc = make_synthetic_sweep(tmp_path, scenario=SCENARIO)
    real, calls, killed = hp.fluctuation_time, [], []

    def flaky(*a, **k):
        calls.append(a[1])
        if len(calls) == 3 and not killed:
            killed.append(True)
            raise KeyboardInterrupt  # a kill during the third run
        return real(*a, **k)

    monkeypatch.setattr(hp, "fluctuation_time", flaky)
    opts = dict(resolution="2 nm", exposure="10 ms", reuse=True, progress=False, **FAST)
    with pytest.raises(KeyboardInterrupt):
        hp.make_plan(sc, tmp_path, **opts)
    saved = json.loads((tmp_path / "fluctuations.json").read_text())["runs"]
    assert len(saved) == 2
    calls.clear()
    res = hp.make_plan(sc, tmp_path, **opts)
    n = len(res["plan"]["llg"]["runs"])
    assert len(calls) == n - 2  # the two saved runs were not repeated
    assert res["plan"]["llg"]["runs"][:2] == saved


def test_7_a_monte_carlo_point_continues_from_its_saved_state(tmp_path, monkeypatch):
    import thinfilm.runs.sweep_point as sp
    from thinfilm.engines.montecarlo import MonteCarlo

    data = _edit(SWEEP, ("sweep", "snapshots"), 6) | {"sizes": [8], "temperature": ["2.5 K"]}
    sc = load_scenario(data)
    ref = run_sweep(sc, tmp_path / "ref", workers=1, progress=False)
    monkeypatch.setenv("THINFILM_POINT_CHECKPOINT_S", "0")
    real_save, saves = sp.save_partial, []

    def save_then_kill(*a, **k):
        real_save(*a, **k)
        saves.append(a[4])
        if len(saves) == 3:
            raise KeyboardInterrupt  # killed after the third of six chunks was saved

    monkeypatch.setattr(sp, "save_partial", save_then_kill)
    with pytest.raises(KeyboardInterrupt):
        run_sweep(sc, tmp_path / "cut", workers=1, progress=False)
    point = tmp_path / "cut" / "points" / "L8_T2.500K"
    assert (point / "partial.npz").is_file() and not (point / "point.json").exists()
    monkeypatch.setattr(sp, "save_partial", real_save)
    warmups = []
    real_warmup = MonteCarlo.warmup
    monkeypatch.setattr(MonteCarlo, "warmup",
                        lambda self, n, **k: (warmups.append(n), real_warmup(self, n, **k))[1])
    run_sweep(sc, tmp_path / "cut", resume=True, workers=1, progress=False)
    assert 40 not in warmups  # the warm-up was not repeated: sampling went on from chunk 4
    assert not (point / "partial.npz").exists()
    for name in ("observables.csv", "points/L8_T2.500K/point.json",
                 "points/L8_T2.500K/timeseries.csv", "points/L8_T2.500K/final.npz"):
        assert (tmp_path / "cut" / name).read_bytes() == (ref / name).read_bytes(), name


def test_7_a_time_resolved_run_checkpoints_at_least_every_2_percent(tmp_path, monkeypatch):
    steps = []
    real = RunFolder.write_checkpoint

    def spy(self, **arrays):
        steps.append(int(arrays["step"]))
        return real(self, **arrays)

    monkeypatch.setattr(RunFolder, "write_checkpoint", spy)
    sc = load_scenario(_edit(DYNAMICS, ("record", "every"), "0.01 ps"))
    run_dynamics(sc, tmp_path / "r", progress=False)
    total = 2000  # 2 ps at 1 fs
    gaps = np.diff([0, *steps])
    assert steps[-1] == total and gaps.max() <= 0.02 * total
    # rows further apart than 2 % of the run: a checkpoint at every row
    steps.clear()
    run_dynamics(load_scenario(DYNAMICS), tmp_path / "r2", progress=False)
    assert steps[-1] == total and np.diff([0, *steps]).max() <= 100  # 0.1 ps rows


# --- 8. the manifest lists every file and the wall time of every process --------------------

def test_8_the_manifest_after_a_resume_lists_every_file_and_all_wall_time(tmp_path, monkeypatch):
    sc = load_scenario(DYNAMICS)
    out = tmp_path / "run"
    _interrupted_dynamics(sc, out, monkeypatch, at_call=12)
    man = json.loads((out / "manifest.json").read_text())
    man["wall_time_s"] = 100.0  # as if the first process had worked 100 s
    (out / "manifest.json").write_text(json.dumps(man))
    t0 = time.time()
    run_dynamics(sc, out, resume=True, progress=False)
    second = time.time() - t0
    man = json.loads((out / "manifest.json").read_text())
    assert man["files"] == folder_files(out)
    assert len([f for f in man["files"] if f.startswith("snapshots/snap_")]) == 5
    assert 100.0 < man["wall_time_s"] <= 100.0 + second + 0.01
    assert man["processes"] == 2


def test_8_the_recorded_plan_command_reproduces_the_plan(tmp_path):
    from test_plan import SCENARIO, make_synthetic_sweep

    from thinfilm.input.units import parse_quantity
    from thinfilm.plan.heating_plan import make_plan

    sc = make_synthetic_sweep(tmp_path, scenario=SCENARIO)
    res = make_plan(sc, tmp_path, resolution="2 nm", exposure="10 ms", reuse=True,
                    progress=False, llg_duration="3 ps", n_points=7, dwell="10 min",
                    llg_size=8, n_boot=50)
    assert res["plan"]["command"].endswith("# made in Python with llg_size=8, n_boot=50 "
                                           "(make_plan keywords), which this command does not set")
    argv = shlex.split(res["plan"]["command"], comments=True)[1:]
    args = build_parser().parse_args(argv)
    assert args.points == 7 and args.reuse
    assert parse_quantity(args.llg_duration, "time") == pytest.approx(3e-12, rel=1e-12)
    assert parse_quantity(args.dwell, "time") == pytest.approx(600.0)
    man = json.loads((tmp_path / "manifest.json").read_text())
    assert "plan.md" in man["files"] and "fluctuations.json" in man["files"]


# --- 9. tables are bitwise the same on any thread count --------------------------------------

def test_9_timeseries_is_bitwise_the_same_on_1_and_2_threads(tmp_path):
    import numba

    if numba.config.NUMBA_NUM_THREADS < 2:
        pytest.skip("needs 2 threads")
    from thinfilm.config import set_threads

    sc = load_scenario(_edit(DYNAMICS, ("lattice", "cells"), [24, 24]))
    try:
        set_threads(1)
        run_dynamics(sc, tmp_path / "one", progress=False)
        set_threads(2)
        run_dynamics(sc, tmp_path / "two", progress=False)
    finally:
        set_threads(None)
    assert (tmp_path / "one" / "timeseries.csv").read_bytes() == \
        (tmp_path / "two" / "timeseries.csv").read_bytes()


# --- 10. file-system errors are one paragraph -------------------------------------------------

def _one_paragraph(err):
    lines = [x for x in err.strip().splitlines() if not x.startswith("thinfilm: warning")]
    assert len(lines) == 1 and lines[0].startswith("thinfilm: error: "), err
    assert "Traceback" not in err
    return lines[0]


@pytest.mark.parametrize("code, words", [
    (errno.EACCES, "no permission to write there"),
    (errno.ENOSPC, "the disk is full"),
])
def test_10_permission_and_disk_full_are_one_paragraph(tmp_path, monkeypatch, capsys, code,
                                                       words):
    path = write_yaml(tmp_path / "f.yaml", _edit(DYNAMICS, ("dynamics", "duration"), "0.2 ps"))

    def refuse(src, dst):
        raise OSError(code, os.strerror(code), str(dst))

    monkeypatch.setattr(_io.os, "replace", refuse)
    assert main(["run", str(path), "-o", str(tmp_path / "out"), "-q"]) == 2
    line = _one_paragraph(capsys.readouterr().err)
    assert words in line and str(tmp_path / "out") in line


def test_10_an_output_path_under_a_file_is_one_paragraph(tmp_path, capsys):
    path = write_yaml(tmp_path / "f.yaml", DYNAMICS)
    (tmp_path / "afile").write_text("x")
    assert main(["run", str(path), "-o", str(tmp_path / "afile" / "out"), "-q"]) == 2
    assert "a part of that path is a file" in _one_paragraph(capsys.readouterr().err)
    assert main(["run", str(path), "-o", str(tmp_path / "afile"), "-q"]) == 2
    assert "exists and is not a folder" in _one_paragraph(capsys.readouterr().err)


@pytest.mark.skipif(os.geteuid() == 0, reason="root may write anywhere")
def test_10_a_folder_without_write_permission_is_one_paragraph(tmp_path):
    path = write_yaml(tmp_path / "f.yaml", DYNAMICS)
    locked = tmp_path / "locked"
    locked.mkdir()
    locked.chmod(0o500)
    try:
        r = run(cli("run", path, "-o", locked / "out", "-q"))
    finally:
        locked.chmod(0o700)
    assert r.returncode == 2
    assert "no permission" in _one_paragraph(r.stderr)


# --- written files get the permissions of the umask ----------------------------------------------

@pytest.mark.parametrize("mask", [0o022, 0o027, 0o002])
def test_written_files_get_the_umask_permissions(tmp_path, mask):
    old = os.umask(mask)
    try:
        sc = load_scenario(_edit(DYNAMICS, ("dynamics", "duration"), "0.2 ps"))
        run_dynamics(sc, tmp_path / "r", progress=False)
    finally:
        os.umask(old)
    for name in ("manifest.json", "timeseries.csv", "checkpoint.npz", "snapshots/final.npz"):
        mode = stat.S_IMODE((tmp_path / "r" / name).stat().st_mode)
        assert mode == 0o666 & ~mask, (name, oct(mode))
