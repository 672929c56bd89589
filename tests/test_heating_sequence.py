"""Quasi-static heating sequence: frames at rising temperatures, resumable bit for bit."""

import json

import numpy as np
import pytest

from thinfilm.input.scenario import load_scenario
from thinfilm.render.movie import write_movie
from thinfilm.runs.folder import RunFolder, load_snapshot
from thinfilm.runs.heating_sequence import run_heating_sequence

FILM = {
    "lattice": {"shape": "square", "cells": [8, 8], "spacing": "0.3 nm"},
    "material": {"moment": "1 muB", "exchange": "0.25 meV",
                 "anisotropy": {"constant": "0.1 meV", "axis": [0, 0, 1]}},
    "temperature": ["1 K", "4 K"],
    "dynamics": {"method": "monte-carlo", "sweeps": {"warmup": 5, "samples": 20}},
    "seed": 4,
}
OPTS = dict(size=8, temperatures_K=[1.0, 3.0, 5.0], frames=2, between=3, warmup=4, progress=False)


def frames(folder):
    return [load_snapshot(p)["spins"] for p in sorted((folder / "snapshots").glob("snap_*.npz"))]


def test_sequence_resumed_after_an_interruption_equals_an_uninterrupted_one(tmp_path,
                                                                             monkeypatch):
    sc = load_scenario(FILM)
    ref = frames(run_heating_sequence(sc, tmp_path / "ref", **OPTS).path)
    assert len(ref) == 6
    assert not (tmp_path / "ref" / "checkpoint.npz").exists()  # removed once finished
    cut = tmp_path / "cut"
    write, calls = RunFolder.write_snapshot, []

    def stop_at_fourth(self, *args, **kwargs):
        calls.append(1)
        if len(calls) == 4:
            raise KeyboardInterrupt
        return write(self, *args, **kwargs)

    monkeypatch.setattr(RunFolder, "write_snapshot", stop_at_fourth)
    with pytest.raises(KeyboardInterrupt):
        run_heating_sequence(sc, cut, **OPTS)
    monkeypatch.setattr(RunFolder, "write_snapshot", write)
    assert len(list((cut / "snapshots").glob("snap_*.npz"))) == 3
    out = run_heating_sequence(sc, cut, resume=True, **OPTS).path
    got = frames(out)
    assert all(np.array_equal(a, b) for a, b in zip(ref, got, strict=True))
    man = json.loads((out / "manifest.json").read_text())
    assert man["kind"] == "sequence" and man["finished"]


def test_sequence_frames_keep_the_order_component_as_float32(tmp_path):
    out = run_heating_sequence(load_scenario(FILM), tmp_path / "seq", **OPTS).path
    with np.load(out / "snapshots" / "snap_000000.npz") as z:
        assert z["m_axis"].dtype == np.float32 and z["m_axis"].shape == (8, 8)
        assert "spins" not in z.files and "positions_nm" not in z.files
    with np.load(out / "snapshots" / "lattice.npz") as z:  # the lattice once per folder
        assert list(z["cells"]) == [8, 8] and str(z["shape"]) == "square"
    pos = load_snapshot(out / "snapshots" / "snap_000000.npz")["positions_nm"]
    assert pos[2, 3].tolist() == pytest.approx([3 * 0.3, 2 * 0.3])  # (j a, i a)


def test_the_sequence_heats_and_the_movie_reads_it(tmp_path):
    sc = load_scenario(FILM)
    out = run_heating_sequence(sc, tmp_path / "seq", **OPTS).path
    # well below Tc (about 2.5 K here) the film stays ordered; far above it has lost its order
    # (common practice: the ordered phase of an easy-axis film sits below Tc)
    m = [abs(f[..., 2].mean()) for f in frames(out)]
    assert min(m[:2]) > 0.8 and max(m[-2:]) < 0.6
    info = write_movie(out, out / "movie.gif", fps=4, gif=True)
    assert info.n_frames == 6
