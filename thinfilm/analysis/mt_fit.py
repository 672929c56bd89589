"""Critical power-law fit of a measured magnetisation curve and its universality class.

Model below Tc, with t = 1 - T/Tc:

    M(T) = M0 t^beta                      (pure power law)
    M(T) = M0 t^beta (1 + b t^Delta)      (with the leading correction to scaling)

The fit is a weighted least-squares fit over a temperature window of points below Tc. The
correction term is kept only where the data ask for it (F-test of the two fits, p < 0.01).
Errors are the fit covariance, scaled up by chi^2/dof when that exceeds 1; the window
sensitivity is the spread of (Tc, beta) over the sub-windows that drop up to two points at
either end, and it enters the verdict in quadrature.
"""

import math

import numpy as np
from scipy import optimize, stats

from thinfilm.input.errors import InputError

__all__ = ["CLASSES", "power_law_fit", "fit_magnetisation", "verdict", "noise_level"]

# (name, beta, uncertainty of the reference value, source)
CLASSES = (
    ("2D Ising", 0.125, 0.0, "exact: Onsager 1944; Yang, Phys. Rev. 85, 808 (1952)"),
    ("2D XY (finite film)", 3 * math.pi**2 / 128, 0.01,
     "effective: Bramwell and Holdsworth, J. Phys.: Condens. Matter 5, L53 (1993)"),
    ("3D Ising", 0.3265, 0.0003, "Pelissetto and Vicari, Phys. Rep. 368, 549 (2002)"),
    ("3D Heisenberg", 0.3689, 0.0003,
     "Campostrini et al., Phys. Rev. B 65, 144520 (2002); 0.365 in older work"),
    ("mean field", 0.5, 0.0, "Landau theory"),
)
MIN_POINTS = 5


def noise_level(signal):
    """Noise estimate from second differences: 1.4826 median|d2| / sqrt(6) (robust MAD)."""
    d2 = np.diff(np.asarray(signal, dtype=float), 2)
    return float(1.4826 * np.median(np.abs(d2)) / math.sqrt(6.0)) if d2.size else 0.0


def _model(p, T, delta):
    t = np.clip(1.0 - T / p[1], 1e-300, None)
    out = p[0] * t ** p[2]
    if len(p) > 3:
        out = out * (1.0 + p[3] * t**delta)
    return out


def _profile_start(T, M, w, t_hi):
    """Start values from a profile over Tc of the linear fit log M = log M0 + beta log t."""
    span = T[-1] - T[0]
    best = None
    for tc in t_hi + span * np.geomspace(1e-4, 1.0, 60):
        t = 1.0 - T / tc
        x, y = np.log(t), np.log(M)
        ww = (w * M) ** 2  # weights of log M
        A = np.stack([np.ones_like(x), x], axis=1)
        coef, *_ = np.linalg.lstsq(A * np.sqrt(ww)[:, None], y * np.sqrt(ww), rcond=None)
        r = np.sum(ww * (y - A @ coef) ** 2)
        if best is None or r < best[0]:
            best = (r, math.exp(coef[0]), tc, coef[1])
    return np.array(best[1:])


def power_law_fit(T, M, err, *, correction=False, delta=1.0):
    """Weighted fit of M0 (1 - T/Tc)^beta (x (1 + b t^delta)) to points that lie below Tc.

    Parameters
    ----------
    T, M, err : array_like (n,)
        Temperatures (K, increasing), positive signal, its standard errors.
    correction : bool
        Include the correction term (b fitted, delta fixed).
    delta : float
        Correction exponent Delta.

    Returns
    -------
    dict
        params (M0, Tc_K, beta[, b]), errors, cov, chi2, dof, p_value (of chi2), scale (the
        factor applied to the covariance).
    """
    T, M, err = (np.asarray(a, dtype=float) for a in (T, M, err))
    w = 1.0 / err
    p0 = _profile_start(T, M, w, T[-1])
    if correction:
        p0 = np.append(p0, 0.0)
    hi_tc = T[-1] + 2.0 * (T[-1] - T[0])
    lo = [0.0, T[-1] * (1 + 1e-9), 0.0] + ([-np.inf] if correction else [])
    hi = [np.inf, hi_tc, 3.0] + ([np.inf] if correction else [])
    p0 = np.clip(p0, np.array(lo) + 1e-12, np.array(hi) - 1e-12)
    res = optimize.least_squares(lambda p: (_model(p, T, delta) - M) * w, p0, bounds=(lo, hi),
                                 x_scale="jac", method="trf")
    chi2 = float(np.sum(res.fun**2))
    dof = T.size - p0.size
    jac = res.jac
    try:
        cov = np.linalg.inv(jac.T @ jac)
    except np.linalg.LinAlgError:
        cov = np.full((p0.size, p0.size), np.nan)
    scale = max(1.0, chi2 / dof) if dof > 0 else np.nan
    cov = cov * scale
    return {"params": res.x, "errors": np.sqrt(np.abs(np.diag(cov))), "cov": cov, "chi2": chi2,
            "dof": dof, "p_value": float(stats.chi2.sf(chi2, dof)) if dof > 0 else np.nan,
            "scale": scale, "correction": correction, "delta": delta}


