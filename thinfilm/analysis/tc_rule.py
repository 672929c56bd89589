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
import warnings

import numpy as np

from thinfilm._numbers import fmt_pm

__all__ = ["RULE", "STATUS_TEXT", "U_STAR_ISING", "MIN_EFFECTIVE", "choose_tc", "split_by_size",
           "tc_text", "cross_check_lines", "mode_keys"]

#: U4 at Tc of the 2D Ising class on periodic square lattices, U* = 0.61069 (Kamieniarz and
#: Bloete, J. Phys. A 26, 201 (1993); value from memory).
U_STAR_ISING = 0.61069
#: Fewer effectively independent samples than this make error bars unreliable (as in
#: :mod:`thinfilm.analysis.thermo`).
MIN_EFFECTIVE = 50
Z_SIDE = 2.0  # significance (standard errors) of a point on either side of a crossing or peak
#: Exponents x = 1/nu + omega of the drift of the crossings, T*(L) - Tc ~ L^-x (Binder, Z. Phys.
#: B 43, 119 (1981)); nu = 1 (2D Ising) and a correction exponent omega between 1 and 2 (range
#: from memory): the extrapolation is the mean of the two, its systematic error half their
#: difference.
DRIFT_EXPONENTS = (2.0, 3.0)

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


def split_by_size(tab):
    """{L: {numeric column: array over increasing temperature}} of an observables table."""
    size = np.asarray(tab["size"], dtype=np.float64)
    out = {}
    for L in np.unique(size[np.isfinite(size)]):
        keep = (size == L) & np.isfinite(np.asarray(tab["temperature_K"], dtype=np.float64))
        order = np.argsort(np.asarray(tab["temperature_K"], dtype=np.float64)[keep])
        out[int(L)] = {k: np.asarray(v)[keep][order] for k, v in tab.items()
                       if np.asarray(v).dtype.kind == "f"}
    return out


def _mode_of(tab):
    m = tab.get("method")
    if m is None:
        return None
    vals = {str(x) for x in np.asarray(m).ravel()}
    if vals == {"llg"}:
        return "llg-set"
    if vals == {"monte-carlo"}:
        return "mc-set"
    return None


def _col(d, name):
    v = d.get(name)
    return np.full(d["temperature_K"].size, np.nan) if v is None else np.asarray(v, float)


def _ising(anisotropy):
    return anisotropy is not None and math.isfinite(anisotropy) and anisotropy > 0


def _fmt(v, e=None):
    return fmt_pm(v, e)


def clean_json(v):
    """JSON-ready copy: arrays and tuples to lists, NaN and inf to None."""
    if isinstance(v, dict):
        return {k: clean_json(x) for k, x in v.items()}
    if isinstance(v, (list, tuple, np.ndarray)):
        return [clean_json(x) for x in (v.tolist() if isinstance(v, np.ndarray) else v)]
    if isinstance(v, (bool, np.bool_)):
        return bool(v)
    if isinstance(v, (float, np.floating)):
        return float(v) if math.isfinite(v) else None
    if isinstance(v, np.integer):
        return int(v)
    return v


# ----------------------------------------------------------------------------- estimates


def _pair(table, a, b, ising, n_boot, seed):
    """Binder crossing of sizes a < b with its bracketing check (a cross-check entry)."""
    from thinfilm.analysis.critical import side_significance, tc_from_binder_crossing

    da, db = table[a], table[b]
    ta, tb = np.round(da["temperature_K"], 9), np.round(db["temperature_K"], 9)
    common = np.intersect1d(ta, tb)
    ia = np.searchsorted(ta, common)
    ib = np.searchsorted(tb, common)
    ua, ea = _col(da, "binder")[ia], _col(da, "binder_err")[ia]
    ub, eb = _col(db, "binder")[ib], _col(db, "binder_err")[ib]
    ok = np.isfinite(ua) & np.isfinite(ub) & np.isfinite(ea) & np.isfinite(eb)
    t, ua, ea, ub, eb = common[ok], ua[ok], ea[ok], ub[ok], eb[ok]
    entry = {"method": "binder_crossing", "label": f"Binder crossing L = {a}/{b}", "sizes": [a, b],
             "tc_K": None, "tc_err_K": None, "bracketed": False, "in_error": True}
    if t.size < 3:
        entry["note"] = f"{t.size} temperatures with U4 and its error for both sizes (need 3)"
        return entry
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            r = tc_from_binder_crossing(t, {a: (ua, ea), b: (ub, eb)}, n_boot=n_boot, seed=seed)
    except ValueError as exc:
        entry["note"] = str(exc)
        return entry
    tc = r["tc_K"]
    entry.update(tc_K=tc, tc_err_K=r["tc_err_K"], u_cross=r["u_cross"],
                 u_cross_err=r["u_cross_err"])
    z = (ub - ua) / np.maximum(np.hypot(ea, eb), 1e-300)
    below, above = t < tc, t > tc
    reasons = []
    if not (t[0] < tc < t[-1]):
        reasons.append("the crossing lies at the end of the sweep")
    # a side shows its phase by U4(L_large) - U4(L_small) or, in the Ising class, by
    # U4(L_large) significantly above (below) the universal value
    ord_u = ising and np.any(ub[below] - U_STAR_ISING > Z_SIDE * eb[below])
    dis_u = ising and np.any(U_STAR_ISING - ub[above] > Z_SIDE * eb[above])
    if side_significance(z[below][::-1]) <= Z_SIDE and not ord_u:
        reasons.append(f"the points below it do not show U4(L = {b}) above U4(L = {a}) by more "
                       f"than {Z_SIDE:g} standard errors")
    if side_significance(-z[above]) <= Z_SIDE and not dis_u:
        reasons.append(f"the points above it do not show U4(L = {b}) below U4(L = {a}) by "
                       f"more than {Z_SIDE:g} standard errors")
    if ising and not (np.any(ub[below] > U_STAR_ISING) and np.any(ub[above] < U_STAR_ISING)):
        reasons.append(f"U4(L = {b}) does not fall through the universal value "
                       f"{U_STAR_ISING:g} across it")
    entry["bracketed"] = not reasons
    if reasons:
        entry["note"] = "not bracketed: " + "; ".join(reasons)
    return entry


