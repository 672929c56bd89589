"""A scenario means one thing however it is spelled; keys that cannot act are input errors.

Every cell of the key x mode table (thinfilm.input.modes.KEY_MODES) is tested: the key loads
where it acts and is refused, naming the key and the mode, where it does not.
"""

import copy
import json

import pytest

from thinfilm.api import run
from thinfilm.input.errors import ScenarioError
from thinfilm.input.modes import KEY_MODES, MODES
from thinfilm.input.scenario import load_scenario
from thinfilm.runs.folder import read_csv_table

FILM = {
    "lattice": {"shape": "square", "cells": [8, 8], "spacing": "0.3 nm"},
    "material": {"moment": "1 muB", "exchange": "0.25 meV",
                 "anisotropy": {"constant": "0.1 meV", "axis": [0, 0, 1]}},
    "initial": "up",
    "seed": 5,
}
# one scenario of each mode, with only keys that act in it
MODE_BASE = {
    "run": {"temperature": "2 K", "dynamics": {"method": "llg", "duration": "0.05 ps"}},
    "llg-set": {"temperature": ["2 K", "3 K"],
                "dynamics": {"method": "llg", "duration": "0.05 ps"}},
    "mc-set": {"temperature": ["2 K", "3 K"],
               "dynamics": {"method": "monte-carlo", "sweeps": {"warmup": 5, "samples": 20}}},
}
# a valid value for every key of the table
VALUES = {
    "sizes": [6, 8],
    "temperature.refine": "near-tc",
    "material.dipolar": True,
    "dynamics.duration": "0.05 ps",
    "dynamics.warmup": "0.01 ps",
    "dynamics.ramp": {"temperature": "3 K"},
    "dynamics.sweeps": {"warmup": 5, "samples": 20},
    "dynamics.sample_every": 2,
    "dynamics.moves": ["metropolis"],
    "dynamics.cluster_direction": "axis",
    "record": {"every": "0.01 ps"},
    "disorder.realisations": 2,
    "sweep": {"snapshots": 2},
    "analysis": {"level": 0.1},
    "instrument": {"resolution": "2 nm"},
}


def scenario(mode, key=None):
    d = copy.deepcopy(FILM) | copy.deepcopy(MODE_BASE[mode])
    if key is None:
        return d
    value = copy.deepcopy(VALUES[key])
    if key == "temperature.refine":
        d["temperature"] = {"start": "2 K", "stop": "3 K", "step": "0.5 K", "refine": value}
        return d
    node = d
    parts = key.split(".")
    for p in parts[:-1]:
        node = node.setdefault(p, {})
    node[parts[-1]] = value
    return d


def test_the_table_covers_every_key():
    assert set(VALUES) == set(KEY_MODES)


@pytest.mark.parametrize("mode", MODES)
def test_each_base_scenario_runs_as_its_mode(mode):
    assert load_scenario(scenario(mode)).mode == mode


CELLS = [(k, m) for k in KEY_MODES for m in MODES]


@pytest.mark.parametrize("key,mode", CELLS, ids=[f"{k}-{m}" for k, m in CELLS])
def test_key_acts_or_is_refused(key, mode):
    d = scenario(mode, key)
    acts = mode in KEY_MODES[key][0]
    if key == "sizes" and mode == "run":
        # sizes make a set: a 'run' with sizes is an llg-set (one meaning, however written)
        assert load_scenario(d).mode == "llg-set"
        return
    if key == "temperature.refine" and mode == "run":
        d["temperature"] = {"start": "2 K", "stop": "2 K", "step": "1 K", "refine": "near-tc"}
    if acts:
        sc = load_scenario(d)
        assert sc.mode == mode
    else:
        with pytest.raises(ScenarioError, match=rf"{key}: cannot take effect .* runs as"):
            load_scenario(d)


def test_instrument_in_a_run_acts_through_the_movie():
    d = scenario("run", "instrument") | {"movie": {"instrument": True}}
    assert load_scenario(d).instrument["resolution_nm"] == 2.0


def test_refine_needs_several_temperatures_in_a_set():
    d = scenario("mc-set")
    d["temperature"] = {"start": "2 K", "stop": "2 K", "step": "1 K", "refine": "near-tc"}
    with pytest.raises(ScenarioError, match="temperature.refine: refine: near-tc needs several"):
        load_scenario(d)


