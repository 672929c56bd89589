"""The demos: sweep an invented monolayer through Tc, film its heating, plot, plan; or heat
the domains of an invented dipolar film until they narrow and break up.

On top of the API: nothing in the package imports this module.
"""

import json
import math
import time
from pathlib import Path

import numpy as np

from thinfilm._io import write_csv, write_json
from thinfilm.analysis.chirality import wall_chirality
from thinfilm.analysis.patterns import bubble_statistics, stripe_orientation, stripe_period
from thinfilm.api import plan, run
from thinfilm.config import set_threads, threads
from thinfilm.input.errors import InputError
from thinfilm.input.scenario import DEFAULT_SCENARIO, load_scenario
from thinfilm.model.parameters import build_model
from thinfilm.render.movie import write_movie
from thinfilm.render.plots import plot_timeseries
from thinfilm.render.rundir import iter_snapshots, load_snapshot
from thinfilm.render.stripe_plot import STRIPE_COLUMNS, plot_stripes

__all__ = ["demo", "run_demo", "run_stripe_demo", "run_grains_demo", "stripe_table", "FILMS",
           "STRIPE_SCENARIO"]

STRIPE_SCENARIO = DEFAULT_SCENARIO.with_name("stripe_demo.yaml")
FILMS = ("monolayer", "stripes", "grains")
GRAINS_SCENARIO = DEFAULT_SCENARIO.with_name("grains_demo.yaml")


STEP_DURATION_PS = 200.0


def _step_scenario(sc, temperature_K):
    """Stochastic LLG on 64 x 64 sites after a temperature step: from the ordered state to
    ``temperature_K`` (just above Tc), 200 ps: the loss of order on the spins' own time scale
    (the total m_z relaxes only through the damping: precession about the easy axis keeps it)."""
    raw = dict(sc.raw)
    raw.update({
        "name": f"{sc.name}-step",
        "lattice": dict(raw["lattice"], cells=[64, 64]),
        "temperature": f"{temperature_K:.4g} K",
        "initial": "up",
        "dynamics": {"method": "llg", "damping": sc.dynamics.damping,
                     "timestep": f"{sc.dynamics.time_step_s * 1e15:g} fs",
                     "duration": f"{STEP_DURATION_PS:g} ps"},
        "record": {"every": "0.5 ps", "snapshots": "5 ps"},
    })
    for k in ("sizes", "sweep", "instrument", "analysis", "movie"):
        raw.pop(k, None)
    return load_scenario(raw)


