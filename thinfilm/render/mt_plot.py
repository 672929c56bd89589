"""Critical fit of a measured M(T) file: its figure (the curve with the fit, and log M vs
log t) and its output files."""

from pathlib import Path

import numpy as np

from thinfilm import _io
from thinfilm.analysis.mt_fit import CLASSES, _model, fit_magnetisation
from thinfilm.analysis.mt_table import read_curve

from .captions import write_captions
from .layout import OKABE_ITO, new_figure, save_png, shared_legend

__all__ = ["plot_mt_fit", "write_mt_fit"]


def plot_mt_fit(curve, res, out_dir, name="mt_fit.png"):
    """Two panels: M(T) with the fit and its window; |M| against 1 - T/Tc on log axes.

    Parameters
    ----------
    curve : dict
        From :func:`thinfilm.analysis.mt_table.read_curve`.
    res : dict
        From :func:`thinfilm.analysis.mt_fit.fit_magnetisation`.
    out_dir : path
        Folder of the PNG and of ``captions.md``.

    Returns
    -------
    Path of the PNG.
    """
    T = np.asarray(curve["temperature_K"], dtype=float)
    M = res["sign"] * np.asarray(curve["signal"], dtype=float)
    e = res["signal_err_used"]
    p = res["fit"]["params"]
    lo, hi = res["window_K"]
    unit = curve.get("signal_unit") or "a.u."
    label = curve.get("signal_name") or "signal"
    fig, axes = new_figure(1, 2, 4.3, 3.4)
    ax = axes[0]
    inside = (T >= lo) & (T <= hi)
    ax.axvspan(lo, hi, color="0.92", zorder=0)
    ax.errorbar(T[~inside], M[~inside], e[~inside], fmt="o", ms=3, color="0.55", lw=0.8,
                label="data outside the window")
    ax.errorbar(T[inside], M[inside], e[inside], fmt="o", ms=3, color=OKABE_ITO[0], lw=0.8,
                label="data in the fit window")
    tt = np.linspace(T[0], p[1], 400)[:-1]
    fitlab = (rf"fit: $T_c$ = {res['tc_K']:.4g} K, $\beta$ = {res['beta']:.3f}"
              + (r", with $(1 + b\,t^{\Delta})$" if res["correction"] else ""))
    win = tt >= lo
    ax.plot(tt[win], _model(p, tt[win], res["delta"]), color=OKABE_ITO[1], lw=1.4, label=fitlab)
    ax.plot(tt[~win], _model(p, tt[~win], res["delta"]), color=OKABE_ITO[1], lw=0.9, ls="--",
            label="fit continued outside its window")
    ax.axvline(res["tc_K"], color=OKABE_ITO[1], ls=":", lw=1)
    ax.set_xlabel("T (K)")
    ax.set_ylabel(f"{label} ({unit})" if res["sign"] > 0 else f"-{label} ({unit})")
    ax.set_title("measured curve and fit", fontsize=9)
    ax = axes[1]
    t = 1.0 - T / res["tc_K"]
    ok = (t > 0) & (M > 0)
    ax.errorbar(t[ok & ~inside], M[ok & ~inside], e[ok & ~inside], fmt="o", ms=3, color="0.55",
                lw=0.8)
    ax.errorbar(t[ok & inside], M[ok & inside], e[ok & inside], fmt="o", ms=3,
                color=OKABE_ITO[0], lw=0.8)
    tl = np.geomspace(max(t[ok].min(), 1e-6), t[ok].max(), 200)
    t_hi = 1 - lo / res["tc_K"]
    ax.plot(tl[tl <= t_hi], _model(p, res["tc_K"] * (1 - tl[tl <= t_hi]), res["delta"]),
            color=OKABE_ITO[1], lw=1.4)
    ax.plot(tl[tl > t_hi], _model(p, res["tc_K"] * (1 - tl[tl > t_hi]), res["delta"]),
            color=OKABE_ITO[1], lw=0.9, ls="--")
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_xlabel(r"$t = 1 - T/T_c$ (fitted $T_c$)")
    ax.set_ylabel(f"{label} ({unit})")
    ax.set_title(r"log-log: slope $\beta$ near $T_c$", fontsize=9)
    shared_legend(fig)
    path = save_png(fig, f"{out_dir}/{name}")
    write_captions(out_dir, {name: (
        f"Left: the measured {label} ({unit}) against temperature (K), error bars "
        f"({res['error_source']}); shaded: the fit window {lo:g} .. {hi:g} K; line: the fitted "
        f"M0 (1 - T/Tc)^beta{' (1 + b t^Delta)' if res['correction'] else ''}; dotted: the "
        "fitted Tc; dashed: the fit continued outside its window. Right: the same points "
        "against the reduced temperature t = 1 - T/Tc on "
        "log axes, where a pure power law is a straight line of slope beta.")})
    return path


def write_mt_fit(path, out_dir, *, window=None, correction="auto", delta=1.0,
                           t_max=0.3, signal=None, error=None):
    """Read a measured M(T) CSV, fit it, write ``mt_fit.json``, ``mt_fit_windows.csv`` and
    ``mt_fit.png`` (with ``captions.md``) into ``out_dir``.

    Parameters are those of :func:`thinfilm.analysis.mt_table.read_curve` and
    :func:`thinfilm.analysis.mt_fit.fit_magnetisation`; returns the result dict (without the
    raw arrays).
    """
    curve = read_curve(path, signal=signal, error=error)
    res = fit_magnetisation(curve, window=window, correction=correction, delta=delta,
                            t_max=t_max)
    out = Path(out_dir)
    png = plot_mt_fit(curve, res, out)
    cols = ["T_low_K", "T_high_K", "n", "tc_K", "beta", "beta_err", "p_value", "correction",
            "acceptable"]
    _io.write_csv(out / "mt_fit_windows.csv", cols, [[w[c] for c in cols]
                                                     for w in res["windows"]])
    keep = {k: v for k, v in res.items() if k not in ("fit", "signal_err_used", "windows")}
    keep.update({"source": str(path), "signal_name": curve["signal_name"],
                 "signal_unit": curve["signal_unit"], "figure": png.name,
                 "classes": [{"name": n, "beta": b, "beta_err": e, "source": s}
                             for n, b, e, s in CLASSES]})
    _io.write_json(out / "mt_fit.json", keep)
    return keep
