"""Heating plan texts and figures: plan.md, the short summary, notes and plan_*.png.

Every function reads the plan dictionary built by :func:`thinfilm.plan.make_plan`
(temperatures in K, lengths in nm, times in ps or s as the key names say).
"""

import math
import shlex

import numpy as np

from thinfilm._numbers import fmt_pm, fmt_value
from thinfilm.analysis.tc_rule import U_STAR_ISING, cross_check_lines, tc_text
from thinfilm.plan.beyond_report import (
    INFINITE_FILM_CURVE,
    _beyond_summary,
    beyond_caption,
    beyond_figure,
    beyond_lines,
    infinite_film_overlay,
)

__all__ = ["resolved_note", "timescale_note", "command", "figures", "markdown", "summary_text",
           "CAUTIONS"]

# Okabe-Ito colour-blind-safe palette
BLUE, ORANGE, GREEN, VERMILION, PURPLE, SKY, GREY = ("#0072B2", "#E69F00", "#009E73", "#D55E00",
                                                      "#CC79A7", "#56B4E9", "#7f7f7f")

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


def _band(ax, plan):
    tc, err = plan["tc_K"], plan["tc_err_K"] or 0.0
    ax.axvspan(tc - err, tc + err, color=GREY, alpha=0.25, lw=0)
    ax.axvline(tc, color=GREY, lw=1, label=_tc(plan, pm="±").replace("Tc", "$T_c$", 1))
    lo, hi = plan["breakup_window_K"]
    if lo is not None and hi is not None:
        ax.axvspan(lo, hi, color=ORANGE, alpha=0.12, lw=0, label="break-up window")
    for s in plan["schedule_K"]:
        ax.axvline(s, ymin=0, ymax=0.04, color="k", lw=1)
    ax.plot([], [], "|", color="k", ms=8, label="schedule temperatures")  # legend of the ticks


def _duration(seconds):
    """'10 ms', '0.2 ps': a time (s) with the unit that keeps the number at or above 1."""
    for unit, f in (("s", 1.0), ("ms", 1e-3), ("µs", 1e-6), ("ns", 1e-9), ("ps", 1e-12)):
        if seconds >= f:
            return f"{seconds / f:.3g} {unit}"
    return f"{seconds / 1e-12:.3g} ps"


def _captions(plan):
    """{PNG name: caption markdown} of the three plan figures."""
    from thinfilm.render.captions import definition_list

    ins = plan["instrument"]
    exp_ps = ins["exposure_s"] * 1e12
    common = (f"Black ticks on the T axis: the {plan['n_points']} schedule temperatures. Grey line "
              f"and band: {_tc(plan, pm='±')} and its error; light orange: the break-up window "
              "of the domain pattern (plan.md).")
    t_item = ("T", "K", "temperature of the film")
    curves = [
        ("ξ (second moment)", "correlation length of the sweep; error bars: standard errors; "
         "line: the kernel-smoothed curve from which the windows and the table are read"),
        ("ξ the extrapolation is fitted to", "where shown, the S(k) length the fit beyond the "
         "lattice uses (it differs from the second moment); the extrapolated line continues it"),
        ("mean domain d", "sqrt(4 A / π) of the mean domain area A (every island counts)"),
        ("typical domain d", f"sqrt(4 A / π) of {plan['typical_domain_column']} (the domain a "
         "random pixel lies in: what an image shows)"),
        ("resolution", f"instrument resolution, {ins['resolution_nm']:g} nm"),
        ("view limit", "the smaller of the field of view and the simulated film side, "
         f"{plan['view_limit_nm']:.3g} nm")]
    if (plan.get("extrapolation") or {}).get("curve"):
        curves.insert(1, INFINITE_FILM_CURVE)
    return {
        f"{_stem(plan)}_xi.png": f"Lengths of the simulated film (scenario {plan['scenario']}, lattice size "
        f"L = {plan['size']}) against the temperature, with the instrument limits. {common}\n\n"
        + definition_list([t_item, ("length", "nm", "the curves of the legend:")]) + "\n"
        + "\n".join(f"  - {name}: {text}" for name, text in curves),
        f"{_stem(plan)}_tau.png": "Fluctuation time of the order against the temperature, compared with "
        f"the exposure ({_duration(ins['exposure_s'])} = {exp_ps:.3g} ps; dashed line when it lies "
        f"within a factor 100 of the plotted times). {common}\n\n"
        + definition_list([
            t_item,
            ("τ", "ps", "integrated autocorrelation time of m along the order axis in stochastic "
             f"LLG runs on {plan['llg']['size']} x {plan['llg']['size']} sites (points with error "
             "bars), interpolated in ln τ at the schedule temperatures (crosses)")]),
        f"{_stem(plan)}_schedule.png": "Recommended heating schedule on the order-parameter curve of the "
        f"sweep (lattice size L = {plan['size']}). {common}\n\n"
        + definition_list([
            t_item,
            ("⟨|m|⟩", "per spin", "mean absolute magnetisation along the order axis; diamonds: "
             "the schedule temperatures, ⟨|m|⟩ interpolated there")]),
    }


