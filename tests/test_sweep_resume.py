"""Resuming an interrupted sweep gives byte-for-byte the tables of an uninterrupted run."""

import json
import os
import shutil
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest
from sweep_helpers import tiny_sweep

import thinfilm.runs.sweep as sweep_mod
from thinfilm.runs.sweep import run_sweep

pytestmark = pytest.mark.filterwarnings("ignore::thinfilm.input.errors.ThinFilmWarning")
TABLES = ("observables.csv", "tc.json")


def _same_tables(a, b):
    for name in TABLES:
        assert (a / name).read_bytes() == (b / name).read_bytes(), name


def _crash_after(monkeypatch, n):
    real = sweep_mod.compute_point
    calls = {"n": 0}

    def flaky(task):
        calls["n"] += 1
        if calls["n"] > n:
            raise KeyboardInterrupt  # as Ctrl-C in the middle of the sweep
        return real(task)

    monkeypatch.setattr(sweep_mod, "compute_point", flaky)
    return calls


@pytest.mark.parametrize("order", ["independent", "heating", "cooling"])
def test_resume_after_an_interruption_matches_an_uninterrupted_run(tmp_path, monkeypatch, order):
    sc = tiny_sweep(order=order, temps=("1.5 K", "2.5 K", "3.5 K"), sizes=(6, 8), samples=100)
    ref = run_sweep(sc, tmp_path / "ref", workers=1, progress=False)
    calls = _crash_after(monkeypatch, 3)
    with pytest.raises(KeyboardInterrupt):
        run_sweep(sc, tmp_path / "cut", workers=1, progress=False)
    done = sorted(p.parent.name for p in (tmp_path / "cut").glob("points/*/point.json"))
    assert len(done) == 3  # finished points stay on disk
    man = json.loads((tmp_path / "cut" / "manifest.json").read_text())
    assert man["finished"] is False
    monkeypatch.undo()
    calls["n"] = 0
    out = run_sweep(sc, tmp_path / "cut", resume=True, workers=1, progress=False)
    _same_tables(ref, out)
    assert json.loads((out / "manifest.json").read_text())["finished"] is True


def test_resume_recomputes_deleted_and_half_written_points(tmp_path):
    sc = tiny_sweep(order="heating", sizes=(6,), temps=("1.5 K", "2 K", "2.5 K", "3 K"),
                    samples=100)
    ref = run_sweep(sc, tmp_path / "ref", workers=1, progress=False)
    out = tmp_path / "cut"
    shutil.copytree(ref, out)
    shutil.rmtree(out / "points" / "L6_T3.000K")
    (out / "points" / "L6_T2.500K" / "point.json").unlink()  # killed before the mark
    (out / "observables.csv").unlink()
    before = (out / "points" / "L6_T2.000K" / "point.json").stat().st_mtime_ns
    run_sweep(sc, out, resume=True, workers=1, progress=False)
    _same_tables(ref, out)
    assert (out / "points" / "L6_T2.000K" / "point.json").stat().st_mtime_ns == before


SCRIPT = textwrap.dedent("""
    import sys
    sys.path.insert(0, {tests!r})
    from sweep_helpers import tiny_sweep
    from thinfilm.runs.sweep import run_sweep
    if __name__ == "__main__":
        sc = tiny_sweep(temps=[f"{{t}} K" for t in (1.0, 1.5, 2.0, 2.5, 3.0, 3.5, 4.0, 4.5)],
                        sizes=(8,), samples=400)
        run_sweep(sc, sys.argv[1], resume=len(sys.argv) > 2, workers=1, progress=False)
""")


def test_resume_after_sigkill_of_the_sweep_process(tmp_path):
    script = tmp_path / "sweep_job.py"
    script.write_text(SCRIPT.format(tests=str(Path(__file__).parent)))
    env = dict(os.environ, PYTHONWARNINGS="ignore")
    subprocess.run([sys.executable, str(script), str(tmp_path / "ref")], check=True, env=env,
                   timeout=300)
    cut = tmp_path / "cut"
    proc = subprocess.Popen([sys.executable, str(script), str(cut)], env=env)
    try:
        deadline = time.monotonic() + 240
        while len(list(cut.glob("points/*/point.json"))) < 2 and proc.poll() is None:
            assert time.monotonic() < deadline, "the sweep never finished a point"
            time.sleep(0.02)
        proc.send_signal(signal.SIGKILL)
    finally:
        proc.wait(timeout=60)
    n_done = len(list(cut.glob("points/*/point.json")))
    if n_done == 8:
        pytest.skip("the sweep finished before it could be killed")
    assert not (cut / "observables.csv").exists()
    subprocess.run([sys.executable, str(script), str(cut), "resume"], check=True, env=env,
                   timeout=300)
    _same_tables(tmp_path / "ref", cut)
