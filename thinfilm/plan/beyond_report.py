"""The plan beyond the lattice in words and in a figure (xi against |T - Tc| / Tc)."""

import numpy as np

from thinfilm._numbers import fmt_pm
from thinfilm.analysis.tc_rule import tc_text

__all__ = ["beyond_figure", "beyond_caption", "beyond_lines", "infinite_film_overlay",
           "INFINITE_FILM_CURVE"]

#: Legend entry and caption text of :func:`infinite_film_overlay`.
INFINITE_FILM_CURVE = (
    "ξ infinite film",
    "correlation length of the infinite film (extrapolation.csv): filled where a lattice size "
    "converged at that temperature, open where no size did and the value rests on finite-size "
    "scaling of all sizes; the second-moment curve of the largest lattice is cut down by its "
    "box there")

BLUE, VERMILION, SKY, GREY = "#0072B2", "#D55E00", "#56B4E9", "#7F7F7F"


def _arr(values):
    return np.array([np.nan if v is None else v for v in values], dtype=float)


def beyond_figure(plan, path):
    """Log-log xi against |t| on both sides of Tc: points on the lattice (markers), the fit
    beyond it (line and band), the instrument resolution; returns the path, or None without
    an extrapolation."""
    from thinfilm.render.layout import new_figure, save_png, shared_legend

    cur = (plan.get("extrapolation") or {}).get("curve")
    if not cur:
        return None
    tc = plan["tc_K"]
    t = np.asarray(cur["temperature_K"], dtype=float)
    x, e = _arr(cur["correlation_length_nm"]), _arr(cur["correlation_length_err_nm"])
    flag = np.array(cur["flag"])
    conv = _arr(cur.get("converged_length_nm") or [None] * t.size)
    conv_e = _arr(cur.get("converged_length_err_nm") or [None] * t.size)
    fig, (ax,) = new_figure(1, 1, 6.4, 4.6)
    for side, sel_side, mark in (("above Tc", t > tc, "o"), ("below Tc", t < tc, "s")):
        red = np.abs(t - tc) / tc
        m = sel_side & (flag == "measured")
        if m.any():
            ax.errorbar(red[m], x[m], yerr=e[m], fmt=mark, color=BLUE, ms=4,
                        label=f"fit where a size converged, {side}")
        f = sel_side & (flag == "finite-size scaling")
        if f.any():
            ax.errorbar(red[f], x[f], yerr=e[f], fmt=mark, color=BLUE, mfc="white", ms=5,
                        label=f"finite-size scaling (no size converged), {side}")
        c = sel_side & np.isfinite(conv) & (conv > 0)
        if c.any():
            ax.errorbar(red[c], conv[c], yerr=conv_e[c], fmt=mark, color=VERMILION, ms=3,
                        mfc=VERMILION, alpha=0.8, lw=0.8,
                        label=f"converged lattice value, {side}")
        ex = sel_side & (flag == "extrapolated")
        if ex.any():
            o = np.argsort(red[ex])
            rr, xx, ee = red[ex][o], x[ex][o], e[ex][o]
            ax.fill_between(rr, xx - ee, xx + ee, color=SKY, alpha=0.35, lw=0)
            ax.plot(rr, xx, "-" if side == "above Tc" else "--", color=BLUE, lw=1,
                    label=f"extrapolated, {side}")
    res = plan["instrument"]["resolution_nm"]
    fit = (plan["extrapolation"].get("fits") or {}).get("correlation_length") or {}
    for key, ls, side in (("amplitude_nm", "-.", "above"), ("amplitude_below_nm", ":", "below")):
        a = fit.get(key)
        if a is None or not np.isfinite(a) or side not in fit.get("sides", ()):
            continue
        r = np.geomspace(0.3 * a / res, 3e-2, 30)
        ax.plot(r, a / r, ls, color=GREY, lw=1,
                label=f"A/|t| {side} Tc: sets the window width "
                      "(its position carries the error of Tc)")
    ax.axhline(res, color=VERMILION, ls="--", label=f"resolution {res:g} nm")
    ax.axhline(plan["box_nm"] / 10, color=GREY, ls=":",
               label="film side / 10 (largest sweep size)")
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set(xlabel="|T - Tc| / Tc (1)", ylabel="ξ (nm)",
           title="correlation length beyond the lattice")
    shared_legend(fig)
    return save_png(fig, path, dpi=120)


