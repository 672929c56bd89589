"""Every scenario file in scenarios/ loads and runs a tiny version of itself."""

from dataclasses import replace
from pathlib import Path

import pytest

from thinfilm.input.scenario import load_scenario

SCENARIOS = sorted((Path(__file__).parent.parent / "scenarios").glob("*.yaml"))
pytestmark = pytest.mark.filterwarnings("ignore::thinfilm.input.errors.ThinFilmWarning")


def _tiny(sc):
    """Shrink lattice, sampling and sweep so the scenario runs in about a second."""
    lat = sc.lattice
    n = 8  # even: suits every periodic shape
    d = sc.dynamics
    dyn = replace(d, sweeps_warmup=5, sweeps_samples=40, sample_every=1,
                  duration_s=20 * d.time_step_s, warmup_s=0.0)
    changes = {"lattice": replace(lat, nx=min(lat.nx, n), ny=min(lat.ny, n)), "dynamics": dyn,
               "record_every_s": None, "snapshot_every_s": None, "movie": None}
    if sc.sweep:
        sizes = (min(sc.sweep.sizes), ) if sc.sweep.sizes else None
        if sizes:
            sizes = (min(sizes[0], n),)
        temps = sc.sweep.temperatures_K
        temps = (temps[0], temps[len(temps) // 2], temps[-1])
        changes["sweep"] = replace(sc.sweep, sizes=sizes, temperatures_K=temps, refine=None,
                                   snapshots=2, cluster=None)
    return sc.with_changes(**changes)


def test_there_are_scenarios():
    assert SCENARIOS, "scenarios/ holds no .yaml files"


@pytest.mark.parametrize("path", SCENARIOS, ids=[p.name for p in SCENARIOS])
def test_scenario_loads_and_runs_a_few_steps(path, tmp_path):
    sc = load_scenario(path)
    assert sc.describe()["name"]
    tiny = _tiny(sc)
    if tiny.is_sweep:
        import json

        from thinfilm.runs.sweep import run_sweep

        out = run_sweep(tiny, tmp_path / "run", workers=1, progress=False)
        assert json.loads((out / "manifest.json").read_text())["finished"] is True
    else:
        from thinfilm.runs.time_resolved import run_dynamics

        folder = run_dynamics(tiny, tmp_path / "run", progress=False)
        assert (folder.path / "manifest.json").is_file()
