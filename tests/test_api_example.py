"""The Python example of the package docstring runs as a script (worker processes import it)
and again over its own output; without the guard the error names the guard."""

import inspect
import os
import subprocess
import sys
import textwrap
from pathlib import Path

import yaml

import thinfilm

ROOT = Path(__file__).resolve().parents[1]

# a small copy of scenarios/monolayer_sweep.yaml: two sizes so that the sweep uses a process pool
SMALL = {
    "name": "veltrium-small", "lattice": {"shape": "square", "cells": [8, 8], "spacing": "0.36 nm"},
    "material": {"moment": "2.5 muB", "exchange": "2.5 meV",
                 "anisotropy": {"constant": "1.0 meV", "axis": [0, 0, 1]}},
    "temperature": ["20 K", "25 K", "30 K"], "sizes": [6, 8],
    "dynamics": {"method": "monte-carlo", "sweeps": {"warmup": 10, "samples": 40}},
    "sweep": {"order": "independent", "snapshots": 2}, "initial": "up", "seed": 7,
}


def _example():
    doc = inspect.getdoc(thinfilm)
    block = doc.split("::", 1)[1].split("\n\n", 1)[1]
    lines = []
    for line in block.splitlines():
        if line and not line.startswith("    "):
            break
        lines.append(line)
    return textwrap.dedent("\n".join(lines))


def _run(tmp_path, code):
    (tmp_path / "scenarios").mkdir(exist_ok=True)
    (tmp_path / "scenarios" / "monolayer_sweep.yaml").write_text(yaml.safe_dump(SMALL))
    script = tmp_path / "example.py"
    script.write_text(code)
    env = dict(os.environ, PYTHONPATH=str(ROOT), MPLBACKEND="Agg")
    return subprocess.run([sys.executable, str(script)], cwd=tmp_path, env=env,
                          capture_output=True, text=True, timeout=600)


def test_docstring_example_runs_as_a_script_twice(tmp_path):
    code = _example()
    assert 'if __name__ == "__main__":' in code and "thinfilm.run(" in code
    for _ in range(2):  # the second run replaces the first instead of stopping at its folder
        res = _run(tmp_path, code)
        assert res.returncode == 0, res.stderr[-3000:]
        out = tmp_path / "outputs" / "my-sweep"
        for f in ("observables.csv", "tc.json", "sweep_movie.mp4", "manifest.json"):
            assert (out / f).is_file(), f
        assert '"finished": true' in (out / "manifest.json").read_text()
        assert "tc_K" in res.stdout


def test_unguarded_script_is_told_to_add_the_guard(tmp_path):
    body = _example().split('if __name__ == "__main__":', 1)[1].split("\n", 1)[1]
    code = "import thinfilm\n" + textwrap.dedent(body)
    res = _run(tmp_path, code)
    assert res.returncode != 0
    assert "if __name__ ==" in res.stderr and "--resume" not in res.stderr


def test_plan_is_exported_and_callable():
    """The README's notebook API: thinfilm.run, thinfilm.plan, thinfilm.plot_run."""
    assert callable(thinfilm.plan) and callable(thinfilm.run) and callable(thinfilm.plot_run)
    assert thinfilm.plan.make_plan is thinfilm.plan.heating_plan.make_plan  # still the package
