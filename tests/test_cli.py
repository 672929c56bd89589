"""Command line: exit codes, one-paragraph errors, nothing half-written."""

import subprocess
import sys

import yaml

from thinfilm.cli import main
from thinfilm.input.scenario import DEFAULT_SCENARIO

GOOD = {
    "lattice": {"shape": "honeycomb", "cells": [8, 6], "spacing": "0.25 nm"},
    "material": {"moment": "3 muB", "exchange": "1.5 meV"},
    "temperature": "5 K",
    "dynamics": {"damping": 0.1, "timestep": "1 fs", "duration": "0.2 ps"},
}


def test_check_prints_resolved_parameters(capsys):
    assert main(["check", str(DEFAULT_SCENARIO)]) == 0
    out = capsys.readouterr().out
    assert ("mean-field Tc estimate" in out and "meV" in out
            and "largest recommended time step" in out)
    assert "initial     up" in out


def test_check_names_a_labyrinth_start(tmp_path, capsys):
    f = tmp_path / "lab.yaml"
    f.write_text(yaml.safe_dump(dict(GOOD, lattice={"shape": "honeycomb", "cells": [16, 12],
                                                    "spacing": "0.25 nm"},
                                     initial={"labyrinth": "0.9 nm"})))
    assert main(["check", str(f)]) == 0
    assert "initial     labyrinth of up and down domains 0.9 nm wide" in capsys.readouterr().out


def test_bad_scenario_exits_2_with_one_paragraph_and_writes_nothing(tmp_path, capsys):
    f = tmp_path / "bad.yaml"
    bad = dict(GOOD, material={"moment": "3 muB", "exchange": "1.5 kelvin"})
    f.write_text(yaml.safe_dump(bad))
    out_dir = tmp_path / "out"
    assert main(["run", str(f), "-o", str(out_dir)]) == 2
    err = capsys.readouterr().err.strip()
    assert err.startswith("thinfilm: error:") and "material.exchange" in err and str(f) in err
    assert "Traceback" not in err and "\n" not in err
    assert not out_dir.exists()


def test_run_then_rerun_without_resume_is_refused(tmp_path, capsys):
    f = tmp_path / "ok.yaml"
    f.write_text(yaml.safe_dump(GOOD))
    out_dir = tmp_path / "out"
    assert main(["run", str(f), "-o", str(out_dir), "-q"]) == 0
    assert (out_dir / "timeseries.csv").is_file()
    assert main(["run", str(f), "-o", str(out_dir), "-q"]) == 2
    assert "--resume" in capsys.readouterr().err


def test_module_entry_point_runs():
    r = subprocess.run([sys.executable, "-m", "thinfilm", "--version"], capture_output=True,
                       text=True)
    assert r.returncode == 0 and "thinfilm" in r.stdout


def test_image_command_writes_analysis_and_rejects_bad_pixel_size(tmp_path, capsys):
    import json

    import imageio.v3 as iio
    import numpy as np
    from scipy import ndimage

    rng = np.random.default_rng(4)
    field = ndimage.gaussian_filter(rng.normal(size=(96, 96)), 3.0)
    img = np.uint8(np.clip(128 + 127 * field / np.abs(field).max(), 0, 255))
    f = tmp_path / "kerr.png"
    iio.imwrite(f, img)
    out = tmp_path / "ana"
    assert main(["image", str(f), "--pixel-size", "5 nm", "-o", str(out)]) == 0
    res = json.loads((out / "image_analysis.json").read_text())
    assert (res["pixel_size_nm"] == 5.0 and res["correlation_length_nm"] > 5.0
            and res["domain_count"] > 1)
    capsys.readouterr()
    assert main(["image", str(f), "--pixel-size", "5 kelvin", "-o", str(tmp_path / "x")]) == 2
    err = capsys.readouterr().err
    assert "pixel" in err and "Traceback" not in err
