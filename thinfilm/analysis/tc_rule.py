"""One critical temperature per sweep, chosen by a stated rule, or what the data cannot tell.

Every estimator of :mod:`thinfilm.analysis.critical` and :mod:`thinfilm.analysis.scaling` is
run on the sweep table, and each estimate is checked against the data it stands on:

* a Binder crossing of two sizes counts only when the difference U4(L_large) - U4(L_small) is
  significantly positive below the crossing and significantly negative above it (combined
  z = sum z / sqrt k of the k = 1..3 nearest points on that side above 2; for an easy-axis
  film U4 of the larger size lying 2 errors above U* below it, or below U* above it, shows
  the side as well), and, for an easy-axis film (2D Ising class), when U4 of the larger size
  falls through the universal value U* = 0.61069 within the sweep;
* a susceptibility peak counts only when points on both sides lie significantly (> 2
  combined standard errors) below the largest value and, for an easy-axis film, U4 of that
  size falls through U* across it;
* the U4 collapse counts when a crossing counts and the collapse's Tc lies inside the sweep.

:data:`RULE` says which counted estimate becomes Tc. Its error combines the estimate's
statistical error with the largest distance to another counted estimate, so the quoted Tc
covers the disagreement between the methods; the others are listed as cross-checks, and a
warning names those that disagree beyond their statistical errors. When nothing counts, there
is no Tc: ``status`` and ``message`` say what the data show (ordered at every temperature, too
few independent samples, ...) and ``fix`` names the scenario keys that act in the set's mode.
"""

import math

import numpy as np

from thinfilm._numbers import fmt_pm
from thinfilm.analysis.tc_methods import (
    MIN_EFFECTIVE,
    U_STAR_ISING,
    Z_SIDE,
    _col,
    _collapse,
    _drift,
    _fmt,
    _ising,
    _mode_of,
    _pair,
    _peak,
    clean_json,
    split_by_size,
)

__all__ = ["RULE", "STATUS_TEXT", "U_STAR_ISING", "MIN_EFFECTIVE", "choose_tc", "split_by_size",
           "tc_text", "cross_check_lines", "mode_keys"]

RULE = ("Tc is, in this order of preference: the Binder crossings extrapolated to infinite size "
        "(three or more sizes, the two largest pairs counted); the Binder crossing of the two "
        "largest sizes; with one size, the susceptibility peak. An estimate counts only where "
        "the data bracket it (crossing with significant differences on both sides and U4 "
        "falling through the universal value; peak with significantly lower points on both "
        "sides). The error combines the statistical error and the largest distance to another "
        "counted estimate (the other crossings, the U4 collapse, the susceptibility peak of the "
        "largest size) in quadrature.")

#: Words for each status of :func:`choose_tc`.
STATUS_TEXT = {"found": "found", "above_sweep": "Tc lies above the sweep",
               "below_sweep": "Tc lies below the sweep",
               "not_bracketed": "the data do not bracket it",
               "unequilibrated": "the set did not equilibrate",
               "too_few_temperatures": "too few temperatures", "no_data": "no data"}

_KEYS = {
    "mc-set": {"samples": "dynamics.sweeps.samples", "warmup": "dynamics.sweeps.warmup"},
    "llg-set": {"samples": "dynamics.duration", "warmup": "dynamics.warmup"},
}


def mode_keys(mode):
    """{"samples": key, "warmup": key} of the scenario keys that lengthen a set in ``mode``."""
    return _KEYS.get(mode, {"samples": "dynamics.sweeps.samples (Monte Carlo) or "
                                       "dynamics.duration (LLG)",
                            "warmup": "dynamics.sweeps.warmup (Monte Carlo) or dynamics.warmup "
                                      "(LLG)"})