def step_relaxation(step_dir, sweep_dir, size=64):
    """Relaxation of the step run's m_axis towards the sweep's equilibrium <|m|> at its
    temperature (size ``size``, interpolated in T): written to ``step_dir/relaxation.json``.

    The relaxation time is the integral of x(t) = (m(t) - m_eq) / (m(0) - m_eq) over the run
    (exactly tau for an exponential decay); when m has not reached m_eq by the end it is a lower
    bound, and ``reached`` is False.
    """
    from thinfilm.render.rundir import read_table

    ts = read_table(Path(step_dir) / "timeseries.csv")
    t, m = ts["time_ps"], ts["m_axis"]
    temp = float(ts["temperature_K"][-1])
    obs = read_table(Path(sweep_dir) / "observables.csv")
    sel = obs["size"] == size
    order = np.argsort(obs["temperature_K"][sel])
    m_eq = float(np.interp(temp, obs["temperature_K"][sel][order], obs["m_abs"][sel][order]))
    x = (m - m_eq) / (m[0] - m_eq)
    tau = float(np.sum(0.5 * (x[1:] + x[:-1]) * np.diff(t)))
    tail = m[len(m) * 3 // 4:]
    reached = bool(np.mean(np.abs(tail)) <= m_eq + 2 * np.std(tail))
    res = {"temperature_K": temp, "duration_ps": float(t[-1]), "m_axis_start": float(m[0]),
           "m_axis_end_mean_last_quarter": float(np.mean(tail)), "m_abs_equilibrium": m_eq,
           "equilibrium_from": f"observables.csv, size {size}, interpolated at {temp:.4g} K",
           "relaxation_time_ps": tau, "reached": reached,
           "relaxation_time_is": "integral of (m - m_eq)/(m0 - m_eq) dt" +
           ("" if reached else ": a lower bound, m has not reached m_eq")}
    write_json(Path(step_dir) / "relaxation.json", res)
    return res
def _tc_or_middle(sc, out_dir):
    """The sweep's Tc; when it has none, the middle of the range, and the reason is printed."""
    tc = json.loads((out_dir / "tc.json").read_text())
    if tc.get("tc_K") is not None:
        return float(tc["tc_K"])
    mid = float(np.median(sc.sweep.temperatures_K))
    print(f"  no Tc from the sweep ({tc.get('message') or 'no estimate'}); the demo continues "
          f"about the middle of the range, {mid:g} K, in place of Tc")
    return mid


def _sequence_temperatures(sc, tc_K, n=10):
    """Movie temperatures: n between 0.8 Tc and 1.1 Tc (the sweep's Tc), inside its range."""
    temps = sc.sweep.temperatures_K
    lo, hi = max(temps[0], 0.8 * tc_K), min(temps[-1], 1.1 * tc_K)
    return [float(x) for x in np.round(np.linspace(lo, hi, n), 2)]


def run_demo(out_dir, scenario_path, *, workers=None, progress=True):
    """Run the monolayer demo into ``out_dir``; return the folder path.

    1. Monte Carlo sweep (Metropolis + cluster moves) through Tc: observables.csv, tc.json,
       figures;
    2. the main movie (``heating_sequence/movie.mp4``): a quasi-static heating sequence of
       equilibrium states on 512 x 512 sites, each temperature continued from the previous one;
    3. a stochastic LLG movie of the break-up after a temperature step (``step/movie.mp4``);
    4. a heating plan for each of the scenario's instruments (``plan-<name>.md``), with the
       correlation length extrapolated beyond the lattice to the instruments' resolution.
    """
    from thinfilm.runs.heating_sequence import run_heating_sequence

    out_dir = Path(out_dir)
    sc = load_scenario(scenario_path)
    print(f"[1/4] Monte Carlo sweep of {sc.name}: {len(sc.sweep.temperatures_K)} temperatures, "
          f"sizes {list(sc.sweep.sizes)}")
    run(sc, out_dir, workers=workers, progress=progress, overwrite=True)
    tc = _tc_or_middle(sc, out_dir)
    seq_temps = _sequence_temperatures(sc, tc)
    print(f"[2/4] quasi-static heating sequence on 512 x 512 sites, {seq_temps[0]:g}-"
          f"{seq_temps[-1]:g} K, with a movie")
    seq = run_heating_sequence(sc, out_dir / "heating_sequence", size=512,
                               temperatures_K=seq_temps, frames=3, between=4, warmup=12,
                               overwrite=True, progress=progress)
    write_movie(seq.path, seq.path / "movie.mp4", fps=4)
    _print_sampling(seq.path)
    print(f"[3/4] stochastic LLG after a step to {1.03 * tc:.3g} K (1.03 Tc), with a movie")
    step = _step_scenario(sc, 1.03 * tc)
    run(step, out_dir / "step", progress=progress, overwrite=True)
    write_movie(out_dir / "step", out_dir / "step" / "movie.mp4",
                fps=(sc.movie or {}).get("fps", 15))
    plot_timeseries(out_dir / "step")
    rel = step_relaxation(out_dir / "step", out_dir)
    print(f"      m_z {rel['m_axis_start']:.2f} -> {rel['m_axis_end_mean_last_quarter']:.2f} "
          f"(mean of the last quarter) against the equilibrium <|m|> = "
          f"{rel['m_abs_equilibrium']:.2f} of the 64 x 64 sweep; relaxation time "
          f"{'' if rel['reached'] else '>= '}{rel['relaxation_time_ps']:.2g} ps "
          f"({'reached' if rel['reached'] else 'not reached within'} {rel['duration_ps']:g} ps)")
    names = [i.get("name") for i in sc.instruments]
    print(f"[4/4] heating plans for {', '.join(n or 'the instrument' for n in names)}")
    for name in names:
        res = plan(sc, out_dir, reuse=True, progress=progress, instrument=name)
        print(res["summary_text"])
    return out_dir


def _stage_scenario(sc, stage, drop, **changes):
    """One stage of the stripe scenario as a scenario of its own: ``drop`` the named dynamics
    keys, set the dynamics keys ``changes`` (and ``initial`` when given); no movie."""
    raw = dict(sc.raw)
    dyn = {k: v for k, v in raw["dynamics"].items() if k not in drop}
    if "initial" in changes:
        raw["initial"] = changes.pop("initial")
    dyn.update(changes)
    raw.update({"name": f"{sc.name}-{stage}", "dynamics": dyn})
    raw.pop("movie", None)
    return load_scenario(raw)


def stripe_table(run_dir, lattice, *, time_offset_ps=0.0):
    """Stripe period, stripe order, bubble count and magnetisation of every snapshot of a run.

    Returns ``(columns, rows)`` with the columns of :data:`STRIPE_COLUMNS` (units in the names
    or in that mapping); period and order are NaN for a uniform snapshot. The wall type and
    sense are the Neel and Bloch indices of
    :func:`thinfilm.analysis.chirality.wall_chirality` on the index grid (exact derivatives
    on the square lattice; on the triangular and honeycomb grids the rows are offset, so the
    indices are approximate there).
    """
    geo = {"positions_nm": lattice.positions_nm, "box_nm": lattice.box_nm,
           "period": lattice.period}
    rows = []
    for p in iter_snapshots(run_dir, source="snapshots"):
        fr = load_snapshot(p)
        s = fr["spins"]
        f = s[..., 2]
        try:
            per = stripe_period(f, **geo)
            lam, lam_mean = per["period_nm"], per["mean_period_nm"]
            q = stripe_orientation(f, **geo)["order"]
            nb = bubble_statistics(f, lattice.site_area_nm2, positions_nm=lattice.positions_nm,
                                   box_nm=lattice.box_nm, neighbours=lattice.neighbours)["count"]
        except InputError:  # uniform: no pattern
            lam = lam_mean = q = nb = math.nan
        m = s.reshape(-1, 3).mean(axis=0)
        ch = wall_chirality(s, periodic=lattice.periodic)
        rows.append((fr.get("time_ps", math.nan) + time_offset_ps,
                     fr.get("temperature_K", math.nan),
                     lam, lam_mean, q, nb, float(np.abs(f).mean()), float(math.hypot(m[0], m[1])),
                     ch["neel_index"], ch["bloch_index"]))
    return tuple(STRIPE_COLUMNS), rows


def _movie_frames(stages, start=None):
    """Frames of several run folders in order, with the time running on across them; the very
    first frame (the initial state, before any dynamics) is labelled ``start`` and carries no
    temperature (it was made, not thermalised)."""
    first = True
    for folder, offset_ps, note in stages:
        for p in iter_snapshots(folder, source="snapshots"):
            fr = load_snapshot(p)
            fr["time_ps"] = fr.get("time_ps", 0.0) + offset_ps
            fr["label"] = note
            if first and start:
                fr["label"] = start
                fr.pop("temperature_K", None)
            first = False
            yield fr


def run_stripe_demo(out_dir, scenario_path=STRIPE_SCENARIO, *, n_threads=None, progress=True):
    """Domains of an invented dipolar film: settle at the start temperature, then heat them
    until they narrow and break up.

    1. relax/: the scenario's warm-up as a run with snapshots (the initial pattern, e.g. a
       demagnetised labyrinth, settles at the scenario's temperature);
    2. heating/: the scenario's linear temperature ramp, starting from the relaxed state;
    3. movie.mp4 of both stages, stripes_vs_temperature.csv (one row per heating snapshot)
       and plots/stripes_vs_temperature.png with plots/captions.md.

    ``n_threads`` kernel threads (default 1: safe on a shared machine, where two threads have
    run a small lattice 3.4 times slower than one; on an idle 2-core machine two threads run
    the 192 x 192 demo in 66 s against 87 s).
    """
    out_dir = Path(out_dir)
    sc = load_scenario(scenario_path)
    d = sc.dynamics
    if not d.warmup_s > 0 or d.ramp_temperature_K is None:
        raise InputError(f"{scenario_path}: the stripe demo needs dynamics.warmup (the "
                         f"relaxation) and dynamics.ramp.temperature (the heating)")
    before = threads()
    set_threads(n_threads or 1)
    try:
        relax_ps, ramp_ps = d.warmup_s * 1e12, d.duration_s * 1e12
        print(f"[1/3] {sc.name}: the {sc.initial} start settles at {sc.temperature_K:g} K "
              f"({relax_ps:g} ps of stochastic LLG with the dipolar field)")
        # the warm-up of the scenario, recorded: same temperature, no ramp
        relax = _stage_scenario(sc, "relax", ("warmup", "ramp"), duration=f"{relax_ps!r} ps")
        run(relax, out_dir / "relax", progress=progress, overwrite=True)
        print(f"[2/3] heating ramp {sc.temperature_K:g} K -> {d.ramp_temperature_K:g} K over "
              f"{ramp_ps:g} ps")
        heat = _stage_scenario(sc, "heating", ("warmup",), initial=str(
            (out_dir / "relax" / "snapshots" / "final.npz").resolve()))
        run(heat, out_dir / "heating", progress=progress, overwrite=True)
    finally:
        set_threads(before)
    print("[3/3] stripe table, figure and movie")
    lattice = build_model(sc).lattice
    cols, rows = stripe_table(out_dir / "heating", lattice)
    write_csv(out_dir / "stripes_vs_temperature.csv", cols, rows)
    write_json(out_dir / "stripes_vs_temperature.columns.json", STRIPE_COLUMNS)
    plot_stripes(out_dir / "stripes_vs_temperature.csv", out_dir / "plots")
    plot_timeseries(out_dir / "heating", caption=(
        "The net in-plane magnetisation (m_⊥, here mostly m_y) grows during the ramp: the "
        "moments cant away from the perpendicular axis and their in-plane parts line up in one "
        "direction (an in-plane magnetisation of a thin film costs no dipolar energy), "
        "more so as heating lowers the effective anisotropy "
        "towards the reorientation into the plane."))
    fps = (sc.movie or {}).get("fps", 12)
    start = (f"start: {sc.initial_width_nm:g} nm labyrinth" if sc.initial == "labyrinth"
             else f"start: {sc.initial}")
    info = write_movie(_movie_frames([(out_dir / "relax", -relax_ps, "settling"),
                                      (out_dir / "heating", 0.0, "heating")], start=start),
                       out_dir / "movie.mp4", fps=fps, size=512)
    _print_stripe_summary(rows)
    print(f"movie: {info.path} ({info.n_frames} frames, {info.width} x {info.height} px)")
    return out_dir


def _print_stripe_summary(rows):
    arr = np.asarray(rows, dtype=float)
    col = {c: i for i, c in enumerate(STRIPE_COLUMNS)}
    print("   T (K)   period: peak, mean (nm)   stripe order   <|m_z|>   m_inplane")
    for r in arr[:: max(1, len(arr) // 8)]:
        print(f"  {r[col['temperature_K']]:6.2f}   {r[col['stripe_period_nm']]:9.3g}  "
              f"{r[col['mean_period_nm']]:9.3g}     {r[col['stripe_order']]:12.3f}   "
              f"{r[col['mean_abs_m_axis']]:7.3f}   {r[col['m_inplane']]:9.3f}")


# Metropolis sweeps of the grains heating sequence (the per-site engine has no cluster moves):
# the warm-up after each temperature step and the sweeps between two frames, chosen from the
# tau_int the sequence measures (its manifest's "sampling"; printed by the demo)
GRAINS_WARMUP, GRAINS_BETWEEN = 400, 100


def _print_sampling(seq_dir):
    """Print tau_int of the order parameter at each temperature of a heating sequence."""
    man = json.loads((Path(seq_dir) / "manifest.json").read_text())
    rows = man.get("sampling", [])
    if rows and all(r["tau_int_sweeps"] != r["tau_int_sweeps"] for r in rows):
        print(f"      tau_int of m: not determined ({rows[0]['sweeps_sampled']} sampled sweeps per "
              f"temperature; the frames say how many sweeps they had)")
        return
    parts = []
    for row in rows:
        tau = row["tau_int_sweeps"]
        parts.append(f"{row['temperature_K']:g} K: " + (f"{tau:.2g}" if tau == tau else "n/a"))
    print("      tau_int of m (sweeps) per temperature: " + "; ".join(parts))


def run_grains_demo(out_dir, *, workers=None, progress=True):
    """The polycrystalline demo: an invented film with grains, tilted axes, weak boundaries and
    vacancies (``grains_demo.yaml``); returns the folder.

    1. Monte Carlo set averaged over two disorder realisations (observables.csv, ensemble.csv,
       tc.json with the sample-to-sample spread of Tc, the pinning of walls at boundaries);
    2. a quasi-static heating sequence on 192 x 192 sites with its movie;
    3. a heating plan that includes the spread of Tc.
    """
    from thinfilm.runs.heating_sequence import run_heating_sequence

    out_dir = Path(out_dir)
    sc = load_scenario(GRAINS_SCENARIO)
    print(f"[1/3] Monte Carlo set of {sc.name} over {sc.disorder.realisations} disorder "
          f"realisations, sizes {list(sc.sweep.sizes)}")
    run(sc, out_dir, workers=workers, progress=progress, overwrite=True)
    tc_k = _tc_or_middle(sc, out_dir)
    temps = _sequence_temperatures(sc, tc_k, n=8)
    print(f"[2/3] heating sequence with grains on 192 x 192 sites, {temps[0]:g}-{temps[-1]:g} K")
    seq = run_heating_sequence(sc, out_dir / "heating_sequence", size=192, temperatures_K=temps,
                               frames=3, between=GRAINS_BETWEEN, warmup=GRAINS_WARMUP,
                               overwrite=True, progress=progress)
    write_movie(seq.path, seq.path / "movie.mp4", fps=4, grain_boundaries=True)
    _print_sampling(seq.path)
    print("[3/3] heating plan")
    res = plan(sc, out_dir, reuse=True, progress=progress)
    print(res["summary_text"])
    return out_dir


def demo(out_dir=None, *, film="monolayer", workers=None, progress=True, n_threads=None):
    """Run an embedded demo into ``out_dir`` (default outputs/demo-<time>).

    ``film``: "monolayer" (the default: an invented monolayer swept through Tc, a heating
    movie and a heating plan), "stripes" (stripe domains of an invented dipolar film,
    :func:`run_stripe_demo`) or "grains" (a polycrystalline film, :func:`run_grains_demo`).
    """
    if film not in FILMS:
        raise InputError(f"demo film must be one of {', '.join(FILMS)}; got {film!r}")
    if out_dir is None:
        prefix = f"demo-{'' if film == 'monolayer' else film + '-'}"
        out_dir = Path("outputs") / time.strftime(prefix + "%Y%m%d-%H%M%S")
    if film == "stripes":
        return run_stripe_demo(Path(out_dir), n_threads=n_threads, progress=progress)
    if film == "grains":
        return run_grains_demo(Path(out_dir), workers=workers, progress=progress)
    return run_demo(Path(out_dir), DEFAULT_SCENARIO, workers=workers, progress=progress)
