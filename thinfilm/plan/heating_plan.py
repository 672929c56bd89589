"""Heating plan for a film and an imaging instrument.

:func:`make_plan` runs (through the given runner, by default a plain sweep) or reuses a
temperature sweep in a folder and answers, for the largest simulated size:

* Tc with its error, by the stated rule of :mod:`thinfilm.analysis.tc_rule` applied to the
  sweep's observables.csv (the same record as the folder's ``tc.json``, rewritten when it
  holds a value from an earlier rule); when the data do not bracket Tc, the plan says what they
  show and what to change, and gives no Tc, window or schedule;
* the temperature window in which the domain pattern breaks up: from where the domain size
  (equivalent diameter) falls below the field of view to where the correlation length falls
  below the resolution, each edge with a bootstrap error (:mod:`thinfilm.plan_curves`);
* the window in which the instrument resolves the critical fluctuations (xi > resolution);
* the fluctuation time of the pattern from short stochastic LLG runs
  (:mod:`thinfilm.fluctuation`) against the exposure time;
* a heating schedule with fine steps where the pattern changes fast.

It writes ``plan.json``, ``plan.md`` and figures ``plan_*.png`` (:mod:`thinfilm.plan_report`).
"""

import json
import math
from pathlib import Path

import numpy as np

from thinfilm._io import atomic_write_text, write_json
from thinfilm.analysis.fluctuation import exposure_verdict, fluctuation_time
from thinfilm.input.errors import InputError, ScenarioError, option
from thinfilm.input.scenario import Scenario, load_scenario
from thinfilm.plan.beyond_lattice import beyond_lattice, infinite_film_points
from thinfilm.plan.curves import clean_json as _clean
from thinfilm.plan.instrument import _quantity, instrument_values
from thinfilm.plan.sweep_analysis import NEEDED, _read_sweep, analyse_sweep, tc_record
from thinfilm.runs.folder import refresh_file_list
from thinfilm.runs.lifecycle import (
    check_identity,
    hold,
    read_manifest,
    scenario_identity,
    stored_identity,
)
from thinfilm.runs.sweep import run_sweep

__all__ = ["make_plan", "instrument_values", "analyse_sweep", "tc_record", "LLG_FRACTIONS",
           "NEEDED"]

#: LLG run temperatures as fractions of Tc (those inside the sweep range are used).
LLG_FRACTIONS = (0.8, 0.9, 0.97, 1.03, 1.1, 1.25, 1.5)


def _scenario(source):
    if isinstance(source, Scenario):
        return source
    return load_scenario(source)


def _ensure_sweep(sc, out, reuse, workers, progress, runner, overwrite=False):
    """Run, resume or reuse the sweep in ``out``; returns 'ran', 'resumed' or 'reused'."""
    if not sc.is_sweep:
        raise ScenarioError("the heating plan needs a temperature sweep: give temperature as a "
                            "list or a {start, stop, step} range (at least 5 temperatures)",
                            path=sc.source, key="temperature")
    if reuse and overwrite:
        raise InputError(f"{option('reuse')} and {option('overwrite')} exclude each other: "
                         f"build the plan from the sweep in the folder, or delete it and start "
                         f"afresh")
    m = read_manifest(out)
    if m is not None:
        if overwrite:
            runner(sc, out, overwrite=True, workers=workers, progress=progress)
            return "ran"
        if not reuse:
            raise InputError(f"{out}: already holds a run (manifest.json). Pass {option('reuse')} "
                             f"to build the plan from its sweep (an unfinished sweep is "
                             f"continued), {option('overwrite')} to delete it and start afresh, "
                             f"or choose another folder ({option('out_dir')}).")
        if m.get("kind") != "sweep":
            raise InputError(f"{out}: holds a {m.get('kind')!r} run, not a sweep; choose another "
                             f"folder ({option('out_dir')}), or {option('overwrite')} to "
                             f"replace it")
        stored = stored_identity(m)
        if stored is not None:
            check_identity(out, stored, scenario_identity(sc), doing="reuse")
        done = (m.get("finished") and (out / "observables.csv").is_file()
                and (out / "tc.json").is_file())
        # a sweep killed after its tables but before or while drawing its figures (captions.md
        # is written last): the runner draws them
        figures_missing = (runner is not run_sweep
                           and not (out / "plots" / "captions.md").is_file())
        if done and not figures_missing:
            return "reused"
        runner(sc, out, resume=True, workers=workers, progress=progress)
        return "resumed"
    runner(sc, out, workers=workers, progress=progress)
    return "ran"




