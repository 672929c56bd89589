"""High-level entry points used by the CLI and by notebooks: run, plot_run, plan."""

from pathlib import Path

from thinfilm.input.errors import InputError, option
from thinfilm.input.scenario import Scenario, load_scenario

__all__ = ["run", "plot_run", "plan"]


def _scenario(source):
    return source if isinstance(source, Scenario) else load_scenario(source)


def _refuse_worker_import(name):
    """A sweep's worker processes import the user's script; work done at its top level would run
    again in every worker (and find the folder its parent is filling). Say how to guard it."""
    import multiprocessing

    if getattr(multiprocessing.current_process(), "_inheriting", False):
        raise InputError(
            f"thinfilm.{name}() was called while a worker process was importing the script that "
            f"calls it: a sweep's workers import that script, so its top-level code runs again "
            f"in each of them. Put the calls under 'if __name__ == \"__main__\":' (see the "
            f"example in help(thinfilm)); a notebook needs no guard")


def run(source, out_dir, *, resume=False, overwrite=False, workers=None, cluster=None,
        progress=True):
    """Run a scenario (path, dict or Scenario) into ``out_dir``; return the folder path.

    An equilibrium set runs as a sweep (:mod:`thinfilm.runs.sweep`; several disorder
    realisations: :mod:`thinfilm.runs.ensemble_sweep`), otherwise as one time-resolved
    stochastic LLG run (:mod:`thinfilm.runs.time_resolved`). See :mod:`thinfilm.input.modes`.
    """
    _refuse_worker_import("run")
    if not hasattr(source, "is_sweep"):
        from thinfilm.input.coarse_spec import is_coarse

        if is_coarse(source):  # a coarse film (stochastic LLB on nm cells)
            from thinfilm.runs.coarse_run import run_coarse

            run_coarse(source, out_dir, resume=resume, overwrite=overwrite, progress=progress)
            plot_run(out_dir)
            return Path(out_dir)
    sc = _scenario(source)
    if resume and overwrite:
        raise InputError(f"{option('resume')} and {option('overwrite')} exclude each other: "
                         f"continue the run in the folder, or delete it and start afresh")
    from thinfilm.runs.folder import refresh_file_list
    from thinfilm.runs.lifecycle import hold

    with hold(out_dir):  # one writer for the whole run, its figures and its movie
        _run(sc, out_dir, resume, overwrite, workers, cluster, progress)
        refresh_file_list(out_dir)
    return Path(out_dir)


def _run(sc, out_dir, resume, overwrite, workers, cluster, progress):
    if sc.is_sweep:
        from thinfilm.runs.sweep import run_sweep

        ensemble = sc.disorder is not None and sc.disorder.realisations > 1
        if ensemble:
            from thinfilm.runs.ensemble_sweep import run_ensemble_sweep

            run_ensemble_sweep(sc, out_dir, resume=resume, overwrite=overwrite, workers=workers,
                               cluster=cluster or sc.sweep.cluster, progress=progress)
        else:
            run_sweep(sc, out_dir, resume=resume, overwrite=overwrite, workers=workers,
                      cluster=cluster or sc.sweep.cluster, progress=progress)
        from thinfilm.render.plots import plot_sweep

        plot_sweep(out_dir)
        if sc.movie:  # one frame per temperature (largest size): the pattern across the sweep
            from thinfilm.render.movie import write_movie

            frames = Path(out_dir) / "realisations" / "r00" if ensemble else out_dir
            movie_name = "sweep_movie.gif" if sc.movie["gif"] else "sweep_movie.mp4"
            write_movie(frames, Path(out_dir) / movie_name,
                        fps=max(1, min(sc.movie["fps"], 4)), colour=sc.movie["colour"],
                        gif=sc.movie["gif"], source="sweep",
                        instrument=True if sc.movie["instrument"] and sc.instrument else None)
    else:
        from thinfilm.runs.time_resolved import run_dynamics

        run_dynamics(sc, out_dir, resume=resume, overwrite=overwrite, progress=progress)
        if sc.movie:
            from thinfilm.render.movie import write_movie

            write_movie(out_dir, Path(out_dir) / ("movie.gif" if sc.movie["gif"] else "movie.mp4"),
                        fps=sc.movie["fps"], colour=sc.movie["colour"], gif=sc.movie["gif"],
                        instrument=True if sc.movie["instrument"] and sc.instrument else None)


def plot_run(run_dir):
    """Write the PNG figures of a run folder (sweep curves or a dynamics time series)."""
    import json

    run_dir = Path(run_dir)
    man = run_dir / "manifest.json"
    if not man.is_file():
        raise InputError(f"{run_dir}: not a run folder (no manifest.json); "
                         f"give a folder written by 'thinfilm run' or 'thinfilm demo'")
    kind = json.loads(man.read_text()).get("kind")
    from thinfilm.render import plots
    from thinfilm.runs.folder import refresh_file_list
    from thinfilm.runs.lifecycle import hold

    with hold(run_dir):  # not while a run writes the folder; the manifest lists the figures
        if kind == "sweep":
            paths = plots.plot_sweep(run_dir)
        elif kind == "coarse-film":
            from thinfilm.render.coarse_plots import plot_coarse

            paths = [plot_coarse(run_dir), *plots.plot_timeseries(run_dir)]
        else:
            paths = plots.plot_timeseries(run_dir)
        refresh_file_list(run_dir)
    return paths


def plan(source, out_dir, **options):
    """Heating plan of a scenario into ``out_dir`` (see :func:`thinfilm.plan.make_plan`).

    A sweep that the plan needs is run with :func:`run`, so it gets its figures (and movie).
    """
    from thinfilm.plan import make_plan

    _refuse_worker_import("plan")
    return make_plan(_scenario(source), out_dir, runner=run, **options)
