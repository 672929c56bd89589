"""thinfilm: thermal fluctuations of magnetic order in 2D films and monolayers.

Five lines do what the command line does::

    import thinfilm
    sc = thinfilm.load_scenario("scenarios/monolayer_sweep.yaml")
    thinfilm.run(sc, "outputs/my-sweep")          # sweep or time-resolved run
    thinfilm.plot_run("outputs/my-sweep")         # PNG figures
    thinfilm.write_movie("outputs/my-run", "outputs/my-run/movie.mp4")
"""

__version__ = "0.1.0"

from . import analysis  # noqa: E402
from .api import demo, plot_run, run  # noqa: E402
from .dynamics import LLGSimulation  # noqa: E402
from .errors import InputError, ScenarioError, StabilityError, ThinFilmError, ThinFilmWarning  # noqa: E402
from .lattice import Lattice  # noqa: E402
from .model import Model, build_model  # noqa: E402
from .montecarlo import MonteCarlo  # noqa: E402
from .render import plot_sweep, plot_timeseries, write_movie  # noqa: E402
from .scenario import Scenario, load_scenario  # noqa: E402

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