def infinite_film_overlay(ax, plan):
    """Infinite-film xi at the sweep's temperatures on a lengths-against-T axis: filled where
    measured (a size converged), open where from finite-size scaling. Returns True if drawn."""
    cur = (plan.get("extrapolation") or {}).get("curve")
    if not cur:
        return False
    t = np.asarray(cur["temperature_K"], dtype=float)
    x, e = _arr(cur["correlation_length_nm"]), _arr(cur["correlation_length_err_nm"])
    flag = np.asarray(cur["flag"])
    at_sweep = np.isin(np.round(t, 6), np.round(_arr(plan["sweep_curves"]["temperature_K"]), 6))
    drawn = False
    for which, face in (("measured", VERMILION), ("finite-size scaling", "white")):
        sel = at_sweep & (flag == which) & np.isfinite(x)
        if sel.any():
            ax.errorbar(t[sel], x[sel], yerr=e[sel], fmt="D", ms=5, color=VERMILION, mfc=face,
                        capsize=2, lw=1,
                        label=f"{INFINITE_FILM_CURVE[0]} ({which})")
            drawn = True
    return drawn


def beyond_caption(plan):
    """Caption markdown of the figure."""
    return ("Correlation length of the infinite film against the reduced distance from Tc on log "
            f"axes ({tc_text(plan.get('tc') or plan)}). Filled blue markers: the fitted form at "
            "sweep "
            "temperatures where a lattice size converged (film side >= 10 ξ, or two sizes "
            "agree); open blue markers: where no size converged and the value rests on the "
            "finite-size scaling form ξ_L = L f(t L^(1/ν)) fitted to every size; small "
            "vermilion markers: the converged lattice values themselves. "
            "Lines and bands: the fit ξ = A |t|^-ν (1 + c |t|) extrapolated beyond the lattice, "
            "with one standard error (the error of Tc included); it stops where the error exceeds "
            "25 % or ξ exceeds 10 times the largest fitted value. Grey lines: the leading "
            "term A/|t| of the fit, whose crossing with the resolution gives the half-width of "
            "the resolved window about Tc; the width depends on A alone, the window's position "
            "on Tc and its error. Values: extrapolation.csv.")


def _beyond_summary(plan):
    """Console lines for large-lattice points the plan asks for (the resolved window itself
    is printed once, under 'resolved')."""
    out = []
    req = (plan.get("extrapolation") or {}).get("large_lattice_request")
    if req and req.get("commands"):
        out.append(f"  not measured xi at {', '.join(f'{t:.5g}' for t in req['temperatures_K'])} "
                   f"K rests on finite-size scaling; to measure it (L = "
                   f"{', '.join(str(x) for x in req.get('sizes', [req['size']]))}):")
        out += [f"               {c}" for c in req["commands"]]
    return out


