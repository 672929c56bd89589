"""Extrapolation of the correlation length (and domain size) to lengths the lattice cannot hold.

Model, fitted to ln y with weights y/err (y in nm)::

    y(T) = A_s abs(t)^(-nu) (1 + c_s abs(t)),   t = (T - Tc)/Tc,   s = above / below Tc

``nu`` fixed (1 for the 2D Ising class, Onsager 1944) or fitted; ``c_s`` an analytic
correction to scaling (optional, on by default: the exact square-Ising length carries
``1 + 0.68 t`` above Tc). Below Tc the amplitude is ``A_below = A_above / R`` with a fixed ratio
R (``amplitude_ratio``; 2 for the exponential (true) correlation length of the 2D Ising model,
f+/f- = 2, from memory; the second-moment length has another ratio, about 3.2 from memory,
so pass None to fit A_below for it). Tc enters as a parameter with a Gaussian prior
(tc_K +- tc_err_K), so its error is carried into every band; tc_err_K = 0 fixes it.

Only points with ``film_side_nm >= min_ratio * y`` (y << L: finite-size effects of a few per
cent) and ``abs(t) <= t_max`` (critical region) enter. The band is y +- dy with dy from the
delta method, ``var(ln y) = g^T C g`` (g = d ln y / d parameters, C the fit covariance scaled by
sqrt(chi2/dof) when that exceeds 1): one standard error, 68 % for Gaussian errors.

Validity rule (ours): per side, a temperature is

* ``measured`` when abs(t) lies inside the range of the points used on that side (interpolation),
* ``extrapolated`` when it lies closer to Tc, as long as the relative error dy/y stays
  <= ``max_rel_err`` (default 0.25) AND y <= ``max_factor`` (default 10) x the largest y used on
  that side; the smallest such abs(t) is ``valid_t_min``;
* refused otherwise (closer to Tc than valid_t_min, farther from Tc than the fitted points,
  or on a side without a fit): InputError, or a nan value with flag ``refused`` when
  ``strict=False``.

The window where the length exceeds a target is in :mod:`thinfilm.analysis.length_window`.
"""

import numpy as np
from scipy import optimize

from thinfilm.input.errors import InputError

__all__ = ["fit_critical_length", "fit_domain_size", "predict_length"]

SIDES = ("above", "below")  # also used by length_window


def _arr(x, n=None):
    a = np.asarray(x, dtype=np.float64).ravel()
    return a if n is None else np.broadcast_to(a, (n,)) if a.size == 1 else a


def _ln_model(p, m, T, side, film_nm=None):
    """ln y at temperatures T (K) on the given side(s) ("above"/"below" array) for params p.

    ``film_nm`` None: the infinite film. Otherwise (fits with ``finite_size``) the film sides
    (nm) of the points: the finite-size form of :func:`fit_critical_length`.
    """
    v = dict(zip(m["names"], p, strict=True))
    tc = v.get("tc", m["tc_fixed"])
    nu = v.get("nu", m["nu_fixed"])
    at = np.abs(T - tc) / tc
    below = side == "below"
    if "ln_a_below" in v:
        ln_a = np.where(below, v.get("ln_a_below", 0.0), v["ln_a"])
    else:
        ln_a = v["ln_a"] - np.where(below, np.log(m["ratio"]) if m["ratio"] else 0.0, 0.0)
    out = ln_a - nu * np.log(at)
    if m["correction"]:
        c = np.where(below, v.get("c_below", 0.0), v.get("c_above", 0.0))
        out = out + np.log(np.maximum(1.0 + c * at, 1e-12))
    if film_nm is not None and m.get("finite_size"):
        ln_c = np.where(below, v.get("ln_cl_below", 0.0), v.get("ln_cl_above", 0.0))
        q = np.exp(v["ln_p"])
        # ln y_L = ln y + (1/q) ln(1 - exp(-(cL L / y)^q)), without underflow
        zq = np.exp(np.clip(q * (ln_c + np.log(film_nm) - out), -700.0, 700.0))
        out = out + np.log(-np.expm1(-zq)) / q
    return out


