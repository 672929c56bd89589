"""Coarse-film scenario and run folder: layout, resume, refusal, bad input."""

import json

import numpy as np
import pytest

from thinfilm.api import run
from thinfilm.input.coarse_spec import load_coarse
from thinfilm.input.errors import InputError, ScenarioError
from thinfilm.input.parameter_table import ParameterTable
from thinfilm.runs.coarse_run import run_coarse
from thinfilm.runs.folder import load_snapshot


def _table(tmp_path):
    T = np.array([10.0, 100.0, 150.0, 200.0, 250.0])
    me = np.array([0.98, 0.85, 0.75, 0.6, 0.3])
    tab = ParameterTable(T, me, 1e-3 * (1 + T / 50), 0.03 + 0 * T, 5e6 * me**3, 3e-12 * me**1.6,
                         ms0_A_per_m=6e5, tc_K=260.0, thickness_nm=0.5, source="test table")
    p = tmp_path / "film.csv"
    tab.to_csv(p)
    return p


def _scenario(tmp_path, **over):
    sc = {"name": "t", "coarse_film": {"cells": [16, 16], "cell_size": "2 nm",
                                        "parameters": str(_table(tmp_path)),
                                        "dipolar": True, "coupling": 1.0,
                                        "grains": {"size": "8 nm", "anisotropy_spread": 0.1}},
          "temperatures": ["50 K", "100 K"], "hold": "0.3 ps", "snapshots": 2, "seed": 4}
    sc.update(over)
    return sc


def test_run_folder_layout_and_bitwise_resume(tmp_path, monkeypatch):
    sc = _scenario(tmp_path)
    out = run(sc, tmp_path / "a", progress=False)
    man = json.loads((out / "manifest.json").read_text())
    assert man["kind"] == "coarse-film" and man["finished"]
    assert len(man["temperatures"]) == 2
    for name in ("timeseries.csv", "temperatures.csv", "parameters.csv", "checkpoint.npz",
                 "snapshots/final.npz", "plots/temperatures.png"):
        assert (out / name).is_file(), name
    snap = load_snapshot(out / "snapshots" / "final.npz")
    assert snap["spins"].shape == (16, 16, 3)
    # a run interrupted after its first temperature, resumed, gives the same final state bit
    # for bit (a resume with another temperature list is refused: another scenario)
    from thinfilm.engines.llb import CoarseFilm

    real, seen = CoarseFilm.parameters, []

    def stop_at_second(self, T):
        seen.append(T)
        if len(seen) == 2:
            raise KeyboardInterrupt
        return real(self, T)

    monkeypatch.setattr(CoarseFilm, "parameters", stop_at_second)
    with pytest.raises(KeyboardInterrupt):
        run_coarse(sc, tmp_path / "b", progress=False)
    monkeypatch.setattr(CoarseFilm, "parameters", real)
    with pytest.raises(InputError, match="temperatures_K"):
        run_coarse(dict(sc, temperatures=["50 K", "120 K"]), tmp_path / "b", resume=True,
                   progress=False)
    run_coarse(sc, tmp_path / "b", resume=True, progress=False)
    a = load_snapshot(out / "snapshots" / "final.npz")["spins"]
    b = load_snapshot(tmp_path / "b" / "snapshots" / "final.npz")["spins"]
    assert np.array_equal(a, b)


def test_schedule_stops_where_the_cell_is_refused(tmp_path):
    # 1 nm cells near Tc: the cell renormalisation exceeds its limit, the run stops there
    sc = _scenario(tmp_path, temperatures=["10 K", "250 K"])
    sc["coarse_film"] = dict(sc["coarse_film"], cell_size="1 nm", dipolar=False)
    out = run_coarse(sc, tmp_path / "c", progress=False).path
    man = json.loads((out / "manifest.json").read_text())
    assert not man["finished"] and man["stopped"]["temperature_K"] == 250.0
    assert "correlation length" in man["stopped"]["reason"]


def test_bad_input_names_key_and_value(tmp_path):
    sc = _scenario(tmp_path, temperatures=["400 K"])
    with pytest.raises(ScenarioError, match="temperatures.*outside the parameter table"):
        load_coarse(sc)
    sc = _scenario(tmp_path)
    sc["coarse_film"] = dict(sc["coarse_film"], cells=[16])
    with pytest.raises(ScenarioError, match="coarse_film.cells"):
        load_coarse(sc)


def test_continuum_parameters_on_nm_cells_warn_of_double_counting():
    # the old path: room-temperature continuum parameters on 4 nm cells at 300 K
    import warnings

    from thinfilm.input.errors import ThinFilmWarning
    from thinfilm.input.scenario import load_scenario

    sc = {"lattice": {"shape": "square", "cells": [8, 8], "spacing": "4 nm"},
          "material": {"stiffness": "10 pJ/m", "anisotropy_density": "0.9 MJ/m^3",
                       "magnetisation": "1.1 MA/m", "thickness": "0.8 nm"},
          "temperature": "300 K"}
    with pytest.warns(ThinFilmWarning, match="counted twice.*cell size"):
        load_scenario(sc)
    # atomic spacing or T = 0: no warning
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        load_scenario(dict(sc, temperature="0 K"))
        load_scenario(dict(sc, lattice=dict(sc["lattice"], spacing="0.3 nm")))


def test_resume_in_the_middle_of_a_temperature(tmp_path, monkeypatch):
    # checkpoint after every chunk, interrupt inside the second temperature, resume: the final
    # state equals the uninterrupted run's bit for bit (noise keyed by the step number)
    import thinfilm.runs.coarse_run as cr
    from thinfilm.engines.llb import CoarseFilm

    sc = _scenario(tmp_path)
    sc["coarse_film"] = dict(sc["coarse_film"], dipolar=False)
    run_coarse(sc, tmp_path / "a", progress=False)
    monkeypatch.setattr(cr, "CHECKPOINT_EVERY_S", 0.0)
    real = CoarseFilm.advance
    calls = {"n": 0}

    def flaky(self, *a, **k):
        calls["n"] += 1
        if calls["n"] == 27:  # inside the second temperature (20 chunks per temperature)
            raise KeyboardInterrupt
        return real(self, *a, **k)

    monkeypatch.setattr(CoarseFilm, "advance", flaky)
    with pytest.raises(KeyboardInterrupt):
        run_coarse(sc, tmp_path / "b", progress=False)
    ck = np.load(tmp_path / "b" / "checkpoint.npz")
    assert int(ck["next_temperature"]) == 1 and int(ck["done_steps"]) > 0
    monkeypatch.setattr(CoarseFilm, "advance", real)
    run_coarse(sc, tmp_path / "b", resume=True, progress=False)
    a = load_snapshot(tmp_path / "a" / "snapshots" / "final.npz")["spins"]
    b = load_snapshot(tmp_path / "b" / "snapshots" / "final.npz")["spins"]
    assert np.array_equal(a, b)
    ta = (tmp_path / "a" / "temperatures.csv").read_text()
    assert ta == (tmp_path / "b" / "temperatures.csv").read_text()