def _best_model(T, M, e, delta, correction):
    """Pure fit, and the corrected fit where the F-test asks for it (or as forced)."""
    pure = power_law_fit(T, M, e, delta=delta)
    if correction is False or T.size < MIN_POINTS + 2:
        return pure
    corr = power_law_fit(T, M, e, correction=True, delta=delta)
    if correction is True:
        return corr
    if corr["dof"] > 0 and corr["chi2"] < pure["chi2"]:
        f = (pure["chi2"] - corr["chi2"]) / (corr["chi2"] / corr["dof"])
        if stats.f.sf(f, 1, corr["dof"]) < 0.01:
            corr["f_test_p"] = float(stats.f.sf(f, 1, corr["dof"]))
            return corr
    return pure


def _sensitivity(T, M, e, i, j, delta, correction, base):
    """Spread of Tc and beta over sub-windows dropping 0-2 points at either end."""
    tcs, betas = [], []
    for a in range(3):
        for b in range(3):
            if (a, b) == (0, 0) or (j - b) - (i + a) + 1 < MIN_POINTS:
                continue
            s = slice(i + a, j - b + 1)
            f = power_law_fit(T[s], M[s], e[s], correction=base["correction"], delta=delta)
            tcs.append(f["params"][1])
            betas.append(f["params"][2])
    if len(betas) < 2:
        return {"tc_K": np.nan, "beta": np.nan, "n_windows": len(betas)}
    return {"tc_K": float(np.std(tcs, ddof=1)), "beta": float(np.std(betas, ddof=1)),
            "tc_range_K": [float(min(tcs)), float(max(tcs))],
            "beta_range": [float(min(betas)), float(max(betas))], "n_windows": len(betas)}