def figures(plan, out):
    """Write plan_xi.png (lengths), plan_tau.png (times), plan_schedule.png and their captions
    (``captions.md``) into ``out``; return the PNG paths."""
    from thinfilm.render.captions import write_captions
    from thinfilm.render.layout import new_figure, save_png, shared_legend

    c = {k: np.array([np.nan if x is None else x for x in v], dtype=float)
         for k, v in plan["sweep_curves"].items()}
    t = c["temperature_K"]
    ins = plan["instrument"]
    name = plan["scenario"] if len(plan["scenario"]) <= 40 else plan["scenario"][:39] + "…"
    paths = []
    fig, (ax,) = new_figure(1, 1, 6.4, 4.8)
    ax.errorbar(t, c["correlation_length_nm"], yerr=c["correlation_length_err_nm"], fmt="o",
                color=BLUE, ms=4, label=r"$\xi$ (second moment)")
    if "correlation_length_smoothed_nm" in c:
        ax.plot(t, c["correlation_length_smoothed_nm"], "-", color="k", lw=0.8,
                label=r"$\xi$ smoothed (the plan's curve)")
    ax.plot(t, c["mean_domain_diameter_nm"], "s--", color=GREEN, ms=4, label="mean domain d")
    ax.plot(t, c["typical_domain_diameter_nm"], "^:", color=PURPLE, ms=4, label="typical domain d")
    ax.axhline(ins["resolution_nm"], color=VERMILION, ls="--",
               label=f"resolution {ins['resolution_nm']:g} nm")
    ax.axhline(plan["view_limit_nm"], color=SKY, ls="-.",
               label=f"view limit {plan['view_limit_nm']:.3g} nm")
    cur = (plan.get("extrapolation") or {}).get("curve")
    if cur:
        ct = np.asarray(cur["temperature_K"], dtype=float)
        cx = np.array([np.nan if v is None else v for v in cur["correlation_length_nm"]], float)
        ce = np.array([np.nan if v is None else v for v in cur["correlation_length_err_nm"]], float)
        ext = np.array([f == "extrapolated" for f in cur["flag"]])
        label = r"$\xi$ extrapolated (fit)"
        fin = c.get("correlation_length_extrapolation_input_nm")
        if fin is not None and ext.any() and not np.allclose(
                fin, c["correlation_length_nm"], rtol=1e-9, equal_nan=True):
            # the fit's own input where it differs from the second moment (S(k) length)
            ax.plot(t, fin, "D", mfc="none", color=BLUE, ms=5,
                    label=r"$\xi$ the extrapolation is fitted to (S(k) length)")
        for side in (ct < plan["tc_K"], ct > plan["tc_K"]):
            sel = side & ext
            if sel.any():
                ax.fill_between(ct[sel], cx[sel] - ce[sel], cx[sel] + ce[sel], color=BLUE,
                                alpha=0.2, lw=0)
                ax.plot(ct[sel], cx[sel], "-", color=BLUE, lw=1, label=label)
                label = None
    infinite_film_overlay(ax, plan)  # issue 27: what the box cuts down, marked
    _band(ax, plan)
    ax.set_yscale("log")
    ax.set(xlabel="T (K)", ylabel="length (nm)", title=f"{name}: lengths, L = {plan['size']}")
    shared_legend(fig)
    paths.append(save_png(fig, out / f"{_stem(plan)}_xi.png", dpi=120))

    fig, (ax,) = new_figure(1, 1, 6.4, 4.6)
    runs = plan["llg"]["runs"]
    ax.errorbar([r["temperature_K"] for r in runs], [r["tau_ps"] for r in runs],
                yerr=[r["tau_err_ps"] for r in runs], fmt="o-", color=BLUE, label="LLG runs")
    ax.plot([p["temperature_K"] for p in plan["points"]],
            [p["fluctuation_time_ps"] for p in plan["points"]], "x", color=ORANGE,
            label="schedule (interpolated)")
    infinite_film_overlay(ax, plan)  # issue 27: what the box cuts down, marked
    _band(ax, plan)
    ax.set_yscale("log")
    exp_ps = ins["exposure_s"] * 1e12
    ax.set(xlabel="T (K)", ylabel=r"$\tau$ (ps)",
           title=f"fluctuation time; exposure {_duration(ins['exposure_s'])}")
    lo, hi = ax.get_ylim()
    if lo <= exp_ps <= hi * 1e2:
        ax.axhline(exp_ps, color=VERMILION, ls="--", label="exposure")
    shared_legend(fig)
    paths.append(save_png(fig, out / f"{_stem(plan)}_tau.png", dpi=120))

    fig, (ax,) = new_figure(1, 1, 6.4, 4.6)
    ax.plot(t, c["m_abs"], "o-", color=BLUE, ms=4, label=r"$\langle|m|\rangle$ (sweep)")
    ax.plot(plan["schedule_K"], np.interp(plan["schedule_K"], t, c["m_abs"]), "D",
            color=VERMILION, label="schedule points")
    _band(ax, plan)
    ax.set(xlabel="T (K)", ylabel=r"$\langle|m|\rangle$ (per spin)",
           title="recommended heating schedule")
    shared_legend(fig)
    paths.append(save_png(fig, out / f"{_stem(plan)}_schedule.png", dpi=120))
    caps = _captions(plan)
    beyond = beyond_figure(plan, out / f"{_stem(plan)}_beyond.png")
    if beyond is not None:
        paths.append(beyond)
        caps[beyond.name] = beyond_caption(plan)
    write_captions(out, caps)
    return paths


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
             f"- resolution {ins['resolution_nm']:g} nm, exposure {ins['exposure_s']:g} s, field of view "
             + (f"{fov:g} nm" if fov is not None else "not given")
             + f" (from: {', '.join(f'{k} {v}' for k, v in plan['instrument_source'].items())})", "",
             "## Answers", "",
             *_tc_lines(plan),
             f"- **Domain pattern breaks up** between {_edge_text(lo, elo, blo)} and "
             f"{_edge_text(hi, ehi, bhi)}: from where the typical domain diameter falls below the view "
             f"limit ({plan['view_limit_nm']:.3g} nm) to where the {plan['breakup_upper_edge_from']} "
             f"falls below the resolution.",
             f"- **Resolved window**: {_resolved_text(plan)}. " + plan["resolved_note"],
             f"- **Time scales**: {plan['timescale_note']}", "",
             "## Schedule", "",
             f"{plan['n_points']} temperatures, fine steps where |m| and ln xi change fast; dwell "
             f"{_dwell(plan['dwell_s'])} per point (the user's choice), {_dwell(plan['total_dwell_s'])} in "
             f"all, plus settling time.", "",
             "| T (K) | phase | xi, smoothed (nm) | mean domain d (nm) | typical d (nm) | xi resolved "
             "| tau (ps) | verdict |",
             "|---|---|---|---|---|---|---|---|"]
    for p in plan["points"]:
        star = "*" if p["fluctuation_time_extrapolated"] else ""
        xi = "n/a" if p["correlation_length_nm"] is None else f"{p['correlation_length_nm']:.3g}"
        res = {True: "yes", False: "no"}.get(p["resolved"], "n/a")
        lines.append(f"| {p['temperature_K']:g} | {p['phase']} | {xi} | "
                     f"{p['mean_domain_diameter_nm']:.3g} | {p['typical_domain_diameter_nm']:.3g} | "
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
              "- Window edges: crossings of kernel-smoothed ln-curves, linear interpolation; error = "
              f"half the 16-84 % spread of {plan['bootstrap']['n_boot']} parametric bootstrap "
              f"replicas (seed {plan['bootstrap']['seed']}).",
              "- Schedule: equal arclength along the normalised curve (|m|, ln xi) of the sweep "
              "with 15 % uniform spacing, rounded to 0.1 K.",
              f"- Fluctuation time: integrated autocorrelation time (Sokal window, c = 5) of m along "
              f"the order axis in stochastic LLG runs on {llg['size']} x {llg['size']} sites, damping "
              f"{llg['damping']:g}, {llg['duration_ps']:.4g} ps each after Metropolis equilibration; "
              "interpolated in ln tau between run temperatures. Runs:", ""]
    lines += ["| T (K) | tau (ps) | run (ps) | step (fs) | independent samples | seed |", "|---|---|---|---|---|---|"]
    for r in llg["runs"]:
        lines.append(f"| {r['temperature_K']:g} | {fmt_pm(r['tau_ps'], r['tau_err_ps'], unit='')} | "
                     f"{r['duration_ps']:.4g} | {r['time_step_fs']:.3g} | {r['n_independent']:.0f} | {r['seed']} |")
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
        f"  dwell        {_dwell(plan['dwell_s'])} per point (your choice), {_dwell(plan['total_dwell_s'])} total",
        *_beyond_summary(plan),
        "  caution      model estimate; mind sample heating limits and sensor-film offsets; local "
        "lab rules and the instrument maker's limits come first.",
    ])


