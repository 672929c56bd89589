"""The demo: sweep an invented monolayer through Tc, film its heating, plot, plan.

On top of the API: nothing in the package imports this module.
"""

import time
from pathlib import Path

from thinfilm.api import plan, run
from thinfilm.input.scenario import DEFAULT_SCENARIO, load_scenario
from thinfilm.render.movie import write_movie
from thinfilm.render.plots import plot_timeseries

__all__ = ["demo", "run_demo"]


def _heating_scenario(sc):
    """A time-resolved stochastic LLG heating ramp across the sweep's range, on 64 x 64 sites."""
    raw = dict(sc.raw)
    temps = sc.sweep.temperatures_K
    raw.update({
        "name": f"{sc.name}-heating",
        "lattice": dict(raw["lattice"], cells=[64, 64]),
        "temperature": f"{temps[0]} K",
        "dynamics": {"method": "llg", "damping": sc.dynamics.damping,
                     "timestep": f"{sc.dynamics.time_step_s * 1e15:g} fs", "duration": "20 ps",
                     "ramp": {"temperature": f"{temps[-1]} K"}},
        "record": {"every": "0.25 ps", "snapshots": "0.5 ps"},
    })
    for k in ("sizes", "sweep", "instrument", "analysis", "movie"):
        raw.pop(k, None)
    return load_scenario(raw)


def run_demo(out_dir, scenario_path, *, workers=None, progress=True):
    """Run the demo into ``out_dir``; return the folder path.

    1. Monte Carlo sweep of the scenario (observables.csv, tc.json, figures);
    2. a 20 ps stochastic LLG heating ramp on 64 x 64 sites with a movie (heating/);
    3. a heating plan for the scenario's instrument (plan.md).
    """
    out_dir = Path(out_dir)
    sc = load_scenario(scenario_path)
    print(f"[1/3] Monte Carlo sweep of {sc.name}: {len(sc.sweep.temperatures_K)} temperatures, "
          f"sizes {list(sc.sweep.sizes)}")
    run(sc, out_dir, workers=workers, progress=progress, overwrite=True)
    print("[2/3] stochastic LLG heating ramp with a movie")
    heat = _heating_scenario(sc)
    run(heat, out_dir / "heating", progress=progress, overwrite=True)
    write_movie(out_dir / "heating", out_dir / "heating" / "movie.mp4", fps=(sc.movie or {}).get("fps", 15))
    plot_timeseries(out_dir / "heating")
    print("[3/3] heating plan")
    ins = sc.instrument
    res = plan(sc, out_dir, resolution=f"{ins['resolution_nm']} nm" if "resolution_nm" in ins else None,
                    exposure=f"{ins['exposure_s']} s" if "exposure_s" in ins else None,
                    field_of_view=f"{ins['field_of_view_nm']} nm" if "field_of_view_nm" in ins else None,
                    reuse=True, progress=progress)
    print(res["summary_text"])
    return out_dir


def demo(out_dir=None, *, workers=None, progress=True):
    """Run the embedded demo (an invented film) into ``out_dir`` (default outputs/demo-<time>)."""
    if out_dir is None:
        out_dir = Path("outputs") / time.strftime("demo-%Y%m%d-%H%M%S")
    return run_demo(Path(out_dir), DEFAULT_SCENARIO, workers=workers, progress=progress)
