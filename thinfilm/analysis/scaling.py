"""Finite-size scaling: data collapse of xi/L and U4 for Tc and nu.

Near a continuous transition a dimensionless quantity y (the Binder cumulant U4 or xi/L)
measured on L x L lattices depends on T and L only through ``x = t L^(1/nu)``,
``t = (T - Tc)/Tc`` (standard finite-size scaling), up to corrections ``L^(-omega)``.

Quality measure (our choice): one smooth master curve per quantity, a polynomial
``P(x) = sum_k c_k (x/s)^k`` of low degree (``s`` = half width of the x window, for
conditioning), optionally plus an additive correction ``a L^(-omega)``. Tc, nu (and a, omega)
and the coefficients are fitted together by weighted least squares; the collapse quality is the
reduced chi^2 of the data about the master curve. Only points with x inside a fixed window
enter; the selection is redone with the fitted Tc, nu until it no longer changes (or, when
edge points move in and out, until it cycles: then the cycle's best fit is kept), so the final
fit is a smooth function of its parameters on a fixed set of points. Errors of Tc and nu come
from the curvature (inverse of J^T J at the minimum, scaled by sqrt(chi2/dof) when that exceeds
1) or from a parametric bootstrap over the data errors (same selection, refits of redrawn data).

x uses L in lattice cells (dimensionless); temperatures in K (any unit works, it cancels in t).
"""

import numpy as np
from scipy import optimize

from thinfilm.input.errors import InputError

__all__ = ["collapse_fit", "joint_collapse_fit", "master_curve", "scaling_variable"]

_MAX_SELECT = 12  # re-selections of the window points before giving up on a fixed set


def scaling_variable(sizes, temperatures_K, tc_K, nu):
    """x = (T - Tc)/Tc * L^(1/nu) (dimensionless; L in lattice cells, T and Tc in K)."""
    L = np.asarray(sizes, dtype=np.float64)
    t = (np.asarray(temperatures_K, dtype=np.float64) - tc_K) / tc_K
    return t * L ** (1.0 / nu)


def _points(name, data):
    try:
        L, T, y, e = (np.asarray(a, dtype=np.float64).ravel() for a in data)
    except (TypeError, ValueError):
        raise InputError(f"collapse: {name!r} must be (sizes, temperatures_K, values, errors), "
                         f"four arrays of equal length") from None
    if not (L.size == T.size == y.size == e.size):
        raise InputError(f"collapse: {name!r}: sizes, temperatures, values and errors have "
                         f"lengths {L.size}, {T.size}, {y.size}, {e.size}; they must be equal")
    ok = np.isfinite(L) & np.isfinite(T) & np.isfinite(y) & np.isfinite(e) & (e > 0) & (L > 0)
    return {"L": L, "T": T, "y": y, "e": e, "ok": ok}


class _Model:
    """Parameter layout: [tc, nu, (omega)] + per quantity [c_0..c_d, (a)]."""

    def __init__(self, names, degree, correction, scale):
        self.names, self.degree, self.scale = names, degree, scale
        self.fit_omega = correction == "fit"
        self.omega = None if correction in (None, "fit") else float(correction)
        self.has_corr = correction is not None
        self.n_global = 3 if self.fit_omega else 2
        self.n_q = degree + 1 + (1 if self.has_corr else 0)

    def split(self, p):
        tc, nu = p[0], p[1]
        om = p[2] if self.fit_omega else self.omega
        qs = {n: p[self.n_global + k * self.n_q: self.n_global + (k + 1) * self.n_q]
              for k, n in enumerate(self.names)}
        return tc, nu, om, qs

    def value(self, p, name, L, T):
        tc, nu, om, qs = self.split(p)
        q = qs[name]
        x = scaling_variable(L, T, tc, nu) / self.scale
        y = np.polynomial.polynomial.polyval(x, q[: self.degree + 1])
        if self.has_corr:
            y = y + q[-1] * L ** (-om)
        return y