def _llg_temperatures(tc, t_lo, t_hi, given):
    if given is not None:
        return sorted(float(x) for x in given)
    cand = [tc * f for f in LLG_FRACTIONS] if tc else list(np.linspace(t_lo, t_hi, 6))
    inside = sorted({round(min(max(x, t_lo), t_hi), 3) for x in cand})
    out = []
    for x in inside:
        if not out or x - out[-1] > 0.02 * (t_hi - t_lo):
            out.append(x)
    return out


def _fluctuations(sc, temps, size, duration_s, progress, out):
    """LLG fluctuation runs at ``temps``; kept in ``fluctuations.json`` and reused by a later plan
    of the same folder with the same runs (e.g. a plan for another instrument)."""
    from thinfilm.model.parameters import build_model
    from thinfilm.runs.sweep_point import sized_scenario

    model = build_model(sized_scenario(sc, size))
    dy = sc.dynamics
    key = {"temperatures_K": [float(x) for x in temps], "size": int(size),
           "duration_s": float(duration_s), "damping": dy.damping, "time_step_s": dy.time_step_s,
           "gamma": dy.gamma, "seed": int(sc.seed), "scenario": scenario_identity(sc)}
    cache = out / "fluctuations.json"
    runs = []
    if cache.is_file():
        try:
            old = json.loads(cache.read_text())
        except (OSError, ValueError):
            old = {}
        if old.get("key") == _clean(key):  # finished runs (all, or those before a kill)
            runs = list(old.get("runs") or [])[:len(temps)]
    from tqdm import tqdm

    for i, temp in enumerate(tqdm(temps, desc="LLG fluctuation runs",
                                  disable=(not progress) or None, leave=False)):
        if i < len(runs):
            continue
        runs.append(_clean(fluctuation_time(model, temp, damping=dy.damping,
                                            time_step_s=dy.time_step_s, duration_s=duration_s,
                                            seed=sc.seed + 101 * (i + 1), gamma=dy.gamma)))
        write_json(cache, {"key": _clean(key), "runs": runs})  # saved one by one
    return runs, model


def _interp_tau(temp, runs):
    ts = np.array([r["temperature_K"] for r in runs])
    lt = np.log([r["tau_ps"] for r in runs])
    le = np.array([r["tau_err_ps"] / r["tau_ps"] for r in runs])
    return (float(np.exp(np.interp(temp, ts, lt))),
            float(np.exp(np.interp(temp, ts, lt)) * np.interp(temp, ts, le)),
            bool(temp < ts[0] or temp > ts[-1]))


def _points(a, runs, ins, tc):
    t = a["temperature_K"]
    out = []
    for temp in a["schedule_K"]:
        with np.errstate(invalid="ignore", divide="ignore"):  # linear in ln xi, as the edges
            xi = float(np.exp(np.interp(temp, t, np.log(a["xi_smooth_nm"]))))
        dm = float(np.interp(temp, t, a["d_mean_nm"]))
        dt = float(np.interp(temp, t, a["d_typ_nm"]))
        m = float(np.interp(temp, t, a["m_abs"]))
        tau, tau_err, extrap = _interp_tau(temp, runs)
        ordered = temp < tc
        verdict = exposure_verdict(tau * 1e-12, ins["exposure_s"], ordered=ordered)
        out.append({"temperature_K": temp, "phase": "ordered" if ordered else "disordered",
                    "m_abs": m, "correlation_length_nm": xi, "mean_domain_diameter_nm": dm,
                    "typical_domain_diameter_nm": dt,
                    "resolved": bool(xi > ins["resolution_nm"]) if math.isfinite(xi) else None,
                    "domains_resolved": bool(dt > ins["resolution_nm"]),
                    "fluctuation_time_ps": tau, "fluctuation_time_err_ps": tau_err,
                    "fluctuation_time_extrapolated": extrap,
                    "fluctuation_time_over_exposure": tau * 1e-12 / ins["exposure_s"],
                    "verdict": verdict})
    return out