def _grad(p, cov, m, T, side):
    """d ln y / d p by central differences (steps a small fraction of each parameter error)."""
    g = np.empty((p.size, np.size(T)))
    for i in range(p.size):
        h = 1e-4 * np.sqrt(cov[i, i]) if cov[i, i] > 0 else 1e-7 * (abs(p[i]) + 1.0)
        up, dn = p.copy(), p.copy()
        up[i] += h
        dn[i] -= h
        g[i] = (_ln_model(up, m, T, side) - _ln_model(dn, m, T, side)) / (2 * h)
    return g


def _band(fit, T, side):
    p, cov, m = fit["params"], fit["cov"], fit["model"]
    ly = _ln_model(p, m, T, side)
    g = _grad(p, cov, m, T, side)
    var = np.einsum("in,ij,jn->n", g, cov, g)
    y = np.exp(ly)
    return y, y * np.sqrt(np.maximum(var, 0.0))


def fit_critical_length(temperatures_K, length_nm, length_err_nm, *, tc_K, tc_err_K=0.0,
                        film_side_nm=None, min_ratio=6.0, t_max=0.3, nu=1.0, sides="auto",
                        amplitude_ratio=2.0, correction=True, max_rel_err=0.25,
                        max_factor=10.0, quantity="correlation_length", finite_size=False):
    """Fit y = A abs(t)^-nu (1 + c abs(t)) to a length (nm) on one or both sides of Tc.

    With ``finite_size=True`` every point enters whatever its film side L, through the
    finite-size scaling form (Fisher and Barber, Phys. Rev. Lett. 28, 1516, 1972)::

        y_L(T) = y(T) [1 - exp(-(c_s L / y(T))^q)]^(1/q) = L f(t L^(1/nu))

    which is c_s L (c_s the ratio y_L/L at Tc on side s) for L << y and approaches y(T) as
    exp(-(c_s L/y)^q)/q for L >> y: with q = 1 the exp(-L/xi) approach of a length on a torus
    (common practice), larger q a sharper crossover. c_s and q are fitted (the family is ours,
    a smooth interpolation between the limits the scaling form requires). The amplitude, and
    so y of the infinite film, then uses the points that the box cuts down as well, with the
    errors that carries.

    Parameters
    ----------
    temperatures_K, length_nm, length_err_nm : array_like (n,)
        Temperatures (K), the length (nm) and its standard error (nm), e.g. the columns
        temperature_K, correlation_length_nm, correlation_length_nm_err of one size or of
        several sizes together.
    tc_K, tc_err_K : float
        Critical temperature and its standard error (K), e.g. from a Binder crossing or
        :func:`thinfilm.analysis.scaling.collapse_fit`; tc_err_K = 0 keeps Tc fixed.
    film_side_nm : float or array_like (n,), optional
        Side of the simulated film at each point (nm); required unless every point is known
        to satisfy y << L (then pass ``np.inf``).
    min_ratio : float
        Points need film_side_nm >= min_ratio * y.
    t_max : float
        Largest abs(t) used (the critical region).
    nu : float or None
        Fixed exponent (1 for 2D Ising), or None to fit it.
    sides : {"auto", "above", "below", "both"}
        Sides to fit; "auto" fits every side with enough points (3 with the correction, 2
        without, on top of the shared parameters).
    amplitude_ratio : float or None
        A_above/A_below fixed to this value, or None to fit A_below.
    correction : bool
        Include the analytic correction (1 + c_s abs(t)).
    max_rel_err, max_factor : float
        Validity rule of the extrapolation (module docstring).
    quantity : str
        Name carried into messages and the result.
    finite_size : bool
        Fit the finite-size form above to every point (``min_ratio`` is then not applied).

    Returns
    -------
    dict
        quantity, tc_K, tc_err_K (after the fit), nu, nu_err (0 when fixed), amplitude_nm,
        amplitude_err_nm (A_above), amplitude_below_nm, correction ({side: c}), chi2, dof,
        chi2_dof, errors_scaled_by, sides (fitted), used (bool mask over the input),
        t_range ({side: (min, max) abs(t) of the points used}), max_used_nm ({side}),
        valid_t_min ({side}), valid_range_K ({side: (T_low, T_high)}), rule (dict), and
        params, names, cov, model for :func:`predict_length`.

    Raises
    ------
    InputError
        No film side given, a requested side without enough points, or fewer points than
        parameters + 1.
    """
    T, y, e = _arr(temperatures_K), _arr(length_nm), _arr(length_err_nm)
    if not (T.size == y.size == e.size):
        raise InputError(f"{quantity}: temperatures, values and errors must have equal lengths "
                         f"({T.size}, {y.size}, {e.size})")
    if film_side_nm is None:
        raise InputError(f"{quantity}: give film_side_nm (side of the simulated film, nm) so "
                         f"that only points with xi << L enter the fit (np.inf to skip the check)")
    if not (np.isfinite(tc_K) and tc_K > 0 and np.isfinite(tc_err_K) and tc_err_K >= 0):
        raise InputError(f"{quantity}: tc_K {tc_K!r} must be positive and tc_err_K "
                         f"{tc_err_K!r} >= 0")
    side_nm = _arr(film_side_nm, T.size)
    at = np.abs(T - tc_K) / tc_K
    ok = np.isfinite(T) & np.isfinite(y) & np.isfinite(e) & (y > 0) & (e > 0) & (at > 0)
    ok &= (at <= t_max) & (side_nm > 0)
    if not finite_size:
        ok &= side_nm >= min_ratio * y
    side = np.where(T > tc_K, "above", "below")
    need = (3 if correction else 2) + (2 if finite_size else 0)
    want = {"auto": SIDES, "both": SIDES}.get(sides, (sides,))
    if any(s not in SIDES for s in want):
        raise InputError(f"{quantity}: sides={sides!r}; use 'auto', 'above', 'below' or 'both'")
    counts = {s: int(np.sum(ok & (side == s))) for s in SIDES}
    fitted = [s for s in want if counts[s] >= need]
    if sides != "auto" and len(fitted) < len(want) or not fitted:
        cut = "" if finite_size else f"film side >= {min_ratio:g} x length, "
        raise InputError(f"{quantity}: too few usable points ({cut}0 < abs(t) <= {t_max:g}): "
                         f"{counts} per side, need {need} on each fitted side. Add temperatures "
                         f"farther from Tc or larger films")
    ok &= np.isin(side, fitted)
    names, p0, lo, hi = [], [], [], []

    def add(n, v, a=-np.inf, b=np.inf):
        names.append(n), p0.append(v), lo.append(a), hi.append(b)

    if tc_err_K > 0:
        add("tc", tc_K, tc_K - 20 * tc_err_K, tc_K + 20 * tc_err_K)
    nu0 = 1.0 if nu is None else float(nu)
    s0 = fitted[0]
    k0 = ok & (side == s0)
    add("ln_a", float(np.mean(np.log(y[k0]) + nu0 * np.log(at[k0])))
        + (np.log(amplitude_ratio) if s0 == "below" and amplitude_ratio else 0.0))
    if nu is None:
        add("nu", 1.0, 0.1, 5.0)
    for s in fitted:
        if s == "below" and amplitude_ratio is None and "above" in fitted:
            kb = ok & (side == "below")
            add("ln_a_below", float(np.mean(np.log(y[kb]) + nu0 * np.log(at[kb]))))
        if correction:
            tmax_s = float(at[ok & (side == s)].max())
            add(f"c_{s}", 0.0, -0.9 / tmax_s, np.inf)
        if finite_size:
            add(f"ln_cl_{s}", np.log(0.8), np.log(0.02), np.log(20.0))
    if finite_size:
        add("ln_p", 0.0, np.log(0.5), np.log(20.0))
    # a lone below side without a ratio: ln_a is the amplitude below Tc
    model = {"names": names, "tc_fixed": tc_K, "nu_fixed": nu0, "ratio": amplitude_ratio,
             "correction": bool(correction), "finite_size": bool(finite_size)}
    n_free = len(names) - (1 if "tc" in names else 0)
    n_pts = int(ok.sum())
    if n_pts - n_free < 1:
        raise InputError(f"{quantity}: {n_pts} usable points for {n_free} parameters; add "
                         f"temperatures or drop the correction (correction=False)")
    Tu, lyu, wu, su, lu = T[ok], np.log(y[ok]), y[ok] / e[ok], side[ok], side_nm[ok]

    def resid(p):
        r = (_ln_model(p, model, Tu, su, lu if finite_size else None) - lyu) * wu
        if "tc" in names:
            r = np.append(r, (p[0] - tc_K) / tc_err_K)
        return r

    res = optimize.least_squares(resid, np.array(p0), bounds=(lo, hi), x_scale="jac")
    chi2, dof = float(res.fun @ res.fun), n_pts - n_free
    factor = float(np.sqrt(max(1.0, chi2 / dof)))
    cov = np.linalg.pinv(res.jac.T @ res.jac) * factor**2
    p = res.x
    v = dict(zip(names, p, strict=True))
    err = dict(zip(names, np.sqrt(np.diag(cov)), strict=True))
    out = {"quantity": quantity, "tc_K": float(v.get("tc", tc_K)),
           "tc_err_K": float(err.get("tc", 0.0)), "nu": float(v.get("nu", nu0)),
           "nu_err": float(err.get("nu", 0.0)), "nu_fitted": nu is None,
           "chi2": chi2, "dof": int(dof), "chi2_dof": chi2 / dof, "errors_scaled_by": factor,
           "sides": fitted, "used": ok, "params": p, "names": names, "cov": cov, "model": model,
           "finite_size": bool(finite_size),
           "rule": {"max_rel_err": max_rel_err, "max_factor": max_factor,
                    "min_ratio": min_ratio, "t_max": t_max}}
    a = float(np.exp(v["ln_a"]))
    out["amplitude_nm"], out["amplitude_err_nm"] = a, a * float(err["ln_a"])
    if "ln_a_below" in v:
        out["amplitude_below_nm"] = float(np.exp(v["ln_a_below"]))
    elif fitted == ["below"] and not amplitude_ratio:  # ln_a is the amplitude below Tc
        out["amplitude_below_nm"], out["amplitude_nm"] = a, float("nan")
    else:
        out["amplitude_below_nm"] = a / amplitude_ratio if amplitude_ratio else float("nan")
    out["correction"] = {s: float(v.get(f"c_{s}", 0.0)) for s in fitted}
    if finite_size:
        out["xi_over_L_at_tc"] = {s: float(np.exp(v[f"ln_cl_{s}"])) for s in fitted}
        out["crossover_q"] = float(np.exp(v["ln_p"]))
    out["t_range"], out["max_used_nm"] = {}, {}
    for s in fitted:
        k = ok & (side == s)
        out["t_range"][s] = (float(at[k].min()), float(at[k].max()))
        out["max_used_nm"][s] = float(y[k].max())
        if finite_size:  # the largest infinite-film length the fitted points stand for
            out["max_used_nm"][s] = float(np.exp(_ln_model(p, model, T[k], side[k])).max())
    out["valid_t_min"], out["valid_range_K"], out["limit_reason"] = {}, {}, {}
    for s in fitted:
        _validity(out, s)
    return out


