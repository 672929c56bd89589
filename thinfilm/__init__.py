"""thinfilm: thermal fluctuations of magnetic order in 2D films and monolayers.

Five lines do what the command line does::

    import thinfilm
    sc = thinfilm.load_scenario("scenarios/monolayer_sweep.yaml")
    thinfilm.run(sc, "outputs/my-sweep")          # sweep or time-resolved run
    thinfilm.plot_run("outputs/my-sweep")         # PNG figures
    thinfilm.write_movie("outputs/my-run", "outputs/my-run/movie.mp4")
"""

from thinfilm import analysis
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