def _use_extrapolated_window(plan):
    """Where the lattice cannot reach the resolution, take the window from the extrapolation.

    The resolved window becomes Tc -+ the extrapolated half-widths (flagged "extrapolated");
    the upper break-up edge, when the lattice put it at or below the start of the sweep (its
    domains are smaller than the resolution), becomes Tc + the half-width above Tc.
    """
    hw = (plan["extrapolation"] or {}).get("resolved_halfwidth_K") or {}
    if "above" not in hw:
        return
    tc, tc_err = plan["tc_K"], plan["tc_err_K"] or 0.0
    up, up_err = hw["above"]
    down, down_err = hw.get("below", hw["above"])
    plan["resolved_window_extrapolated"] = plan["resolved_window_K"] is None
    if plan["resolved_window_K"] is None:
        plan["resolved_window_K"] = [tc - down, tc + up]
        plan["resolved_window_err_K"] = [float(np.hypot(tc_err, down_err or 0.0)),
                                         float(np.hypot(tc_err, up_err or 0.0))]
        plan["resolved_window_bounds"] = ["extrapolated", "extrapolated"]
    if plan["breakup_window_bounds"][1] == "at_or_below_start":
        plan["breakup_window_K"][1] = tc + up
        plan["breakup_window_err_K"][1] = float(np.hypot(tc_err, up_err or 0.0))
        plan["breakup_window_bounds"][1] = "extrapolated"
        plan["breakup_upper_edge_from"] = ("correlation length extrapolated beyond the lattice "
                                           "(the simulated film is smaller than the resolution)")


def _edge(d):
    return d["value_K"], d["err_K"]


def make_plan(source, out_dir, *, resolution=None, exposure=None, field_of_view=None, workers=None,
              reuse=False, progress=True, n_points=15, dwell="5 min", llg_size=16,
              llg_duration="150 ps", llg_temperatures=None, n_boot=400, seed=0, runner=None,
              instrument=None, overwrite=False):
    """Heating plan for a film (scenario with a temperature sweep) and an instrument.

    Parameters
    ----------
    source : str, Path, dict or Scenario
        The scenario; it must hold a temperature sweep.
    out_dir : str or Path
        Folder of the sweep and the plan.
    resolution, exposure, field_of_view : str, optional
        Instrument values with units ("30 nm", "10 ms", "5 um"); they override the
        scenario's ``instrument``. Resolution and exposure are required (here or there).
    workers : int, optional
        Worker processes of the sweep.
    reuse : bool
        Build the plan from a sweep already in ``out_dir`` (continuing it if unfinished; the
        folder must hold the same scenario); without it, a folder holding a run is refused.
    overwrite : bool
        Delete the run that ``out_dir`` holds and start afresh.
    progress : bool
        Progress bars.
    n_points : int
        Number of schedule temperatures (>= 3).
    dwell : str
        Time per temperature (the user's choice, stated in the plan), e.g. "5 min".
    llg_size : int
        L of the L x L lattice of the LLG fluctuation runs.
    llg_duration : str
        Sampled length of each LLG run, e.g. "150 ps".
    llg_temperatures : sequence of float, optional
        LLG run temperatures (K); default fractions :data:`LLG_FRACTIONS` of Tc.
    n_boot : int
        Bootstrap replicas for the window edges.
    seed : int
        Seed of the bootstrap.
    instrument : str, optional
        Name of one of the scenario's instruments (default the first); the plan's files are then
        ``plan-<name>.md``, ``plan-<name>.json`` and ``plan-<name>_*.png``.
    runner : callable, optional
        ``runner(scenario, out_dir, *, resume=False, workers, progress)`` that runs the sweep when
        the folder does not hold one yet; default :func:`thinfilm.runs.sweep.run_sweep` (no
        figures). :func:`thinfilm.api.plan` passes :func:`thinfilm.api.run`.

    Returns
    -------
    dict
        ``plan`` (the plan.json content), ``plan_md``, ``plan_json`` (paths), ``figures``
        (paths) and ``summary_text`` (about ten lines of plain text).
    """
    from thinfilm.plan import report as plan_report

    sc = _scenario(source)
    ins = instrument_values(sc, resolution, exposure, field_of_view, instrument)
    if isinstance(n_points, bool) or not isinstance(n_points, (int, np.integer)) or n_points < 3:
        raise InputError(f"{option('n_points', None)} {n_points!r}: must be a whole number of "
                         f"at least 3 temperatures")
    if isinstance(llg_size, bool) or not isinstance(llg_size, (int, np.integer)) or llg_size < 4:
        raise InputError(f"llg_size {llg_size!r}: must be a whole number L >= 4 (L x L sites)")
    dwell_s = _quantity("dwell", dwell, "time", "5 min")
    llg_s = _quantity("llg_duration", llg_duration, "time", "150 ps")
    out = Path(out_dir)
    with hold(out):  # one writer: the sweep, the LLG runs and the plan's files
        res = _plan(sc, out, ins, reuse, workers, progress, n_points, dwell_s, llg_size, llg_s,
                    llg_temperatures, n_boot, seed, runner, instrument, overwrite, plan_report)
        refresh_file_list(out)
    return res