def _describe(table, sizes, ising, mode, entries):
    """(status, message, fix) when no estimate counts."""
    keys = mode_keys(mode)
    L = sizes[-1]
    d = table[L]
    t = d["temperature_K"]
    u = _col(d, "binder")
    m = _col(d, "m_abs")
    thr = U_STAR_ISING if ising else 0.5
    fu = np.isfinite(u)
    fm = np.isfinite(m)
    lo, hi = float(np.min(t)), float(np.max(t))
    u_txt = (f"U4 of L = {L} {np.min(u[fu]):.2f}-{np.max(u[fu]):.2f}" if fu.any() else "")
    m_txt = (f"<|m|> {np.min(m[fm]):.2f}-{np.max(m[fm]):.2f}" if fm.any() else "")
    shown = ", ".join(x for x in (u_txt, m_txt) if x)
    relax = (f"; in an LLG set this can also mean the points never relaxed from their start: "
             f"lengthen {keys['warmup']} and {keys['samples']}" if mode == "llg-set" else "")
    peak = next((e for e in entries if e["method"] == "susceptibility_peak"
                 and e["sizes"] == [L]), None)
    k = int(np.nanargmax(_col(d, "susceptibility"))) if np.isfinite(
        _col(d, "susceptibility")).any() else None
    if fu.any():
        ordered_top = bool(u[fu][np.argmax(t[fu])] > thr)
        disordered_bottom = bool(u[fu][np.argmin(t[fu])] < thr)
    else:  # no U4: the susceptibility's largest value at an end of the sweep
        ordered_top = k is not None and k == t.size - 1
        disordered_bottom = k is not None and k == 0
    what = (f"U4 stays above the universal value {thr:g}" if ising else
            "U4 stays near its ordered value") if fu.any() else "the susceptibility still rises"
    if ordered_top and not disordered_bottom:
        return ("above_sweep",
                f"ordered at every temperature up to {hi:g} K ({shown}; {what}): Tc lies above "
                f"the sweep{relax}.",
                f"extend the temperature range upward (temperatures above {hi:g} K)")
    if disordered_bottom and not ordered_top:
        what = (f"U4 stays below the universal value {thr:g}" if fu.any() else
                "the susceptibility falls from the start")
        return ("below_sweep",
                f"disordered at every temperature from {lo:g} K ({shown}; {what}): Tc lies "
                f"below the sweep{relax}.",
                f"extend the temperature range downward (temperatures below {lo:g} K)")
    notes = "; ".join(f"{e['label']}: {e['note']}" for e in entries if e.get("note")
                      and e["method"] in ("binder_crossing", "susceptibility_peak"))
    why = notes or (peak or {}).get("note") or "no estimate is bracketed by the data"
    fix = (f"add temperatures around the transition (a finer temperature step), a further "
           f"size (sizes) for Binder crossings, or more samples per point ({keys['samples']})")
    return ("not_bracketed",
            f"the sweep {lo:g}-{hi:g} K does not locate Tc ({shown}): {why}.", fix)


def _equilibration(table, sizes, mode):
    """(status, message, fix) when the largest size did not equilibrate, else None; plus the
    list of points with few independent samples."""
    few = []
    for L in sizes:
        d = table[L]
        n = _col(d, "n_effective")
        for T, v in zip(d["temperature_K"], n, strict=True):
            if math.isfinite(v) and v < MIN_EFFECTIVE:
                few.append([int(L), float(T), float(v)])
    L = sizes[-1]
    n = _col(table[L], "n_effective")
    fin = n[np.isfinite(n)]
    if fin.size and np.mean(fin < MIN_EFFECTIVE) > 0.5:
        keys = mode_keys(mode)
        kind = {"llg-set": "LLG ", "mc-set": "Monte Carlo "}.get(mode, "")
        n_low = int(np.sum(fin < MIN_EFFECTIVE))
        return ("unequilibrated",
                f"the {kind}set did not equilibrate: {n_low} "
                f"of {fin.size} points of L = {L} have fewer than {MIN_EFFECTIVE} effectively "
                f"independent samples ({np.min(fin):.0f}-{np.max(fin):.0f}); the runs are "
                f"shorter than the relaxation of the order, so U4, <|m|> and their errors may "
                f"still carry the starting state.",
                f"lengthen the sampling per point ({keys['samples']}) and the warm-up "
                f"({keys['warmup']})"), few
    return None, few


# ----------------------------------------------------------------------------- the rule