def no_plan_figures(plan, out):
    """plan_sweep.png: U4 of every size and <|m|> of the largest against T, for a sweep that
    does not determine Tc; returns the PNG paths."""
    from thinfilm.render.captions import write_captions
    from thinfilm.render.layout import new_figure, save_png, shared_legend

    tab = {k: np.array([np.nan if x is None else x for x in v], dtype=float)
           for k, v in plan["sweep_table"].items()}
    if "temperature_K" not in tab or not np.isfinite(tab["temperature_K"]).any():
        return []
    fig, axes = new_figure(1, 2, 3.6, 3.4)
    colours = [BLUE, ORANGE, GREEN, PURPLE, SKY, VERMILION]
    sizes = sorted({int(x) for x in tab["size"] if np.isfinite(x)})
    for i, L in enumerate(sizes):
        sel = tab["size"] == L
        o = np.argsort(tab["temperature_K"][sel])
        t = tab["temperature_K"][sel][o]
        if "binder" in tab:
            axes[0].plot(t, tab["binder"][sel][o], "o-", color=colours[i % 6], ms=4,
                         label=f"L = {L}")
        axes[1].plot(t, tab["m_abs"][sel][o], "o-", color=colours[i % 6], ms=4,
                     label=f"L = {L}")
    if plan["tc"].get("universal_u4"):
        axes[0].axhline(U_STAR_ISING, color=GREY, ls="--",
                        label=f"universal U4 = {U_STAR_ISING:g} (2D Ising)")
    axes[0].set(xlabel="T (K)", ylabel="U4 (1)", title="Binder cumulant")
    axes[1].set(xlabel="T (K)", ylabel=r"$\langle|m|\rangle$ (per spin)",
                title="order parameter")
    fig.suptitle(f"{plan['scenario'][:40]}: {tc_text(plan['tc'])}")
    shared_legend(fig)
    path = save_png(fig, out / f"{_stem(plan)}_sweep.png", dpi=120)
    write_captions(out, {path.name: (
        "The sweep the plan was asked to use, which does not determine Tc: "
        f"{plan['tc']['message']} Left: Binder cumulant U4 = 1 - <m^4>/(3 <m^2>^2) (1) of "
        "every lattice size against the temperature T (K); right: mean absolute "
        "magnetisation <|m|> per spin. What to change: " + plan["tc"]["fix"] + ".")})
    return [path]


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
