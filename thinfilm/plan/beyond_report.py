"""The plan beyond the lattice in words and in a figure (xi against |T - Tc| / Tc)."""

import numpy as np

from thinfilm._numbers import fmt_pm
from thinfilm.analysis.tc_rule import tc_text

__all__ = ["beyond_figure", "beyond_caption", "beyond_lines"]

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
    fig, (ax,) = new_figure(1, 1, 6.4, 4.6)
    for side, sel_side, mark in (("above Tc", t > tc, "o"), ("below Tc", t < tc, "s")):
        red = np.abs(t - tc) / tc
        m = sel_side & (flag == "measured")
        if m.any():
            ax.errorbar(red[m], x[m], yerr=e[m], fmt=mark, color=BLUE, ms=4,
                        label=f"fit at lattice points, {side}")
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
                label=f"A/|t| {side} Tc: sets the window width (its position carries the error of Tc)")
    ax.axhline(res, color=VERMILION, ls="--", label=f"resolution {res:g} nm")
    ax.axhline(plan["box_nm"] / 6, color=GREY, ls=":", label="film side / 6 (largest fitted)")
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set(xlabel="|T - Tc| / Tc (1)", ylabel="ξ (nm)", title="correlation length beyond the lattice")
    shared_legend(fig)
    return save_png(fig, path, dpi=120)


def beyond_caption(plan):
    """Caption markdown of the figure."""
    return ("Correlation length against the reduced distance from Tc on log axes ("
            f"{tc_text(plan.get('tc') or plan)}). Markers: the fitted form at the sweep's "
            "temperatures (the lattice points the fit uses have a film side of at least 6 ξ); "
            "lines and bands: the fit ξ = A |t|^-ν (1 + c |t|) extrapolated beyond the lattice, "
            "with one standard error (the error of Tc included); it stops where the error exceeds "
            "25 % or ξ exceeds 10 times the largest fitted value. Grey lines: the leading "
            "term A/|t| of the fit, whose crossing with the resolution gives the half-width of "
            "the resolved window about Tc; the width depends on A alone, the window's position "
            "on Tc and its error. Values: extrapolation.csv.")


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
        out.append(f"- xi (the S(k) length where it is defined, else the second moment) fitted "
                   f"as A |t|^-nu (1 + c |t|), nu = {fit['nu']:g}, to "
                   f"{fit['n_points']} points with film side >= 6 xi (largest used "
                   f"{max(v for v in fit['max_used_nm'].values() if v is not None):.3g} nm); "
                   f"values in extrapolation.csv are flagged measured / extrapolated / refused; "
                   f"extrapolation stops where the relative error exceeds "
                   f"{fit['rule']['max_rel_err']:g} or xi exceeds {fit['rule']['max_factor']:g} x "
                   f"the largest fitted value (values there are refused).")
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
    return out