def _drift(pairs):
    """Crossings of the counted pairs extrapolated in size (T*(L) = Tc + a L^-x)."""
    use = [p for p in pairs if p["bracketed"]]
    if len(use) < 2 or not (use[-1] is pairs[-1] and use[-2] is pairs[-2]):
        return None
    lg = np.array([math.sqrt(p["sizes"][0] * p["sizes"][1]) for p in use])
    tt = np.array([p["tc_K"] for p in use])
    ee = np.array([max(p["tc_err_K"], 1e-12) for p in use])
    est, errs = [], []
    for x in DRIFT_EXPONENTS:
        s = lg**-x
        a = np.vstack([np.ones_like(s), s]).T / ee[:, None]
        coef, *_ = np.linalg.lstsq(a, tt / ee, rcond=None)
        cov = np.linalg.pinv(a.T @ a)
        est.append(coef[0])
        errs.append(math.sqrt(cov[0, 0]))
    tc = float(np.mean(est))
    stat = float(max(errs))
    sys = 0.5 * abs(est[0] - est[1])
    return {"method": "binder_crossing_extrapolated",
            "label": "Binder crossings extrapolated in size (L = "
                     + ", ".join(f"{p['sizes'][0]}/{p['sizes'][1]}" for p in use) + ")",
            "sizes": sorted({L for p in use for L in p["sizes"]}), "tc_K": tc,
            "tc_err_K": math.hypot(stat, sys), "bracketed": True, "in_error": True,
            "note": f"T*(L) = Tc + a L^-x fitted for x = {DRIFT_EXPONENTS[0]:g} and "
                    f"{DRIFT_EXPONENTS[1]:g}; the mean of the two, half their difference in "
                    f"the error"}


def _peak(d, L, n_boot, seed, in_error, ising=False):
    from thinfilm.analysis.critical import tc_from_peaks

    t, chi, err = d["temperature_K"], _col(d, "susceptibility"), _col(d, "susceptibility_err")
    entry = {"method": "susceptibility_peak", "label": f"susceptibility peak L = {L}",
             "sizes": [L], "tc_K": None, "tc_err_K": None, "bracketed": False,
             "in_error": in_error}
    ok = np.isfinite(t) & np.isfinite(chi)
    t, chi, err = t[ok], chi[ok], err[ok]
    if t.size < 3:
        entry["note"] = f"{t.size} temperatures with a susceptibility (need 3)"
        return entry
    good = np.isfinite(err) & (err > 0)
    err = np.where(good, err, np.median(err[good]) if good.any() else 0.05 * np.abs(chi))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        r = tc_from_peaks(t, chi, err, n_boot=n_boot, seed=seed)
    k = int(np.argmax(chi))
    entry.update(tc_K=r["tc_K"], tc_err_K=r["tc_err_K"], peak_value=r["peak_value"],
                 peak_value_err=r["peak_value_err"])
    sig = np.hypot(err[k], err)
    lower = chi[k] - chi > Z_SIDE * sig
    reasons = []
    if k == 0 or k == t.size - 1:
        reasons.append(f"the largest value is at the {'start' if k == 0 else 'end'} of the "
                       f"sweep ({t[k]:g} K)")
    else:
        if not lower[:k].any():
            reasons.append("no point below it is significantly lower")
        if not lower[k + 1:].any():
            reasons.append("no point above it is significantly lower")
    u = _col(d, "binder")[ok]
    fu = np.isfinite(u)
    if ising and fu.any() and not (np.any(u[fu & (t < r["tc_K"])] > U_STAR_ISING)
                                   and np.any(u[fu & (t > r["tc_K"])] < U_STAR_ISING)):
        reasons.append(f"U4 of L = {L} does not fall through the universal value "
                       f"{U_STAR_ISING:g} across it")
    entry["bracketed"] = not reasons
    if reasons:
        entry["note"] = "not bracketed: " + "; ".join(reasons)
    return entry


def _collapse(table, sizes, tc_guess):
    from thinfilm.analysis.scaling import joint_collapse_fit
    from thinfilm.input.errors import InputError

    L, T, U, E = [], [], [], []
    for s in sizes:
        d = table[s]
        L.append(np.full(d["temperature_K"].size, float(s)))
        T.append(d["temperature_K"])
        U.append(_col(d, "binder"))
        E.append(_col(d, "binder_err"))
    data = {"binder": tuple(np.concatenate(x) for x in (L, T, U, E))}
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            fit = joint_collapse_fit(data, tc_guess_K=tc_guess)
    except (InputError, ValueError, np.linalg.LinAlgError) as exc:
        return None, str(exc)
    return fit, None


# ----------------------------------------------------------------------------- verdicts


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