def _auto_window(T, M, e, delta, correction, t_max):
    """Widest window of acceptable fit (p >= 0.05) below the rounded tail near Tc, within
    1 - T/Tc <= t_max of a first estimate of Tc."""
    top = np.nonzero(M > 3.0 * e)[0]
    if top.size < MIN_POINTS:
        return None
    j_last = int(top[-1])
    half = slice(max(0, j_last - max(MIN_POINTS, j_last // 2)), j_last + 1)
    tc0 = power_law_fit(T[half], M[half], e[half])["params"][1]
    i_min = int(np.searchsorted(T, (1.0 - t_max) * tc0))
    n = T.size
    step = 1 if n <= 40 else 2
    best, scanned = None, []
    for j in range(j_last, i_min + MIN_POINTS - 2, -1):
        for i in range(i_min, j - MIN_POINTS + 2, step):
            f = _best_model(T[i:j + 1], M[i:j + 1], e[i:j + 1], delta, correction)
            ok = f["p_value"] >= 0.05
            scanned.append((i, j, f, ok))
            if ok and (best is None or (j - i, j) > (best[1] - best[0], best[1])):
                best = (i, j, f)
            if ok:
                break  # a larger i only shrinks this window
    return best, scanned


def fit_magnetisation(curve, *, window=None, correction="auto", delta=1.0, t_max=0.3):
    """Fit a measured M(T) (see :func:`thinfilm.analysis.mt_table.read_curve`).

    Parameters
    ----------
    curve : dict
        temperature_K (increasing), signal, signal_err (or None), path.
    window : (float, float), optional
        Temperatures (K) bounding the fit window; None: found automatically.
    correction : "auto", True or False
        Correction-to-scaling term: where the data ask (F-test), always, or never.
    delta : float
        Correction exponent Delta: 1 (default) for the analytic correction, the leading one of
        the 2D Ising magnetisation (Yang 1952: M^8 is analytic in t at Tc); about 0.5 for the
        3D classes (Pelissetto and Vicari 2002).
    t_max : float
        Automatic windows stay within 1 - T/Tc <= t_max of a first Tc estimate (far below
        Tc the spin-wave regime, not the critical law, shapes M(T)).

    Returns
    -------
    dict
        tc_K, tc_err_K, beta, beta_err (fit errors), tc_window_K, beta_window (window
        sensitivity), m0, window_K, n_points, chi2, dof, p_value, correction, error_source,
        sign, windows (list of scanned windows), verdict (see :func:`verdict`), fit (raw).
    """
    path = curve.get("path", "the curve")
    T = np.asarray(curve["temperature_K"], dtype=float)
    M = np.asarray(curve["signal"], dtype=float)
    sign = 1.0
    if np.mean(M[: max(3, T.size // 5)]) < 0:
        sign, M = -1.0, -M
    if curve.get("signal_err") is not None:
        e = np.asarray(curve["signal_err"], dtype=float)
        source = "error column"
    else:
        e = np.full(T.size, max(noise_level(M), 1e-12 * np.max(np.abs(M))))
        source = "noise estimated from second differences of the signal (no error column)"
    low = np.max(M[: max(3, T.size // 5)])
    if not (M[-1] < 0.8 * low and low - M[-1] > 5.0 * e[-1]):
        raise InputError(
            f"{path}: the signal never falls: at the highest temperature ({T[-1]:g} K) it is "
            f"{100 * M[-1] / low:.0f} % of its low-temperature value (noise {e[-1]:.3g}); a "
            "critical fit needs the fall of the magnetisation towards Tc, so measure up to and "
            "through the transition (at least a 20 % fall, well above the noise)")
    if window is None:
        found = _auto_window(T, M, e, delta, correction, t_max)
        if found is None or found[0] is None:
            raise InputError(
                f"{path}: no temperature window of at least {MIN_POINTS} points below Tc fits a "
                "power law (p >= 0.05); give a window by hand (window=(T_low, T_high)) or "
                "check the error column")
        (i, j, fit), scanned = found
        how = "automatic: the widest window with an acceptable fit (chi^2 p >= 0.05)"
    else:
        lo, hi = sorted(float(x) for x in window)
        sel = np.nonzero((T >= lo) & (T <= hi) & (M > 0))[0]
        if sel.size < MIN_POINTS:
            raise InputError(f"{path}: the window {lo:g} .. {hi:g} K holds {sel.size} points "
                             f"with a positive signal; at least {MIN_POINTS} are needed")
        i, j = int(sel[0]), int(sel[-1])
        fit = _best_model(T[i:j + 1], M[i:j + 1], e[i:j + 1], delta, correction)
        scanned, how = [(i, j, fit, fit["p_value"] >= 0.05)], "chosen by the user"
    if np.any(M[i:j + 1] <= 0):
        raise InputError(f"{path}: the window {T[i]:g} .. {T[j]:g} K holds non-positive signal "
                         "values; subtract the background or narrow the window")
    sens = _sensitivity(T, M, e, i, j, delta, correction, fit)
    p, err = fit["params"], fit["errors"]
    t_lo, t_hi = 1 - T[j] / p[1], 1 - T[i] / p[1]
    total = math.hypot(err[2], sens["beta"] if np.isfinite(sens["beta"]) else 0.0)
    out = {
        "tc_K": float(p[1]), "tc_err_K": float(err[1]), "beta": float(p[2]),
        "beta_err": float(err[2]), "tc_window_K": sens["tc_K"], "beta_window": sens["beta"],
        "beta_total_err": total, "m0": float(sign * p[0]), "m0_err": float(err[0]),
        "window_K": [float(T[i]), float(T[j])], "window_reduced": [float(t_lo), float(t_hi)],
        "window_how": how, "n_points": j - i + 1, "chi2": fit["chi2"], "dof": fit["dof"],
        "p_value": fit["p_value"], "correction": bool(fit["correction"]), "delta": delta,
        "correction_b": float(p[3]) if fit["correction"] else None,
        "error_source": source, "sign": sign, "sensitivity": sens,
        "windows": [{"T_low_K": float(T[a]), "T_high_K": float(T[b]), "n": b - a + 1,
                     "tc_K": float(f["params"][1]), "beta": float(f["params"][2]),
                     "beta_err": float(f["errors"][2]), "p_value": f["p_value"],
                     "correction": bool(f["correction"]), "acceptable": bool(ok)}
                    for a, b, f, ok in scanned],
        "fit": fit, "signal_err_used": e,
    }
    out["verdict"] = verdict(out["beta"], total, t_lo, t_hi)
    return out


def verdict(beta, err, t_lo=None, t_hi=None):
    """Classes consistent with beta (within 2 sigma), disfavoured (2-3) and excluded (> 3).

    Returns
    -------
    dict
        consistent, disfavoured, excluded (lists of class names), z (per class), text.
    """
    res = {"consistent": [], "disfavoured": [], "excluded": [], "z": {}}
    for name, b, e, _src in CLASSES:
        z = abs(beta - b) / math.hypot(err, e) if math.hypot(err, e) > 0 else math.inf
        res["z"][name] = z
        res["consistent" if z <= 2 else "disfavoured" if z <= 3 else "excluded"].append(name)
    lines = [f"beta = {beta:.3f} +- {err:.3f} (fit and window sensitivity in quadrature)."]
    lines.append("Consistent (within 2 sigma): " + (", ".join(res["consistent"]) or "none") + ".")
    if res["disfavoured"]:
        lines.append("Disfavoured (2-3 sigma): " + ", ".join(res["disfavoured"]) + ".")
    lines.append("Excluded (more than 3 sigma): " + (", ".join(res["excluded"]) or "none") + ".")
    if t_lo is not None and t_hi is not None and t_lo > 0:
        decades = math.log10(t_hi / t_lo)
        caution = (f"The window spans 1 - T/Tc = {t_lo:.2g} .. {t_hi:.2g} ({decades:.1f} "
                   "decades). ")
        if decades < 1.0:
            caution += ("Less than one decade: the fitted beta is an effective exponent of this "
                        "window, and a class is only suggested, not established. ")
        caution += ("Tc and beta are correlated in the fit; rounding by inhomogeneity, a field "
                    "or a background offset near Tc biases both.")
        lines.append(caution)
    res["text"] = " ".join(lines)
    return res