def _linear_start(model, d, sel, tc, nu, om):
    """Master-curve coefficients at fixed (tc, nu, omega): weighted linear least squares."""
    L, T, y, e = d["L"][sel], d["T"][sel], d["y"][sel], d["e"][sel]
    x = scaling_variable(L, T, tc, nu) / model.scale
    cols = [x**k for k in range(model.degree + 1)]
    if model.has_corr:
        cols.append(L ** (-om))
    A = np.stack(cols, axis=1) / e[:, None]
    c, *_ = np.linalg.lstsq(A, y / e, rcond=None)
    return c


def _select(data, tc, nu, window):
    return {n: d["ok"] & (scaling_variable(d["L"], d["T"], tc, nu) >= window[0])
            & (scaling_variable(d["L"], d["T"], tc, nu) <= window[1]) for n, d in data.items()}


def _check(data, sel, n_par, degree, final=True):
    for n, d in data.items():
        per = {int(L): int(np.sum(sel[n] & (d["L"] == L))) for L in np.unique(d["L"][d["ok"]])}
        good = [L for L, k in per.items() if k >= 3]
        if len(per) < 2:
            raise InputError(f"collapse: {n!r} has data of {len(per)} size(s); a data collapse "
                             f"needs at least 2 lattice sizes")
        if len(good) < 2:
            raise InputError(f"collapse: {n!r}: too few points inside the x window: points per "
                             f"size {per}; at least 2 sizes need 3 or more. Widen x_window, add "
                             f"temperatures nearer Tc or check tc_guess_K")
        if final and max(per.values()) < degree + 2:
            # sizes measured at the same x would let a polynomial with as many coefficients
            # as distinct x values pass through every point: a spurious perfect collapse
            raise InputError(f"collapse: {n!r}: degree {degree} needs at least {degree + 2} "
                             f"points of one size inside the x window (have {per}); lower the "
                             f"degree or add temperatures")
    n_pts = sum(int(s.sum()) for s in sel.values())
    if n_pts - n_par < 3:
        raise InputError(f"collapse: {n_pts} points inside the x window for {n_par} parameters; "
                         f"need at least {n_par + 3}. Lower the degree, widen x_window or add "
                         f"temperatures")
    return n_pts


def _residuals(p, model, data, sel):
    out = []
    for n, d in data.items():
        s = sel[n]
        out.append((d["y"][s] - model.value(p, n, d["L"][s], d["T"][s])) / d["e"][s])
    return np.concatenate(out)


def _fit_fixed(model, data, sel, p0, lo, hi, yfield="y"):
    dd = data if yfield == "y" else {n: dict(d, y=d[yfield]) for n, d in data.items()}
    r = optimize.least_squares(_residuals, p0, bounds=(lo, hi), args=(model, dd, sel),
                               x_scale="jac", method="trf")
    return r