def _at_to_T(fit, s, at):
    return fit["tc_K"] * (1.0 + at) if s == "above" else fit["tc_K"] * (1.0 - at)


def _validity(fit, s):
    """Smallest abs(t) on side s satisfying the rule; the valid temperature interval."""
    rule = fit["rule"]
    t_lo, t_hi = fit["t_range"][s]
    grid = np.geomspace(t_lo, 1e-8, 600)
    T = _at_to_T(fit, s, grid)
    y, dy = _band(fit, T, np.full(T.size, s))
    good_err = dy <= rule["max_rel_err"] * y
    good_len = y <= rule["max_factor"] * fit["max_used_nm"][s]
    good = good_err & good_len
    bad = np.nonzero(~good)[0]
    k = grid.size - 1 if bad.size == 0 else max(int(bad[0]) - 1, 0)
    fit["valid_t_min"][s] = float(grid[k]) if bad.size == 0 or bad[0] > 0 else float(t_lo)
    if bad.size == 0:
        fit["limit_reason"][s] = "none within abs(t) >= 1e-8"
    else:
        b = int(bad[0])
        fit["limit_reason"][s] = (f"relative error above {rule['max_rel_err']:g}" if not good_err[b]
                                  else f"length above {rule['max_factor']:g} x the largest used "
                                       f"({fit['max_used_nm'][s]:.4g} nm)")
    ends = sorted((_at_to_T(fit, s, fit["valid_t_min"][s]), _at_to_T(fit, s, t_hi)))
    fit["valid_range_K"][s] = (float(ends[0]), float(ends[1]))


