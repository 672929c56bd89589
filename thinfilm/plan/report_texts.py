"""Heating plan texts: plan.md, the short summary, the notes and the reproducing command.

Every function reads the plan dictionary built by :func:`thinfilm.plan.make_plan`
(temperatures in K, lengths in nm, times in ps or s as the key names say).
"""

import math
import shlex

from thinfilm._numbers import fmt_pm, fmt_value
from thinfilm.analysis.tc_rule import cross_check_lines, tc_text
from thinfilm.plan.beyond_report import _beyond_summary, beyond_lines

__all__ = ["resolved_note", "timescale_note", "command", "markdown", "summary_text",
           "no_plan_markdown", "no_plan_summary", "CAUTIONS"]

CAUTIONS = (
    "Heating limits of the sample: interdiffusion at interfaces, oxidation, dewetting of thin "
    "layers and desorption or reaction of capping layers can change the film irreversibly "
    "before or during the schedule; keep below the highest temperature the film and substrate "
    "are known to survive.",
    "Thermometry: calibrate the sensor, and expect an offset (often several K, more in vacuum "
    "or under a beam) between the sensor and the film itself; let the temperature settle at "
    "each point before imaging.",
    "Beam and light heating: the imaging beam or laser can raise the local film temperature; "
    "check at two intensities.",
    "Strong magnetic fields: keep tools and magnetisable items away from the magnet, mind "
    "stray-field limits and quench risks of superconducting magnets.",
    "This schedule is a model estimate from a small simulated film. Local laboratory safety "
    "rules, the sample holder and the instrument maker's temperature, ramp-rate and field "
    "limits take precedence.",
)


def _fmt(v, err=None, unit="K", digits=4):
    return fmt_pm(v, err, unit=unit, digits=digits)


def _tc(plan, pm="+-"):
    """The one text of Tc ('Tc = 41.6 +- 0.4 K (Binder crossing L = 32/64)')."""
    return tc_text(plan.get("tc") or plan, pm=pm)


def _edge_text(v, err, bound):
    if bound == "never" or v is None:
        return "not reached in the sweep"
    if bound == "at_or_below_start":
        return f"<= {fmt_value(v)} K (at or below the start of the sweep)"
    if bound == "at_or_above_end":
        return f">= {fmt_value(v)} K (at or beyond the end of the sweep)"
    if bound == "extrapolated":
        return _fmt(v, err) + " (extrapolated beyond the lattice)"
    return _fmt(v, err)


def _resolved_text(plan):
    """The resolved window, once: 'a .. b' with the digits of each edge's error."""
    w = plan["resolved_window_K"]
    if w is None:
        return "none"
    if plan.get("resolved_window_extrapolated"):
        # the edges are Tc -+ half-widths: their width is known far better than their position
        hw = plan["extrapolation"]["resolved_halfwidth_K"]
        up = hw["above"]
        down = hw.get("below", up)
        return (f"Tc - {fmt_pm(down[0], down[1], digits=2)} .. Tc + "
                f"{fmt_pm(up[0], up[1], digits=2)} (extrapolated beyond the lattice; the "
                f"position carries the error of Tc)")
    errs = plan.get("resolved_window_err_K") or [None, None]
    bounds = plan.get("resolved_window_bounds") or [None, None]
    return f"{_edge_text(w[0], errs[0], bounds[0])} .. {_edge_text(w[1], errs[1], bounds[1])}"


def _max_xi_text(plan):
    x, t = plan.get("max_correlation_length_nm"), plan.get("max_correlation_length_at_K")
    if x is None:
        return "no correlation length was measured"
    return f"max {x:.2g} nm at {t:g} K on the largest lattice's smoothed curve"


def resolved_note(plan):
    """Plain-language note on the resolved window (always set; essential when it is empty)."""
    res = plan["instrument"]["resolution_nm"]
    if plan["resolved_window_K"] is None:
        return (f"The resolution ({res:g} nm) is coarser than every simulated correlation length "
                f"({_max_xi_text(plan)}): the instrument cannot resolve the critical "
                f"fluctuations of this film; the pattern will appear uniform grey above Tc, and "
                f"below it only domains larger than {res:g} nm are visible.")
    lo, hi = plan["resolved_window_K"]
    if plan.get("resolved_window_extrapolated"):
        return (f"The simulated lattice holds correlation lengths up to "
                f"{plan['max_correlation_length_nm']:.2g} nm only; extrapolated beyond it (fit "
                f"of xi against T, see 'Beyond the lattice'), xi exceeds the resolution "
                f"({res:g} nm) within the window above, about {fmt_value(hi - lo, None, 2)} K "
                f"wide about Tc: step by less than that near Tc to see the critical "
                f"fluctuations (if the exposure is short enough to freeze them).")
    return (f"Within the window above the correlation length exceeds the resolution "
            f"({res:g} nm; {_max_xi_text(plan)}): the critical fluctuations are resolvable "
            f"there (if the exposure is short enough to freeze them).")