def _plan(sc, out, ins, reuse, workers, progress, n_points, dwell_s, llg_size, llg_s,
          llg_temperatures, n_boot, seed, runner, instrument, overwrite, plan_report):
    how = _ensure_sweep(sc, out, reuse, workers, progress, runner or run_sweep, overwrite)
    from thinfilm.model.parameters import build_model
    from thinfilm.runs.sweep_point import sized_scenario

    size, _, tab = _read_sweep(out)
    box = float(min(build_model(sized_scenario(sc, size)).lattice.box_nm))
    tc, rewritten = tc_record(sc, out, tab)
    head = {"scenario": sc.name, "scenario_source": sc.source, "sweep": how, "size": size,
            "box_nm": box,
            "instrument": {k: ins[k] for k in ("resolution_nm", "exposure_s", "field_of_view_nm")},
            "instrument_source": ins["source"], "instrument_name": ins["name"],
            "file_stem": f"plan-{ins['name']}" if instrument is not None else "plan",
            "tc": tc, "tc_status": tc["status"], "tc_json_rewritten": rewritten,
            "tc_K": tc["tc_K"], "tc_err_K": tc["tc_err_K"], "tc_method": tc["method_text"],
            "tc_spread_K": tc.get("tc_spread_K"), "tc_realisations_K": tc.get("tc_realisations_K"),
            "options": {"n_points": n_points, "dwell_s": dwell_s, "llg_duration_s": llg_s}}
    if tc["status"] != "found":
        return _no_plan(head, out, tab, size)
    a = analyse_sweep(out, ins, tc=tc, box_nm=box, n_points=n_points, n_boot=n_boot, seed=seed)
    t = a["temperature_K"]
    temps = _llg_temperatures(a["tc_K"], float(t[0]), float(t[-1]), llg_temperatures)
    runs, llg_model = _fluctuations(sc, temps, llg_size, llg_s, progress, out)
    points = _points(a, runs, ins, a["tc_K"])
    low, high = _edge(a["low"]), _edge(a["high"])
    rlo, rhi = a["resolved_low"], a["resolved_high"]
    resolved = (None if rhi["bound"] == "never" or rlo["bound"] == "never"
                else [rlo["value_K"], rhi["value_K"]])
    xs = a["xi_smooth_nm"]
    k_max = int(np.nanargmax(xs)) if np.isfinite(xs).any() else None
    plan = dict(head, **{
        "view_limit_nm": a["view_limit_nm"],
        "breakup_window_K": [low[0], high[0]], "breakup_window_err_K": [low[1], high[1]],
        "breakup_window_bounds": [a["low"]["bound"], a["high"]["bound"]],
        "breakup_upper_edge_from": a["high_from"],
        "resolved_window_K": resolved,
        "resolved_window_err_K": None if resolved is None else [rlo["err_K"], rhi["err_K"]],
        "resolved_window_bounds": None if resolved is None else [rlo["bound"], rhi["bound"]],
        "max_correlation_length_nm": None if k_max is None else float(xs[k_max]),
        "max_correlation_length_at_K": None if k_max is None else float(t[k_max]),
        "typical_domain_column": a["typical_column"],
        "schedule_K": a["schedule_K"], "n_points": len(a["schedule_K"]), "dwell_s": dwell_s,
        "total_dwell_s": dwell_s * len(a["schedule_K"]),
        "llg": {"size": llg_size, "sites": int(llg_model.lattice.n_sites),
                "box_nm": [float(x) for x in llg_model.lattice.box_nm], "duration_ps": llg_s * 1e12,
                "damping": sc.dynamics.damping, "runs": runs},
        "points": points, "bootstrap": {"n_boot": n_boot, "seed": seed},
        "sweep_curves": {"temperature_K": t, "m_abs": a["m_abs"],
                         "correlation_length_nm": a["xi_nm"],
                         "correlation_length_err_nm": a["xi_err_nm"],
                         "correlation_length_smoothed_nm": a["xi_smooth_nm"],
                         "correlation_length_extrapolation_input_nm":
                             a["xi_extrapolation_input_nm"],
                         "mean_domain_diameter_nm": a["d_mean_nm"],
                         "typical_domain_diameter_nm": a["d_typ_nm"]},
    })
    plan["extrapolation"] = beyond_lattice(sc, out, tc_K=a["tc_K"], tc_err_K=a["tc_err_K"],
                                           resolution_nm=ins["resolution_nm"],
                                           field_of_view_nm=ins["field_of_view_nm"],
                                           collapse=_record_collapse(tc))
    _use_extrapolated_window(plan)
    infinite_film_points(plan)  # schedule lengths of the infinite film where known
    plan = _clean(plan)
    plan["resolved_note"] = plan_report.resolved_note(plan)
    plan["timescale_note"] = plan_report.timescale_note(plan)
    plan["options"] = {"n_points": n_points, "dwell_s": dwell_s, "llg_duration_s": llg_s}
    plan["command"] = plan_report.command(plan, out)
    api_only = {k: v for k, v, default in (("llg_size", llg_size, 16), ("n_boot", n_boot, 400),
                                           ("seed", seed, 0), ("llg_temperatures",
                                                               llg_temperatures, None))
                if v != default}
    if api_only:  # options the command line cannot set: say so next to the command
        plan["command"] += ("  # made in Python with " + ", ".join(
            f"{k}={v!r}" for k, v in api_only.items()) + " (make_plan keywords), which this "
            "command does not set")
    figures = plan_report.figures(plan, out)
    plan["figures"] = [p.name for p in figures]
    plan_json = write_json(out / f"{plan['file_stem']}.json", plan)
    plan_md = atomic_write_text(out / f"{plan['file_stem']}.md", plan_report.markdown(plan))
    return {"plan": plan, "plan_md": plan_md, "plan_json": plan_json, "figures": figures,
            "summary_text": plan_report.summary_text(plan)}