def joint_collapse_fit(datasets, *, tc_guess_K, nu_guess=1.0, x_window=(-1.5, 1.5), degree=3,
                       correction=None, omega_guess=1.0, error_method="curvature", n_boot=200,
                       seed=0):
    """Data collapse of one or several quantities sharing Tc and nu.

    Parameters
    ----------
    datasets : dict
        {name: (sizes, temperatures_K, values, errors)}: four equal-length arrays per
        quantity, one entry per (L, T) point; L in lattice cells, T in K, values dimensionless
        (U4, xi/L), errors standard errors. Rows with a non-finite entry or error <= 0 are
        ignored.
    tc_guess_K : float
        Starting Tc (K), e.g. from :func:`thinfilm.analysis.critical.estimate_tc`; also
        defines the first window selection.
    nu_guess : float
        Starting nu.
    x_window : (float, float)
        Range of x = t L^(1/nu) whose points enter the fit.
    degree : int
        Degree of each master-curve polynomial.
    correction : None, float or "fit"
        None: no correction; a number: additive ``a L^(-omega)`` with that fixed omega (a
        fitted per quantity); "fit": omega fitted as well (starting at ``omega_guess``;
        usually poorly determined with three sizes).
    error_method : {"curvature", "bootstrap"}
        Error method (module docstring).
    n_boot, seed : int
        Bootstrap replicas and seed (error_method="bootstrap").

    Returns
    -------
    dict
        tc_K, tc_err_K, nu, nu_err, corr_tc_nu, omega, omega_err (nan when not fitted),
        chi2, dof, chi2_dof, error_method, errors_scaled_by (the factor applied to curvature
        errors), x_window, x_range (min, max x of the points used), n_points, sizes (sizes with
        points in the window), used ({name: bool mask over the input rows}), x ({name: x of
        every row at the fitted Tc, nu}), coefficients ({name: master-curve coefficients
        c_0..c_d}), correction_amplitude ({name: a} or None), x_scale (s), degree, n_iter,
        selection_settled (False when the window selection cycled between fits; the fit of the
        cycle with the smallest chi^2 per point is returned).

    Raises
    ------
    InputError
        Fewer than 2 sizes, fewer than 2 sizes with 3 points inside the window, fewer than
        n_parameters + 3 points, or a selection that does not settle.
    """
    if not isinstance(datasets, dict) or not datasets:
        raise InputError("collapse: datasets must be a non-empty dict {name: (L, T, y, err)}")
    if not (np.isfinite(tc_guess_K) and tc_guess_K > 0 and np.isfinite(nu_guess) and nu_guess > 0):
        raise InputError(f"collapse: tc_guess_K ({tc_guess_K!r}) and nu_guess ({nu_guess!r}) "
                         f"must be positive numbers")
    lo_w, hi_w = (float(v) for v in x_window)
    if not lo_w < hi_w:
        raise InputError(f"collapse: x_window {x_window!r} must be (low, high) with low < high")
    if error_method not in ("curvature", "bootstrap"):
        raise InputError(f"collapse: error_method={error_method!r}; use 'curvature' or "
                         f"'bootstrap'")
    data = {n: _points(n, v) for n, v in datasets.items()}
    scale = max(abs(lo_w), abs(hi_w))
    model = _Model(list(data), int(degree), correction, scale)
    om0 = omega_guess if model.fit_omega else model.omega
    g_lo = [0.5 * tc_guess_K, 0.2] + ([0.05] if model.fit_omega else [])
    g_hi = [1.5 * tc_guess_K, 5.0] + ([5.0] if model.fit_omega else [])
    n_par = model.n_global + model.n_q * len(data)
    lo = np.array(g_lo + [-np.inf] * (n_par - model.n_global))
    hi = np.array(g_hi + [np.inf] * (n_par - model.n_global))
    tc, nu = float(tc_guess_K), float(nu_guess)
    sel = _select(data, tc, nu, (lo_w, hi_w))
    p, n_iter, settled, seen = None, 0, True, []
    for n_iter in range(1, _MAX_SELECT + 1):  # noqa: B007 (n_iter is reported)
        _check(data, sel, n_par, model.degree, final=False)
        if p is None:
            p = np.concatenate([[tc, nu] + ([om0] if model.fit_omega else [])]
                               + [_linear_start(model, data[n], sel[n], tc, nu, om0 or 1.0)
                                  for n in data])
        res = _fit_fixed(model, data, sel, np.clip(p, lo, hi), lo, hi)
        p = res.x
        key = b"".join(np.packbits(sel[n]).tobytes() for n in data)
        seen.append((key, sel, res))
        new = _select(data, p[0], p[1], (lo_w, hi_w))
        new_key = b"".join(np.packbits(new[n]).tobytes() for n in data)
        if new_key == key:
            break
        keys = [k for k, _, _ in seen]
        if new_key in keys:
            # the selection cycles (points at the window edges move in and out): keep the fit
            # of the cycle with the smallest chi2 per point, and say so
            cyc = seen[keys.index(new_key):]
            _, sel, res = min(cyc, key=lambda c: float(np.sum(c[2].fun**2)) / c[2].fun.size)
            p, settled = res.x, False
            break
        sel = new
    else:
        raise InputError(f"collapse: the set of points inside x_window {x_window!r} keeps "
                         f"changing between fits (Tc, nu not settled after {_MAX_SELECT} "
                         f"selections); try another tc_guess_K or a wider window")
    n_pts = _check(data, sel, n_par, model.degree)
    chi2 = float(np.sum(res.fun**2))
    dof = n_pts - n_par
    sv = np.linalg.svd(res.jac, compute_uv=False)
    if sv[-1] <= 1e-9 * sv[0]:
        raise InputError(f"collapse: Tc, nu and the master curve are not all determined by the "
                         f"{n_pts} points in the window (degenerate fit: the points take too few "
                         f"distinct x values for degree {model.degree}); lower the degree or add "
                         f"temperatures")
    cov = np.linalg.pinv(res.jac.T @ res.jac)
    factor = float(np.sqrt(max(1.0, chi2 / dof)))
    g = model.n_global
    tc_err, nu_err = np.sqrt(np.diag(cov)[:2]) * factor
    om_err = float(np.sqrt(cov[2, 2]) * factor) if model.fit_omega else float("nan")
    corr = float(cov[0, 1] / np.sqrt(cov[0, 0] * cov[1, 1]))
    if error_method == "bootstrap":
        rng = np.random.default_rng(seed)
        boot = []
        for _ in range(int(n_boot)):
            for d in data.values():
                d["yb"] = d["y"] + d["e"] * rng.standard_normal(d["y"].size)
            rb = _fit_fixed(model, data, sel, p, lo, hi, yfield="yb")
            boot.append(rb.x[:g])
        boot = np.array(boot)
        tc_err, nu_err = boot[:, 0].std(ddof=1), boot[:, 1].std(ddof=1)
        om_err = float(boot[:, 2].std(ddof=1)) if model.fit_omega else float("nan")
        corr = float(np.corrcoef(boot[:, 0], boot[:, 1])[0, 1])
        factor = 1.0
    tc_fit, nu_fit, omega_fit, coeffs = model.split(p)  # best-fit Tc, nu, omega; per-curve terms
    xs = {n: scaling_variable(d["L"], d["T"], tc_fit, nu_fit) for n, d in data.items()}
    used_x = np.concatenate([xs[n][sel[n]] for n in data])
    sizes = sorted({int(L) for n, d in data.items() for L in d["L"][sel[n]]})
    return {
        "tc_K": float(tc_fit), "tc_err_K": float(tc_err), "nu": float(nu_fit),
        "nu_err": float(nu_err), "corr_tc_nu": corr,
        "omega": float(omega_fit) if model.has_corr else float("nan"),
        "omega_err": om_err, "chi2": chi2, "dof": int(dof), "chi2_dof": chi2 / dof,
        "error_method": error_method, "errors_scaled_by": factor, "x_window": (lo_w, hi_w),
        "x_range": (float(used_x.min()), float(used_x.max())), "n_points": int(n_pts),
        "sizes": sizes, "used": sel, "x": xs,
        "coefficients": {n: q[: model.degree + 1].tolist() for n, q in coeffs.items()},
        "correction_amplitude": ({n: float(q[-1]) for n, q in coeffs.items()} if model.has_corr
                                 else None),
        "x_scale": scale, "degree": model.degree, "n_iter": n_iter,
        "selection_settled": settled,
    }


def collapse_fit(sizes, temperatures_K, values, errors, *, tc_guess_K, **kw):
    """Data collapse of one quantity (U4 or xi/L): Tc and nu with errors.

    Parameters
    ----------
    sizes, temperatures_K, values, errors : array_like (n,)
        One entry per (L, T) point: L in lattice cells, T in K, the dimensionless value and
        its standard error.
    tc_guess_K : float
        Starting Tc (K).
    **kw
        As :func:`joint_collapse_fit` (nu_guess, x_window, degree, correction, error_method, ...).

    Returns
    -------
    dict
        As :func:`joint_collapse_fit`, with the quantity named "y".
    """
    return joint_collapse_fit({"y": (sizes, temperatures_K, values, errors)},
                              tc_guess_K=tc_guess_K, **kw)


def master_curve(fit, x, name="y"):
    """The fitted master curve P(x) of quantity ``name`` (without the L^-omega correction)."""
    c = fit["coefficients"][name]
    return np.polynomial.polynomial.polyval(np.asarray(x, dtype=np.float64) / fit["x_scale"], c)
