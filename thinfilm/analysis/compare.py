"""A fitted constant offset between a sample's thermometer and a simulated temperature axis
(the table and figure of measured curves beside a sweep: :mod:`thinfilm.render.compare_plot`).

The offset dT is fitted, never applied: the simulated curve y_sim(T) is compared with the
measured y(T) as s y(T) = y_sim(T - dT), a weighted least-squares fit of dT (and of a scale s
for signals in arbitrary units) over the measured points whose shifted temperature lies inside
the simulated range; y_sim is interpolated linearly between simulated temperatures and its
error is added in quadrature. A positive dT means the sample's thermometer reads higher than
the simulated temperature at the same state.
"""

import numpy as np
from scipy import optimize

from thinfilm.input.errors import InputError

__all__ = ["SIM_QUANTITIES", "thermometer_offset"]

SIM_QUANTITIES = {  # measured name -> column of observables.csv
    "magnetisation": "m_abs",
    "correlation_length_nm": "correlation_length_nm",
    "mean_domain_area_nm2": "mean_domain_area_nm2",
    "period_nm": "stripe_period_nm",
    "stripe_order": "stripe_order",
}


def thermometer_offset(T, y, e, T_sim, y_sim, e_sim, *, scale=True):
    """Fit s y(T) = y_sim(T - dT); returns dict offset_K, offset_err_K, scale, scale_err,
    n_points, chi2, dof (errors from the covariance, scaled by chi2/dof when above 1)."""
    T, y, e = (np.asarray(a, dtype=float) for a in (T, y, e))
    ts, ys, es = (np.asarray(a, dtype=float) for a in (T_sim, y_sim, e_sim))
    ok = np.isfinite(ys)
    ts, ys, es = ts[ok], ys[ok], np.nan_to_num(es[ok])
    if ts.size < 3:
        raise InputError("the simulated curve has fewer than 3 temperatures with values")
    span = ts[-1] - ts[0]

    def resid(p):
        d, s = p[0], (p[1] if scale else 1.0)
        t = T - d
        m = (t >= ts[0]) & (t <= ts[-1])
        r = np.zeros(T.size)
        sim = np.interp(t[m], ts, ys)
        err = np.hypot(s * e[m], np.interp(t[m], ts, es))
        r[m] = (s * y[m] - sim) / np.maximum(err, 1e-300)
        return r

    # start: best offset on a grid (scale from the ratio of means)
    s0 = 1.0
    if scale:
        mid = (T >= ts[0]) & (T <= ts[-1])
        s0 = (np.mean(ys) / np.mean(y[mid])) if mid.any() and np.mean(y[mid]) else 1.0
    grid = np.linspace(-0.5 * span, 0.5 * span, 101)
    costs = [np.sum(resid([d, s0])[:] ** 2) / max(1, np.count_nonzero(resid([d, s0])))
             for d in grid]
    p0 = [grid[int(np.argmin(costs))]] + ([s0] if scale else [])
    res = optimize.least_squares(resid, p0, x_scale="jac")
    n = int(np.count_nonzero(res.fun))
    dof = n - len(p0)
    if n < len(p0) + 2:
        raise InputError(f"only {n} measured points overlap the simulated temperature range "
                         f"{ts[0]:g} .. {ts[-1]:g} K after the offset; a thermometer offset needs "
                         "at least 4")
    chi2 = float(np.sum(res.fun**2))
    try:
        cov = np.linalg.inv(res.jac.T @ res.jac) * max(1.0, chi2 / dof)
    except np.linalg.LinAlgError:
        cov = np.full((len(p0), len(p0)), np.nan)
    err = np.sqrt(np.abs(np.diag(cov)))
    return {"offset_K": float(res.x[0]), "offset_err_K": float(err[0]),
            "scale": float(res.x[1]) if scale else 1.0,
            "scale_err": float(err[1]) if scale else 0.0, "n_points": n, "chi2": chi2,
            "dof": dof}
