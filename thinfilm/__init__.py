"""thinfilm: thermal fluctuations of magnetic order in 2D films and monolayers.

A few lines do what the command line does (run from the repository folder; the same lines
work in a notebook cell)::

    import thinfilm

    if __name__ == "__main__":  # a sweep's worker processes import this script: guard the work
        sc = thinfilm.load_scenario("scenarios/monolayer_sweep.yaml")
        out = thinfilm.run(sc, "outputs/my-sweep", overwrite=True)  # makes the folder
        thinfilm.plot_run(out)                                  # PNG figures in out/plots
        thinfilm.write_movie(out, out / "sweep_movie.mp4")      # one frame per temperature
        print(open(out / "tc.json").read())

``thinfilm.plan(sc, "outputs/my-plan", resolution="30 nm", exposure="10 ms")`` writes a
heating plan (:func:`thinfilm.api.plan`); ``thinfilm.plan`` is also the package of its parts.
"""

import os

# Idle kernel threads sleep instead of spinning (libgomp's OMP_WAIT_POLICY, read when the first
# parallel kernel loads the OpenMP runtime; a value already in the environment wins). The
# dipolar LLG step alternates numba kernels with FFTW's own threads, and OpenMP threads spinning
# between kernels took the cores the FFTs needed: on 2 cores a 512^2 step fell from 30 to 13 ms
# (benchmarks/dipolar_rate.py); the local-only and Monte Carlo rates are unchanged.
os.environ.setdefault("OMP_WAIT_POLICY", "PASSIVE")

import thinfilm.plan as _plan_package  # noqa: E402
from thinfilm import analysis  # noqa: E402
from thinfilm._version import __version__  # noqa: F401 (thinfilm.__version__)
from thinfilm.api import plan as _plan_function  # noqa: E402
from thinfilm.api import plot_run, run
from thinfilm.demo_pipeline import demo
from thinfilm.engines.montecarlo import MonteCarlo
from thinfilm.engines.stochastic_llg import LLGSimulation
from thinfilm.input.errors import (
    InputError,
    ScenarioError,
    StabilityError,
    ThinFilmError,
    ThinFilmWarning,
)
from thinfilm.input.scenario import Scenario, load_scenario
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model, build_model
from thinfilm.render import plot_sweep, plot_timeseries, write_movie


class _CallablePackage(type(_plan_package)):
    """``thinfilm.plan`` is both the package of the heating plan's modules and, called, the
    notebook entry point :func:`thinfilm.api.plan` (the README's notebook API)."""

    def __call__(self, source, out_dir, **options):
        return _plan_function(source, out_dir, **options)


_plan_package.__class__ = _CallablePackage
plan = _plan_package

__all__ = [
    "load_scenario",
    "Scenario",
    "build_model",
    "Model",
    "Lattice",
    "LLGSimulation",
    "MonteCarlo",
    "run",
    "plan",
    "demo",
    "plot_run",
    "plot_sweep",
    "plot_timeseries",
    "write_movie",
    "analysis",
    "ThinFilmError",
    "ScenarioError",
    "InputError",
    "StabilityError",
    "ThinFilmWarning",
]
