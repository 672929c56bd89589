"""Heating plan figures: plan_*.png with their captions (``captions.md``).

Every function reads the plan dictionary built by :func:`thinfilm.plan.make_plan`
(temperatures in K, lengths in nm, times in ps or s as the key names say).
"""

import numpy as np

from thinfilm.analysis.tc_rule import U_STAR_ISING, tc_text
from thinfilm.plan.beyond_report import (
    INFINITE_FILM_CURVE,
    beyond_caption,
    beyond_figure,
    infinite_film_overlay,
)
from thinfilm.plan.report_texts import _stem, _tc

__all__ = ["figures", "no_plan_figures"]

# Okabe-Ito colour-blind-safe palette
BLUE, ORANGE, GREEN, VERMILION, PURPLE, SKY, GREY = ("#0072B2", "#E69F00", "#009E73", "#D55E00",
                                                      "#CC79A7", "#56B4E9", "#7f7f7f")


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
        f"{_stem(plan)}_xi.png": f"Lengths of the simulated film (scenario {plan['scenario']}, "
        "lattice size "
        f"L = {plan['size']}) against the temperature, with the instrument limits. {common}\n\n"
        + definition_list([t_item, ("length", "nm", "the curves of the legend:")]) + "\n"
        + "\n".join(f"  - {name}: {text}" for name, text in curves),
        f"{_stem(plan)}_tau.png": "Fluctuation time of the order against the temperature, "
        "compared with "
        f"the exposure ({_duration(ins['exposure_s'])} = {exp_ps:.3g} ps; dashed line when it lies "
        f"within a factor 100 of the plotted times). {common}\n\n"
        + definition_list([
            t_item,
            ("τ", "ps", "integrated autocorrelation time of m along the order axis in stochastic "
             f"LLG runs on {plan['llg']['size']} x {plan['llg']['size']} sites (points with error "
             "bars), interpolated in ln τ at the schedule temperatures (crosses)")]),
        f"{_stem(plan)}_schedule.png": "Recommended heating schedule on the order-parameter "
        "curve of the "
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