def choose_tc(table, *, anisotropy=None, mode=None, n_boot=400, seed=0):
    """Tc of a sweep by :data:`RULE`, or the statement of what the data cannot tell.

    Parameters
    ----------
    table : dict
        {L: {column: array over increasing temperature}} (:func:`split_by_size`), or the
        observables table itself (columns size, temperature_K, ...).
    anisotropy : float, optional
        Single-ion anisotropy (any unit; its sign): K > 0 (2D Ising class) enables the
        universal-value check and the extrapolation of the crossings in size.
    mode : str, optional
        "mc-set" or "llg-set": the fix names the keys that act in that mode (taken from the
        table's ``method`` column when not given).
    n_boot, seed : int
        Bootstrap replicas and seed of the estimators.

    Returns
    -------
    dict (JSON-ready)
        ``status`` ("found", "above_sweep", "below_sweep", "not_bracketed", "unequilibrated",
        "too_few_temperatures" or "no_data"), ``tc_K``, ``tc_err_K`` (None unless found),
        ``tc_stat_err_K``, ``tc_sys_err_K``, ``method`` and ``method_text`` of the chosen
        estimate, ``rule``, ``cross_checks`` (every estimate with ``bracketed`` and ``note``),
        ``disagreement`` (warning text or None), ``message`` and ``fix`` (when not found),
        ``range_K``, ``sizes``, ``mode``, ``few_sample_points`` ([L, T, n_effective]),
        ``collapse`` (the U4 collapse fit summary or None), ``pairs`` and ``u_cross``.
    """
    if "size" in table and not isinstance(next(iter(table)), (int, np.integer)):
        mode = mode or _mode_of(table)
        table = split_by_size(table)
    sizes = sorted(int(L) for L in table if table[L]["temperature_K"].size)
    ising = _ising(anisotropy)
    base = {"status": None, "tc_K": None, "tc_err_K": None, "tc_stat_err_K": None,
            "tc_sys_err_K": None, "method": None, "method_text": None, "rule": RULE,
            "cross_checks": [], "disagreement": None, "message": None, "fix": None,
            "range_K": None, "sizes": sizes, "mode": mode, "few_sample_points": [],
            "collapse": None, "pairs": [], "u_cross": None,
            "universal_u4": U_STAR_ISING if ising else None}
    if not sizes:
        return clean_json(dict(base, status="no_data", message="the table holds no rows",
                               fix="run the sweep first"))
    allt = np.concatenate([table[L]["temperature_K"] for L in sizes])
    base["range_K"] = [float(np.min(allt)), float(np.max(allt))]
    nt = table[sizes[-1]]["temperature_K"].size
    if nt < 3:
        return clean_json(dict(
            base, status="too_few_temperatures",
            message=f"L = {sizes[-1]} has {nt} temperature{'s' if nt != 1 else ''}; Tc needs "
                    f"points on both sides of the transition",
            fix="give temperature as a {start, stop, step} range of at least 5 temperatures "
                "through the expected Tc"))
    eq, few = _equilibration(table, sizes, mode)
    base["few_sample_points"] = few
    entries = []
    pairs = [_pair(table, a, b, ising, n_boot, seed + 7 * i)
             for i, (a, b) in enumerate(zip(sizes[:-1], sizes[1:], strict=True))]
    entries += pairs
    drift = _drift(pairs) if ising and len(pairs) >= 2 else None
    if drift:
        entries.append(drift)
        if not base["range_K"][0] < drift["tc_K"] < base["range_K"][1]:
            drift.update(bracketed=False, note="not bracketed: the extrapolation leaves the sweep")
            drift = None
    for i, L in enumerate(sizes):
        entries.append(_peak(table[L], L, n_boot, seed + 101 + i, in_error=(L == sizes[-1]),
                             ising=ising))
    counted_pairs = [p for p in pairs if p["bracketed"]]
    if drift:
        chosen = drift
    elif pairs and pairs[-1]["bracketed"]:
        chosen = pairs[-1]
    elif counted_pairs:
        chosen = counted_pairs[-1]
    elif len(sizes) == 1 and entries[-1]["bracketed"]:
        chosen = entries[-1]
    else:
        chosen = None
    if len(sizes) >= 2:
        # the collapse's window selection depends on its starting Tc: try the chosen Tc, the
        # counted crossings (largest sizes first), then the middle of the sweep
        guesses = ([chosen["tc_K"]] if chosen else []) + [p["tc_K"] for p in
                                                          reversed(counted_pairs)]
        guesses.append(float(np.median(table[sizes[-1]]["temperature_K"])))
        for guess in guesses:
            fit, why = _collapse(table, sizes, guess)
            if fit is not None:
                break
        if fit is not None:
            inside = base["range_K"][0] < fit["tc_K"] < base["range_K"][1]
            both = fit["x_range"][0] < 0 < fit["x_range"][1]
            c = {"method": "u4_collapse", "label": f"U4 collapse (sizes {fit['sizes']})",
                 "sizes": fit["sizes"], "tc_K": fit["tc_K"], "tc_err_K": fit["tc_err_K"],
                 "bracketed": bool(counted_pairs and inside and both), "in_error": True,
                 "nu": fit["nu"], "nu_err": fit["nu_err"], "chi2_dof": fit["chi2_dof"]}
            if not c["bracketed"]:
                c["note"] = ("not bracketed: " + ("no Binder crossing is bracketed" if not
                             counted_pairs else "its Tc or its points lie on one side only"))
            entries.append(c)
            base["collapse"] = {k: fit[k] for k in (
                "tc_K", "tc_err_K", "nu", "nu_err", "corr_tc_nu", "chi2_dof", "dof",
                "x_window", "x_range", "n_points", "sizes", "error_method",
                "errors_scaled_by")}
            base["collapse"]["quantities"] = ["binder"]
        else:
            entries.append({"method": "u4_collapse", "label": "U4 collapse", "sizes": sizes,
                            "tc_K": None, "tc_err_K": None, "bracketed": False,
                            "in_error": True,
                            "note": "no collapse: " + str(why).removeprefix("collapse: ")})
    base["cross_checks"] = entries
    base["pairs"] = [{"sizes": p["sizes"], "tc_K": p["tc_K"], "tc_err_K": p["tc_err_K"],
                      "u_cross": p.get("u_cross"), "u_cross_err": p.get("u_cross_err"),
                      "bracketed": p["bracketed"]} for p in pairs]
    if eq is not None:
        status, msg, fix = eq
        return clean_json(dict(base, status=status, message=msg, fix=fix))
    if chosen is None:
        status, msg, fix = _describe(table, sizes, ising, mode, entries)
        return clean_json(dict(base, status=status, message=msg, fix=fix))
    tc, stat = chosen["tc_K"], chosen["tc_err_K"] or 0.0
    others = [e for e in entries if e is not chosen and e["bracketed"] and e["in_error"]
              and e["tc_K"] is not None]
    sys = max((abs(e["tc_K"] - tc) for e in others), default=0.0)
    chosen["chosen"] = True
    off = [e for e in others
           if abs(e["tc_K"] - tc) > Z_SIDE * math.hypot(stat, e["tc_err_K"] or 0.0)]
    disagreement = None
    if off:
        disagreement = ("the Tc estimates disagree beyond their statistical errors: "
                        + ", ".join(f"{e['label']} {_fmt(e['tc_K'], e['tc_err_K'])}" for e in off)
                        + f" against Tc from the {chosen['label']} (statistical error "
                          f"{fmt_pm(stat, None, digits=2)}); the quoted error of Tc includes the "
                          "largest difference. Larger sizes or more samples near Tc would tell "
                          "which is right.")
    u_cross = chosen.get("u_cross")
    return clean_json(dict(base, status="found", tc_K=tc, tc_err_K=math.hypot(stat, sys),
                           tc_stat_err_K=stat, tc_sys_err_K=sys, method=chosen["method"],
                           method_text=chosen["label"], disagreement=disagreement,
                           u_cross=u_cross))


