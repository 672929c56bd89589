"""Figure of the plan beyond the lattice: xi against |T - Tc| / Tc, measured and extrapolated."""

import numpy as np

__all__ = ["beyond_figure", "beyond_caption"]

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
    return ("Correlation length against the reduced distance from Tc = "
            f"{plan['tc_K']:.4g} K on log axes. Markers: the fitted form at the sweep's "
            "temperatures (the lattice points the fit uses have a film side of at least 6 ξ); "
            "lines and bands: the fit ξ = A |t|^-ν (1 + c |t|) extrapolated beyond the lattice, "
            "with one standard error (the error of Tc included); it stops where the error exceeds "
            "25 % or ξ exceeds 10 times the largest fitted value. Grey lines: the leading "
            "term A/|t| of the fit, whose crossing with the resolution gives the half-width of "
            "the resolved window about Tc; the width depends on A alone, the window's position "
            "on Tc and its error. Values: extrapolation.csv.")