@pytest.mark.parametrize("spelling",
                         ["2 K", ["2 K"], {"start": "2 K", "stop": "2 K", "step": "1 K"}])
def test_one_temperature_means_the_same_however_written(spelling):
    d = scenario("mc-set") | {"temperature": spelling, "sizes": [6, 8]}
    sc = load_scenario(d)
    assert sc.mode == "mc-set"
    assert sc.sweep.temperatures_K == (2.0,)
    assert sc.sweep.sizes == (6, 8)


# few samples, on purpose
@pytest.mark.filterwarnings("ignore::thinfilm.input.errors.ThinFilmWarning")
def test_monte_carlo_at_one_temperature_is_a_finite_size_set(tmp_path):
    d = scenario("mc-set") | {"temperature": "2 K", "sizes": [6, 8], "sweep": {"snapshots": 2}}
    out = run(d, tmp_path / "set", workers=1, progress=False)
    tab = read_csv_table(out / "observables.csv")
    assert sorted(tab["size"].tolist()) == [6, 8]  # one row per size
    assert json.loads((out / "tc.json").read_text())["tc_K"] is None  # no Tc from one temperature
    man = json.loads((out / "manifest.json").read_text())
    assert man["method"] == "monte-carlo" and man["scenario"]["mode"] == "mc-set"


def test_flags_must_be_booleans():
    d = scenario("run") | {"movie": {"gif": "no"}}
    with pytest.raises(ScenarioError, match=r"movie\.gif: must be true or false, got 'no'"):
        load_scenario(d)


def test_dipolar_and_shape_anisotropy_count_the_same_energy_twice():
    d = scenario("run")
    d["material"] = {"stiffness": "10 pJ/m", "magnetisation": "1 MA/m", "thickness": "0.5 nm",
                     "anisotropy_density": "1 MJ/m^3", "shape_anisotropy": True, "dipolar": True}
    with pytest.raises(ScenarioError, match=r"material\.shape_anisotropy: .*count it twice"):
        load_scenario(d)
    d["material"]["shape_anisotropy"] = False
    sc = load_scenario(d)
    assert sc.material.dipolar and sc.describe()["material"]["dipolar"]


def test_a_dipolar_run_goes_through_the_dipolar_engine(tmp_path):
    from thinfilm.engines.stochastic_llg import LLGSimulation
    from thinfilm.model.parameters import build_model

    d = scenario("run", "material.dipolar")
    model = build_model(load_scenario(d))
    assert model.dipolar and LLGSimulation(model, temperature_K=1.0, damping=0.1,
                                           time_step_s=1e-15).dipolar is not None
    out = run(d, tmp_path / "dip", progress=False)
    assert (out / "snapshots" / "final.npz").is_file()


def test_cluster_moves_default_on_and_refused_where_not_exact():
    sc = load_scenario(scenario("mc-set"))
    assert sc.dynamics.moves == ("metropolis", "cluster")  # exact for every easy axis / plane
    d = scenario("mc-set", "dynamics.cluster_direction")
    d["dynamics"]["cluster_direction"] = "sphere"  # K != 0: random reflections change -K (S.n)^2
    with pytest.raises(ScenarioError, match=r"dynamics\.cluster_direction: sphere: .*anisotropy"):
        load_scenario(d)
    d["dynamics"]["moves"] = ["cluster"]
    with pytest.raises(ScenarioError, match=r"dynamics\.moves: .*not ergodic"):
        load_scenario(d)


def test_the_recommended_time_step_counts_the_dipolar_field():
    from dataclasses import replace

    from thinfilm.engines.stochastic_llg import stable_time_step
    from thinfilm.model.parameters import build_model

    d = scenario("run")
    d["material"] = dict(d["material"], moment="40 muB")  # strong dipolar field (0.3 T scale)
    model = build_model(load_scenario(d))
    # at T = 0 only the precession limit counts: a larger field bound gives a smaller step
    assert (stable_time_step(replace(model, dipolar=True), 0.0, 0.1)
            < stable_time_step(model, 0.0, 0.1))