def beyond_lines(plan):
    """plan.md section: what is measured on the lattice and what is extrapolated beyond it."""
    b = plan.get("extrapolation") or {}
    out = ["", "## Beyond the lattice", ""]
    c = b.get("collapse")
    if c:
        u = c["universality"]
        out.append(f"- Finite-size scaling collapse of U4 (sizes {c['sizes']}): nu = "
                   f"{fmt_pm(c['nu'], c['nu_err'], unit='')}, chi2/dof = {c['chi2_dof']:.2g} "
                   f"(its Tc is one of the cross-checks of Tc under Answers). "
                   f"{u.get('verdict', '')}")
    elif b.get("collapse_refused"):
        out.append(f"- No scaling collapse: {b['collapse_refused']}")
    if b.get("extrapolation_refused"):
        out.append(f"- No extrapolation: {b['extrapolation_refused']}")
        return out
    fit = (b.get("fits") or {}).get("correlation_length")
    if fit:
        how = ("the finite-size scaling form xi_L = xi [1 - exp(-(c L/xi)^q)]^(1/q) = "
               "L f(t L^(1/nu)) to every size (xi/L at Tc "
               + ", ".join(f"{k} {v:.3g}" for k, v in (fit.get("xi_over_L_at_tc") or {}).items())
               + f", q = {fit.get('crossover_q', float('nan')):.3g})"
               if fit.get("finite_size") else "the rows converged in the film size")
        out.append(f"- xi (second moment, S(0) from the whole run) fitted as A |t|^-nu "
                   f"(1 + c |t|), nu = {fit['nu']:g}, "
                   f"A = {fmt_pm(fit['amplitude_nm'], fit['amplitude_err_nm'], unit='nm')}, "
                   f"through {how}: {fit['n_points']} points, "
                   f"{fit.get('n_converged_rows', 0)} rows converged in size (film side >= 10 "
                   f"xi, or two sizes agree within 2 errors). Values in extrapolation.csv are "
                   f"flagged measured (a size converged) / finite-size scaling / extrapolated / "
                   f"refused; extrapolation stops where the relative error exceeds "
                   f"{fit['rule']['max_rel_err']:g} or xi exceeds {fit['rule']['max_factor']:g} x "
                   f"the largest fitted value (values there are refused).")
    used = b.get("large_lattice_used")
    if used:
        out.append(f"- Large-lattice points from {used['folder']} (L = {used['sizes']}, T = "
                   f"{used['temperatures_K']} K) are part of these fits.")
    req = b.get("large_lattice_request")
    if req:
        cmd = ("; ".join(f"`{c}`" for c in req["commands"]) if req.get("commands")
               else req.get("how", ""))
        out.append(f"- Not measured: at T = {', '.join(f'{t:.5g}' for t in req['temperatures_K'])}"
                   f" K {req['why']}. To measure them, run L = "
                   f"{', '.join(str(x) for x in req.get('sizes', [req['size']]))} (largest film "
                   f"side {req['film_side_nm']:.3g} nm"
                   + ("" if req.get("enough") else f", short of the {req['needed_side_nm']:.3g} "
                      "nm that 10 xi needs: the two largest sizes must then agree")
                   + f") with cluster moves: {cmd}.")
    pts = [p for p in plan.get("points") or [] if "correlation_length_flag" in p]
    table = []
    if pts:
        table += ["", "Correlation length at the schedule temperatures (the xi column of the "
                "schedule above): the infinite film beside the largest lattice's own "
                "kernel-smoothed value.", "",
                "| T (K) | xi, infinite film (nm) | how | xi on the lattice (nm) |",
                "|---|---|---|---|"]
        for p in pts:
            table.append(f"| {p['temperature_K']:.4g} | {p['correlation_length_nm']:.3g} | "
                         f"{p['correlation_length_flag']} | "
                         f"{p['correlation_length_lattice_nm']:.3g} |")
        table.append("")
        table.append("how: measured (interpolated between sweep temperatures where a size "
                     "converged), finite-size scaling, extrapolated, or finite-size limited (no "
                     "converged or scaled value reaches: the lattice's own value, cut down by "
                     "the box).")
    if plan.get("resolved_window_extrapolated"):
        out.append("- The resolved window under Answers is Tc -+ the half-widths below "
                   "(extrapolated: the lattice's xi never reaches the resolution).")
    elif plan.get("resolved_window_K") is not None:
        out.append("- The resolved window under Answers is read from the lattice (smoothed "
                   "second-moment xi against the resolution); the half-widths below are the "
                   "extrapolation's, a different method, not used for it.")
    hw = b.get("resolved_halfwidth_K") or {}
    if hw:
        out.append("- Half-width about Tc of the window where the extrapolated xi exceeds the "
                   "resolution (from the fitted amplitude, independent of the error of Tc): "
                   + ", ".join(
                       f"{s} Tc {fmt_pm(v[0], v[1], digits=2)}" for s, v in hw.items()) + ".")
    if b.get("tc_note"):
        out.append(f"- Note: {b['tc_note']}.")
    return out + table