# ----------------------------------------------------------------------------- texts


def tc_text(rec, *, pm="+-", symbol="Tc"):
    """'Tc = 41.6 +- 0.4 K (Binder crossing L = 32/64)', or 'Tc not determined (...)': the one
    text of Tc that every output prints."""
    if not rec or rec.get("status") not in (None, "found") or rec.get("tc_K") is None:
        status = (rec or {}).get("status") or "no estimate"
        return f"{symbol} not determined ({STATUS_TEXT.get(status, status.replace('_', ' '))})"
    how = rec.get("method_text") or str(rec.get("method") or "").replace("_", " ")
    return f"{symbol} = {fmt_pm(rec['tc_K'], rec.get('tc_err_K'), pm=pm)}" + (
        f" ({how})" if how else "")


def cross_check_lines(rec):
    """One line per cross-check: 'Binder crossing L = 16/32: 42.02 +- 0.14 K (counted, inside
    the error)'; smaller sizes' peaks are bracketed but not in the error."""
    out = []
    for e in (rec or {}).get("cross_checks") or []:
        if e.get("chosen"):
            continue
        val = _fmt(e["tc_K"], e.get("tc_err_K")) if e.get("tc_K") is not None else "none"
        state = ("counted, inside the error" if e.get("bracketed") and e.get("in_error")
                 else "bracketed, not in the error" if e.get("bracketed") else "not counted")
        note = f"; {e['note']}" if e.get("note") else ""
        out.append(f"{e['label']}: {val} ({state}{note})")
    return out
