"""The Tc estimates that :mod:`thinfilm.analysis.tc_rule` weighs: Binder crossings of
size pairs with their bracketing test, their drift with size, susceptibility peaks and the U4
collapse, each with its error and the evidence that the data bracket it."""

import math
import warnings

import numpy as np

from thinfilm._numbers import fmt_pm

__all__ = ["U_STAR_ISING", "MIN_EFFECTIVE", "Z_SIDE", "DRIFT_EXPONENTS", "split_by_size"]


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