def _tc_lines(plan):
    """plan.md lines on Tc: the one value (or why there is none), its cross-checks, the
    disagreement warning and the disorder spread."""
    tc = plan["tc"]
    if tc["status"] != "found":
        out = [f"- **{tc_text(tc)}**: {tc['message']}",
               f"- **What to change**: {tc['fix']}."]
    else:
        spread = (f"; the error covers the other counted estimates (statistical "
                  f"{fmt_value(tc['tc_stat_err_K'], None, 2)} K, spread of the methods "
                  f"{fmt_value(tc['tc_sys_err_K'], None, 2)} K)" if tc.get("tc_sys_err_K")
                  else "; no other estimate is counted (statistical error only)")
        out = [f"- **{_tc(plan)}**{spread}."]
    checks = cross_check_lines(tc)
    if checks:
        out.append("- Cross-checks of Tc (other methods; not the plan's Tc):")
        out += [f"  - {c}" for c in checks]
    if tc.get("disagreement"):
        out.append(f"- **Warning**: {tc['disagreement']}")
    if tc.get("few_sample_points") and tc["status"] != "unequilibrated":
        few = tc["few_sample_points"]
        out.append(f"- {len(few)} point(s) have fewer than 50 effectively independent samples "
                   f"(e.g. L = {few[0][0]}, {few[0][1]:g} K): their error bars are unreliable.")
    if plan.get("tc_spread_K"):
        out.append(f"- Sample-to-sample spread of Tc over {len(plan['tc_realisations_K'])} "
                   f"disorder realisations: {fmt_value(plan['tc_spread_K'], None, 2)} K (Tc of "
                   "each: " + ", ".join(fmt_value(x, plan["tc_spread_K"])
                                        for x in plan["tc_realisations_K"] if x is not None)
                   + " K); a real film's Tc can lie anywhere in that range, so the heating range "
                   "should cover Tc +- 2 spreads.")
    return out


def _tau_range(plan):
    """'2.2-12 ps' without the unit: the shortest and longest run's tau with the digits of
    their errors, as in the runs table."""
    runs = plan["llg"]["runs"]
    lo = min(runs, key=lambda r: r["tau_ps"])
    hi = max(runs, key=lambda r: r["tau_ps"])
    return (f"{fmt_value(lo['tau_ps'], lo.get('tau_err_ps'), 3)}-"
            f"{fmt_value(hi['tau_ps'], hi.get('tau_err_ps'), 3)}")


def timescale_note(plan):
    """What the comparison of ps-ns fluctuation times with the exposure implies."""
    exp = plan["instrument"]["exposure_s"]
    trange = _tau_range(plan)
    tmax = max(r["tau_ps"] for r in plan["llg"]["runs"])
    llg = plan["llg"]
    side = llg["box_nm"][0]
    base = (f"The simulated lattice for the dynamics is small ({llg['size']} x {llg['size']} "
            f"sites, {side:.3g} nm), so domain-wall motion, pinning and coarsening on laboratory "
            f"time scales (ms to hours) are outside the model.")
    ratio = exp / (tmax * 1e-12)
    if ratio > 1e3:
        return (f"The simulated fluctuation times ({trange} ps) are about "
                f"{math.log10(ratio):.0f} orders of magnitude shorter than the exposure "
                f"({exp:g} s): every image is a time average of the magnetisation. Above Tc the "
                f"film appears uniform grey; below Tc it shows the frozen large domains at the "
                f"reduced contrast <|m|>(T). " + base)
    return (f"The simulated fluctuation times ({trange} ps) are comparable to or "
            f"longer than part of the exposure ({exp:g} s): the pattern is partly frozen during "
            f"an image (see the verdict per temperature). " + base)


def _stem(plan):
    """File stem of the plan's files: plan, or plan-<instrument name> for a named instrument."""
    return plan.get("file_stem", "plan")


def command(plan, out):
    """The command that reproduces the plan."""
    ins = plan["instrument"]
    src = plan["scenario_source"]
    parts = ["thinfilm", "plan", src if src != "<dict>" else f"<scenario {plan['scenario']}>",
             "-o", str(out), "--resolution", f"{ins['resolution_nm']:g} nm",
             "--exposure", f"{ins['exposure_s']:g} s"]
    if ins["field_of_view_nm"] is not None:
        parts += ["--field-of-view", f"{ins['field_of_view_nm']:g} nm"]
    if plan.get("instrument_name"):
        parts += ["--instrument", plan["instrument_name"]]
    opt = plan.get("options") or {}
    if "n_points" in opt:  # every option that changes the plan, so the command reproduces it
        parts += ["--points", str(opt["n_points"]), "--dwell", f"{opt['dwell_s']:.12g} s",
                  "--llg-duration", f"{opt['llg_duration_s'] * 1e12:.12g} ps"]
    parts += ["--reuse"]
    return " ".join(shlex.quote(p) for p in parts)



