"""Disorder in a scenario: validated with the mode rules, run by the per-site engines, and
averaged over realisations."""

import copy
import json

import numpy as np
import pytest

from thinfilm.api import run
from thinfilm.input.errors import ScenarioError
from thinfilm.input.scenario import load_scenario
from thinfilm.runs.folder import read_csv_table

pytestmark = pytest.mark.filterwarnings("ignore::thinfilm.input.errors.ThinFilmWarning")

FILM = {
    "lattice": {"shape": "square", "cells": [8, 8], "spacing": "0.4 nm"},
    "material": {"moment": "1 muB", "exchange": "0.25 meV",
                 "anisotropy": {"constant": "0.1 meV", "axis": [0, 0, 1]}},
    "temperature": ["1.5 K", "2.5 K", "3.5 K"],
    "sizes": [6, 8],
    "dynamics": {"method": "monte-carlo", "sweeps": {"warmup": 20, "samples": 80}},
    "sweep": {"snapshots": 2},
    "initial": "up",
    "seed": 9,
}


def film(**disorder):
    d = copy.deepcopy(FILM)
    d["disorder"] = disorder
    return d


def test_a_disordered_set_uses_metropolis_moves_and_refuses_what_it_cannot_run():
    sc = load_scenario(film(vacancies=0.1))
    assert sc.disorder.vacancies == 0.1 and sc.dynamics.moves == ("metropolis",)
    d = film(vacancies=0.1)
    d["dynamics"]["moves"] = ["metropolis", "cluster"]
    with pytest.raises(ScenarioError, match=r"dynamics\.moves: cluster moves are not available"):
        load_scenario(d)
    d = film(vacancies=0.1)
    d["dynamics"] = {"method": "llg", "duration": "0.1 ps"}
    d["material"]["dipolar"] = True
    with pytest.raises(ScenarioError, match=r"disorder: the per-site .* no dipolar field"):
        load_scenario(d)
    with pytest.raises(ScenarioError, match=r"disorder\.grains\.size: must not exceed the film"):
        load_scenario(film(grains={"size": "50 nm"}))


def test_a_disorder_section_without_disorder_runs_the_perfect_film_bit_for_bit(tmp_path):
    # zero spreads: the uniform fast path runs, exactly as without the section (exact identity)
    a = run(FILM, tmp_path / "a", workers=1, progress=False)
    b = run(film(vacancies=0.0, anisotropy={"spread": 0.0}), tmp_path / "b", workers=1,
            progress=False)
    assert load_scenario(film(vacancies=0.0)).disorder is None
    assert (a / "observables.csv").read_bytes() == (b / "observables.csv").read_bytes()


def test_realisations_are_averaged_and_tc_spread_is_reported(tmp_path):
    d = film(vacancies=0.1, realisations=2, grains={"size": "1.2 nm", "boundary_exchange": 0.5})
    out = run(d, tmp_path / "e", workers=1, progress=False)
    reals = [read_csv_table(out / "realisations" / f"r{k:02d}" / "observables.csv")
             for k in range(2)]
    avg = read_csv_table(out / "observables.csv")
    # the average is the mean of the realisations (definition of the disorder average)
    np.testing.assert_allclose(avg["m_abs"], (reals[0]["m_abs"] + reals[1]["m_abs"]) / 2)
    assert not np.array_equal(reals[0]["m_abs"], reals[1]["m_abs"])  # different disorder
    spread = read_csv_table(out / "ensemble.csv")["m_abs_spread"]
    np.testing.assert_allclose(spread, np.abs(reals[0]["m_abs"] - reals[1]["m_abs"]) / np.sqrt(2))
    tc = json.loads((out / "tc.json").read_text())
    assert len(tc["tc_realisations_K"]) == 2
    # one Tc in tc.json: the realisations' mean is a labelled cross-check, not a second value
    assert "tc_mean_K" not in tc
    good = [t for t in tc["tc_realisations_K"] if t is not None]
    if good:
        means = [c for c in tc["cross_checks"] if c["method"] == "realisation_mean"]
        assert len(means) == 1 and means[0]["tc_K"] == pytest.approx(np.mean(good))
    # grains: the pinning columns are filled; the expected fraction is the boundary-bond share
    assert np.all((avg["wall_on_boundary_expected"] > 0) & (avg["wall_on_boundary_expected"] < 1))


def test_a_run_with_vacancies_keeps_them_empty(tmp_path):
    d = copy.deepcopy(FILM) | {"temperature": "1 K", "disorder": {"vacancies": 0.2}}
    del d["sizes"], d["sweep"]
    d["dynamics"] = {"method": "llg", "duration": "0.05 ps"}
    out = run(d, tmp_path / "v", progress=False)
    s = np.load(out / "snapshots" / "final.npz")["spins"]
    norms = np.linalg.norm(s, axis=-1)
    empty = norms == 0
    assert 0 < empty.sum() < s.shape[0] * s.shape[1]  # some sites are vacancies
    # unit spins elsewhere, to float32 rounding (snapshots keep 24-bit mantissas: 6e-8 each)
    np.testing.assert_allclose(norms[~empty], 1.0, atol=1e-6)
