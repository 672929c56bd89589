"""Temperature window in which an extrapolated length exceeds a target (instrument resolution).

Works on the fits of :mod:`thinfilm.analysis.extrapolation` and obeys their validity rule:
an edge closer to Tc than ``valid_t_min`` or farther than the fitted points is refused.
Temperatures in K, lengths in nm.
"""

import numpy as np
from scipy import optimize

from thinfilm.analysis.extrapolation import SIDES, _at_to_T, _ln_model, predict_length
from thinfilm.input.errors import InputError

__all__ = ["temperatures_for_length"]


def _edge_at(fit, p, s, target, lo, hi):
    m = fit["model"]
    lab = np.array([s])

    def f(a):
        tc = dict(zip(m["names"], p, strict=True)).get("tc", m["tc_fixed"])
        T = np.array([tc * (1 + a) if s == "above" else tc * (1 - a)])
        return float(_ln_model(p, m, T, lab)[0] - np.log(target))

    if f(lo) * f(hi) > 0:
        return None
    a = optimize.brentq(f, lo, hi, xtol=1e-14, rtol=1e-12)
    tc = dict(zip(m["names"], p, strict=True)).get("tc", m["tc_fixed"])
    return tc * (1 + a) if s == "above" else tc * (1 - a), a


def temperatures_for_length(fit, target_nm, *, strict=True):
    """Temperature window in which the fitted length exceeds a target (e.g. the resolution).

    On each fitted side the edge is where y(T) = target_nm, searched between the fitted
    points farthest from Tc and the validity limit ``valid_t_min``; its error comes from the
    fit covariance (central differences of the edge with respect to each parameter).

    Parameters
    ----------
    fit : dict
        From :func:`fit_critical_length`.
    target_nm : float
        Target length (nm), e.g. the instrument resolution.
    strict : bool
        Raise InputError when an edge of a fitted side lies outside the valid range; with
        False that edge is None and ``reasons`` says why.

    Returns
    -------
    dict
        target_nm, window_K (T_low, T_high; None for a side without a fit or a refused edge),
        window_err_K, flags ({side: "measured"/"extrapolated"}), t_reduced ({side: abs(t)}),
        reasons ({side: text}).
    """
    target = float(target_nm)
    if not (np.isfinite(target) and target > 0):
        raise InputError(f"{fit['quantity']}: target {target_nm!r} nm must be a positive length")
    p, cov = fit["params"], fit["cov"]
    edges, errs, flags, ts, reasons = {}, {}, {}, {}, {}
    for s in SIDES:
        if s not in fit["sides"]:
            edges[s] = errs[s] = None
            reasons[s] = f"no fit {s} Tc"
            continue
        lo, hi = fit["valid_t_min"][s], fit["t_range"][s][1]
        r = _edge_at(fit, p, s, target, lo, hi)
        if r is None:
            y_far = predict_length(fit, [_at_to_T(fit, s, hi)])["value_nm"][0]
            msg = (f"the {fit['quantity']} exceeds {target:.4g} nm over the whole fitted range "
                   f"{s} Tc (down to abs(t) = {hi:.3g}); the edge lies outside the critical region"
                   if y_far > target else
                   f"the {fit['quantity']} reaches {target:.4g} nm {s} Tc only closer to Tc than "
                   f"the valid limit abs(t) = {lo:.3g} ({fit['limit_reason'][s]})")
            if strict:
                raise InputError(f"{fit['quantity']}: no window edge for {target:.4g} nm: {msg}")
            edges[s] = errs[s] = None
            reasons[s] = msg
            continue
        edges[s], ts[s] = float(r[0]), float(r[1])
        g = np.zeros(p.size)
        for i in range(p.size):
            h = 1e-3 * np.sqrt(cov[i, i]) if cov[i, i] > 0 else 1e-7 * (abs(p[i]) + 1.0)
            up, dn = p.copy(), p.copy()
            up[i] += h
            dn[i] -= h
            ru = _edge_at(fit, up, s, target, lo * 0.5, hi * 2.0)
            rd = _edge_at(fit, dn, s, target, lo * 0.5, hi * 2.0)
            g[i] = 0.0 if ru is None or rd is None else (ru[0] - rd[0]) / (2 * h)
        errs[s] = float(np.sqrt(max(g @ cov @ g, 0.0)))
        flags[s] = "measured" if ts[s] >= fit["t_range"][s][0] else "extrapolated"
        reasons[s] = ""
    return {"target_nm": target, "window_K": (edges["below"], edges["above"]),
            "window_err_K": (errs["below"], errs["above"]), "flags": flags, "t_reduced": ts,
            "reasons": reasons}