def _classify(fit, T):
    """Side, abs(t), flag and refusal reason for each temperature."""
    tc = fit["tc_K"]
    side = np.where(T > tc, "above", "below")
    at = np.abs(T - tc) / tc
    flag = np.full(T.size, "refused", dtype=object)
    why = np.full(T.size, "", dtype=object)
    for i, (s, a) in enumerate(zip(side, at, strict=True)):
        if s not in fit["sides"]:
            why[i] = f"no fit {s} Tc = {tc:.4g} K"
            continue
        lo, hi = fit["t_range"][s]
        if a > hi * (1 + 1e-9):
            why[i] = (f"farther from Tc than the fitted points (abs(t) {a:.3g} > {hi:.3g}); "
                      f"use the measured values there")
        elif a < fit["valid_t_min"][s] * (1 - 1e-9):
            why[i] = (f"too close to Tc (abs(t) {a:.3g} < {fit['valid_t_min'][s]:.3g}: "
                      f"{fit['limit_reason'][s]})")
        else:
            flag[i] = "measured" if a >= lo * (1 - 1e-9) else "extrapolated"
    return side, at, flag, why


def predict_length(fit, temperatures_K, *, strict=True):
    """The fitted length with its error band at given temperatures.

    Parameters
    ----------
    fit : dict
        From :func:`fit_critical_length` or :func:`fit_domain_size`.
    temperatures_K : array_like (n,)
        Temperatures (K).
    strict : bool
        Raise InputError for a temperature outside the valid range (module docstring);
        with False such temperatures get nan and the flag "refused".

    Returns
    -------
    dict of arrays (n,)
        temperature_K, value_nm, err_nm (one standard error), flag ("measured",
        "extrapolated" or "refused"), side ("above"/"below"), t_reduced ((T - Tc)/Tc), reason
        (why refused, else "").
    """
    T = _arr(temperatures_K)
    side, at, flag, why = _classify(fit, T)
    bad = flag == "refused"
    if strict and bad.any():
        i = int(np.argmax(bad))
        rng = "; ".join(f"{s}: {a:.5g}-{b:.5g} K" for s, (a, b) in fit["valid_range_K"].items())
        raise InputError(f"{fit['quantity']}: will not extrapolate to T = {T[i]:.6g} K: {why[i]}. "
                         f"Valid range {rng}")
    y = np.full(T.size, np.nan)
    dy = np.full(T.size, np.nan)
    if (~bad).any():
        y[~bad], dy[~bad] = _band(fit, T[~bad], side[~bad])
    return {"temperature_K": T, "value_nm": y, "err_nm": dy, "flag": flag.astype(str),
            "side": side, "t_reduced": (T - fit["tc_K"]) / fit["tc_K"], "reason": why.astype(str)}