def _dwell(s):
    return f"{s / 60:g} min" if s >= 60 else f"{s:g} s"


def markdown(plan):
    """plan.md text."""
    ins, llg = plan["instrument"], plan["llg"]
    lo, hi = plan["breakup_window_K"]
    elo, ehi = plan["breakup_window_err_K"]
    blo, bhi = plan["breakup_window_bounds"]
    fov = ins["field_of_view_nm"]
    lines = [f"# Heating plan: {plan['scenario']}", "",
             "A model estimate for planning an experiment; not a measurement.", "",
             "## Instrument", "",
             f"- resolution {ins['resolution_nm']:g} nm, exposure {ins['exposure_s']:g} s, "
             "field of view "
             + (f"{fov:g} nm" if fov is not None else "not given")
             + " (from: "
             + f"{', '.join(f'{k} {v}' for k, v in plan['instrument_source'].items())})", "",
             "## Answers", "",
             *_tc_lines(plan),
             f"- **Domain pattern breaks up** between {_edge_text(lo, elo, blo)} and "
             f"{_edge_text(hi, ehi, bhi)}: from where the typical domain diameter falls below "
             f"the view limit ({plan['view_limit_nm']:.3g} nm) to where the "
             f"{plan['breakup_upper_edge_from']} "
             f"falls below the resolution.",
             f"- **Resolved window**: {_resolved_text(plan)}. " + plan["resolved_note"],
             f"- **Time scales**: {plan['timescale_note']}", "",
             "## Schedule", "",
             f"{plan['n_points']} temperatures, fine steps where |m| and ln xi change fast; dwell "
             f"{_dwell(plan['dwell_s'])} per point (the user's choice), "
             f"{_dwell(plan['total_dwell_s'])} in "
             f"all, plus settling time.", "",
             "| T (K) | phase | xi, smoothed (nm) | mean domain d (nm) | typical d (nm) "
             "| xi resolved "
             "| tau (ps) | verdict |",
             "|---|---|---|---|---|---|---|---|"]
    for p in plan["points"]:
        star = "*" if p["fluctuation_time_extrapolated"] else ""
        xi = "n/a" if p["correlation_length_nm"] is None else f"{p['correlation_length_nm']:.3g}"
        res = {True: "yes", False: "no"}.get(p["resolved"], "n/a")
        lines.append(f"| {p['temperature_K']:g} | {p['phase']} | {xi} | "
                     f"{p['mean_domain_diameter_nm']:.3g} | "
                     f"{p['typical_domain_diameter_nm']:.3g} | "
                     f"{res} | {p['fluctuation_time_ps']:.3g}{star} | {p['verdict']} |")
    lines += ["", "\\* outside the LLG temperatures: nearest run's value.", "",
              "Verdict: *frozen* when tau > 10 x exposure, *averaged* when tau < exposure / 10 "
              "(grey above Tc; the mean contrast <|m|> in ordered domains below Tc), otherwise "
              "*blurred/partly averaged*.", "",
              "## Cautions", ""]
    lines += [f"- {c}" for c in CAUTIONS]
    lines += ["", "## Assumptions and method", "",
              f"- Scenario `{plan['scenario']}` ({plan['scenario_source']}); sweep {plan['sweep']} "
              f"in this folder; curves of the largest size L = {plan['size']} "
              f"({plan['box_nm']:.3g} nm film).",
              f"- Tc: {plan['tc']['rule']} The same record is in tc.json"
              + (" (rewritten by this plan: it held a value from an earlier rule)."
                 if plan.get("tc_json_rewritten") else "."),
              "- Domain diameter = sqrt(4 A / pi). 'Mean' uses mean_domain_area_nm2 (every island "
              f"counts); 'typical' uses {plan['typical_domain_column']} (the domain a random pixel "
              "lies in: what an image shows) and drives the lower window edge; its error is taken "
              "from the relative error of the mean area.",
              f"- View limit = the smaller of the field of view and the simulated film side "
              f"({plan['box_nm']:.3g} nm): simulated domains cannot be larger than the film, so a "
              "film that is one domain stands for domains larger than the view.",
              "- Window edges: crossings of kernel-smoothed ln-curves, linear interpolation; "
              "error = "
              f"half the 16-84 % spread of {plan['bootstrap']['n_boot']} parametric bootstrap "
              f"replicas (seed {plan['bootstrap']['seed']}).",
              "- Schedule: equal arclength along the normalised curve (|m|, ln xi) of the sweep "
              "with 15 % uniform spacing, rounded to 0.1 K.",
              "- Fluctuation time: integrated autocorrelation time (Sokal window, c = 5) of m "
              f"along the order axis in stochastic LLG runs on {llg['size']} x {llg['size']} "
              f"sites, damping {llg['damping']:g}, {llg['duration_ps']:.4g} ps each after "
              "Metropolis equilibration; "
              "interpolated in ln tau between run temperatures. Runs:", ""]
    lines += ["| T (K) | tau (ps) | run (ps) | step (fs) | independent samples | seed |",
              "|---|---|---|---|---|---|"]
    for r in llg["runs"]:
        lines.append(f"| {r['temperature_K']:g} | "
                     f"{fmt_pm(r['tau_ps'], r['tau_err_ps'], unit='')} | "
                     f"{r['duration_ps']:.4g} | {r['time_step_fs']:.3g} | "
                     f"{r['n_independent']:.0f} | {r['seed']} |")
    lines += beyond_lines(plan)
    lines += ["", "## Reproduce", "", "```", plan["command"], "```", "",
              "Figures: " + ", ".join(plan["figures"]), ""]
    return "\n".join(lines)


