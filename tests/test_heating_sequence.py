"""Quasi-static heating sequence: frames at rising temperatures, resumable bit for bit."""

import json

import numpy as np

from thinfilm.input.scenario import load_scenario
from thinfilm.render.movie import write_movie
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
    return [np.load(p)["spins"] for p in sorted((folder / "snapshots").glob("snap_*.npz"))]


def test_sequence_resumed_after_an_interruption_equals_an_uninterrupted_one(tmp_path):
    sc = load_scenario(FILM)
    ref = frames(run_heating_sequence(sc, tmp_path / "ref", **OPTS).path)
    assert len(ref) == 6
    cut = tmp_path / "cut"
    run_heating_sequence(sc, cut, **OPTS)
    for p in sorted((cut / "snapshots").glob("snap_*.npz"))[3:]:
        p.unlink()  # as if stopped after the third frame
    out = run_heating_sequence(sc, cut, resume=True, **OPTS).path
    got = frames(out)
    assert all(np.array_equal(a, b) for a, b in zip(ref, got, strict=True))
    man = json.loads((out / "manifest.json").read_text())
    assert man["kind"] == "sequence" and man["finished"]


def test_the_sequence_heats_and_the_movie_reads_it(tmp_path):
    sc = load_scenario(FILM)
    out = run_heating_sequence(sc, tmp_path / "seq", **OPTS).path
    # well below Tc (about 2.5 K here) the film stays ordered; far above it has lost its order
    # (common practice: the ordered phase of an easy-axis film sits below Tc)
    m = [abs(f[..., 2].mean()) for f in frames(out)]
    assert min(m[:2]) > 0.8 and max(m[-2:]) < 0.6
    info = write_movie(out, out / "movie.gif", fps=4, gif=True)
    assert info.n_frames == 6