def fit_domain_size(temperatures_K, mean_domain_area_nm2, mean_domain_area_err_nm2, *, tc_K,
                    tc_err_K=0.0, film_side_nm=None, exponent=None, sides="above", **kw):
    """Fit the equivalent domain diameter d = 2 sqrt(A/pi) (nm) like a correlation length.

    No exact exponent is assumed for the domain size: ``exponent`` None fits it (pass 1 to tie
    it to nu of the Ising class). The amplitude below Tc is fitted separately
    (amplitude_ratio None). Points with film_side_nm < min_ratio * d are dropped.

    Parameters
    ----------
    temperatures_K, mean_domain_area_nm2, mean_domain_area_err_nm2 : array_like (n,)
        Columns temperature_K, mean_domain_area_nm2, mean_domain_area_nm2_err.
    tc_K, tc_err_K, film_side_nm, sides, **kw
        As :func:`fit_critical_length`.
    exponent : float or None
        Fixed exponent of d, or None to fit it.

    Returns
    -------
    dict
        As :func:`fit_critical_length` with quantity "domain_diameter" (nm).
    """
    a = _arr(mean_domain_area_nm2)
    ea = _arr(mean_domain_area_err_nm2)
    with np.errstate(invalid="ignore", divide="ignore"):
        d = 2.0 * np.sqrt(a / np.pi)
        ed = 0.5 * d * ea / a
    kw.setdefault("amplitude_ratio", None)
    return fit_critical_length(temperatures_K, d, ed, tc_K=tc_K, tc_err_K=tc_err_K,
                               film_side_nm=film_side_nm, nu=exponent, sides=sides,
                               quantity="domain_diameter", **kw)
