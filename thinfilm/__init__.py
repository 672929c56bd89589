"""thinfilm: thermal fluctuations of magnetic order in 2D films and monolayers.

Five lines do what the command line does::

    import thinfilm
    sc = thinfilm.load_scenario("scenarios/monolayer_sweep.yaml")
    thinfilm.run(sc, "outputs/my-sweep")          # sweep or time-resolved run
    thinfilm.plot_run("outputs/my-sweep")         # PNG figures
    thinfilm.write_movie("outputs/my-run", "outputs/my-run/movie.mp4")
"""

import os

# Idle kernel threads sleep instead of spinning (libgomp's OMP_WAIT_POLICY, read when the first
# parallel kernel loads the OpenMP runtime; a value already in the environment wins). The
# dipolar LLG step alternates numba kernels with FFTW's own threads, and OpenMP threads spinning
# between kernels took the cores the FFTs needed: on 2 cores a 512^2 step fell from 30 to 13 ms
# (benchmarks/dipolar_rate.py); the local-only and Monte Carlo rates are unchanged.
os.environ.setdefault("OMP_WAIT_POLICY", "PASSIVE")

from thinfilm import analysis  # noqa: E402
from thinfilm._version import __version__  # noqa: F401 (thinfilm.__version__)
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

__all__ = [
    "load_scenario",
    "Scenario",
    "build_model",
    "Model",
    "Lattice",
    "LLGSimulation",
    "MonteCarlo",
    "run",
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