def summary_text(plan):
    """About ten lines of plain text for the terminal."""
    ins = plan["instrument"]
    lo, hi = plan["breakup_window_K"]
    elo, ehi = plan["breakup_window_err_K"]
    blo, bhi = plan["breakup_window_bounds"]
    sched = plan["schedule_K"]
    verdicts = sorted({p["verdict"] for p in plan["points"]})
    return "\n".join([
        f"heating plan for {plan['scenario']} (sweep L = {plan['size']}, {plan['sweep']})",
        f"  instrument   resolution {ins['resolution_nm']:g} nm, exposure {ins['exposure_s']:g} s"
        + (f", field of view {ins['field_of_view_nm']:g} nm" if ins["field_of_view_nm"] else ""),
        f"  Tc           {_tc(plan).removeprefix('Tc = ')}"
        + (f"; spread {fmt_value(plan['tc_spread_K'], None, 2)} K over "
           f"{len(plan['tc_realisations_K'])} disorder realisations: heat over Tc +- 2 spreads"
           if plan.get("tc_spread_K") else ""),
        *([f"  warning      {plan['tc']['disagreement']}"] if plan["tc"].get("disagreement")
          else []),
        f"  break-up     {_edge_text(lo, elo, blo)} .. {_edge_text(hi, ehi, bhi)}",
        "  resolved     " + ("none: " + plan["resolved_note"] if plan["resolved_window_K"] is None
                            else _resolved_text(plan)),
        f"  fluctuation  {_tau_range(plan)} ps (LLG, {plan['llg']['size']}^2 sites); "
        f"verdicts: {', '.join(verdicts)}",
        f"  schedule     {len(sched)} points {sched[0]:g}..{sched[-1]:g} K: "
        + ", ".join(f"{s:g}" for s in sched),
        f"  dwell        {_dwell(plan['dwell_s'])} per point (your choice), "
        f"{_dwell(plan['total_dwell_s'])} total",
        *_beyond_summary(plan),
        "  caution      model estimate; mind sample heating limits and sensor-film offsets; local "
        "lab rules and the instrument maker's limits come first.",
    ])


def no_plan_markdown(plan):
    """plan.md when the sweep does not determine Tc."""
    ins = plan["instrument"]
    lines = [f"# Heating plan: {plan['scenario']}", "",
             "No plan: the sweep does not determine Tc, and a schedule, break-up window or "
             "resolved window without Tc would be a guess.", "",
             "## Instrument", "",
             f"- resolution {ins['resolution_nm']:g} nm, exposure {ins['exposure_s']:g} s", "",
             "## What the data show", "", *_tc_lines(plan), "",
             "## Method", "", f"- {plan['tc']['rule']}",
             f"- Sweep {plan['sweep']} in this folder, sizes {plan['tc']['sizes']}, "
             f"{plan['tc']['range_K'][0]:g}-{plan['tc']['range_K'][1]:g} K." if plan["tc"].get(
                 "range_K") else f"- Sweep {plan['sweep']} in this folder.", "",
             "## Reproduce", "", "```", plan["command"], "```", "",
             "Figures: " + (", ".join(plan["figures"]) or "none"), ""]
    return "\n".join(lines)


def no_plan_summary(plan):
    """Terminal text when the sweep does not determine Tc."""
    tc = plan["tc"]
    return "\n".join([
        f"heating plan for {plan['scenario']} (sweep L = {plan['size']}, {plan['sweep']})",
        f"  Tc           {tc_text(tc).removeprefix('Tc ')}: {tc['message']}",
        f"  fix          {tc['fix']}",
        "  plan         none: no schedule, break-up or resolved window without Tc",
    ])