def _record_collapse(tc):
    """The Tc record's U4 collapse, the reason it has none (text), or None with one size."""
    if tc.get("collapse"):
        return tc["collapse"]
    cc = next((c for c in tc.get("cross_checks") or [] if c.get("method") == "u4_collapse"), None)
    return None if cc is None else (cc.get("note") or "no collapse")


def _no_plan(head, out, tab, size):
    """The plan when the sweep does not determine Tc: what the data show, what to change, the
    sweep's U4 and <|m|> in a figure; no Tc, no windows, no schedule, no LLG runs."""
    from thinfilm.plan import report as plan_report
    from thinfilm.plan.curves import clean_json

    plan = dict(head, **{
        "breakup_window_K": None, "resolved_window_K": None, "schedule_K": [], "points": [],
        "n_points": 0, "extrapolation": None,
        "sweep_table": {k: tab[k] for k in ("size", "temperature_K", "m_abs", "binder",
                                             "susceptibility", "n_effective") if k in tab}})
    plan = clean_json(plan)
    plan["command"] = plan_report.command(plan, out)
    figures = plan_report.no_plan_figures(plan, out)
    plan["figures"] = [p.name for p in figures]
    plan_json = write_json(out / f"{plan['file_stem']}.json", plan)
    plan_md = atomic_write_text(out / f"{plan['file_stem']}.md", plan_report.no_plan_markdown(plan))
    return {"plan": plan, "plan_md": plan_md, "plan_json": plan_json, "figures": figures,
            "summary_text": plan_report.no_plan_summary(plan)}
