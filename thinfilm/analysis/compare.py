"""Measured curves beside a simulated sweep: one table and figure on T and on T/Tc, and a
fitted constant offset between the sample's thermometer and the simulated temperature.

The offset dT is fitted, never applied: the simulated curve y_sim(T) is compared with the
measured y(T) as s y(T) = y_sim(T - dT), a weighted least-squares fit of dT (and of a scale s
for signals in arbitrary units) over the measured points whose shifted temperature lies inside
the simulated range; y_sim is interpolated linearly between simulated temperatures and its
error is added in quadrature. A positive dT means the sample's thermometer reads higher than
the simulated temperature at the same state.
"""

import json
import math
from pathlib import Path

import numpy as np
from scipy import optimize

from thinfilm import _io
from thinfilm.input.errors import InputError

__all__ = ["read_simulation", "thermometer_offset", "compare_run"]

SIM_QUANTITIES = {  # measured name -> column of observables.csv
    "magnetisation": "m_abs",
    "correlation_length_nm": "correlation_length_nm",
    "mean_domain_area_nm2": "mean_domain_area_nm2",
    "period_nm": "stripe_period_nm",
    "stripe_order": "stripe_order",
}


def read_simulation(run_dir):
    """Largest-size rows of a sweep run folder and its Tc.

    Returns
    -------
    dict
        temperature_K (increasing), columns {name: array}, size, tc_K, tc_err_K (None when the
        sweep could not place Tc), run_dir.
    """
    from thinfilm.runs.folder import read_csv_table

    run_dir = Path(run_dir)
    obs = run_dir / "observables.csv"
    if not obs.is_file():
        raise InputError(f"{run_dir}: has no observables.csv; compare needs the folder of a "
                         "finished temperature sweep (thinfilm run on a sweep scenario)")
    tab = read_csv_table(obs)
    sizes = np.asarray(tab.get("size", np.zeros(len(tab["temperature_K"]))), dtype=float)
    big = sizes == np.nanmax(sizes)
    order = np.argsort(tab["temperature_K"][big])
    cols = {k: np.asarray(v[big], dtype=float)[order] for k, v in tab.items()
            if np.issubdtype(np.asarray(v).dtype, np.number)}
    tc = {}
    if (run_dir / "tc.json").is_file():
        tc = json.loads((run_dir / "tc.json").read_text())
    return {"temperature_K": cols["temperature_K"], "columns": cols,
            "size": int(np.nanmax(sizes)) if np.isfinite(np.nanmax(sizes)) else None,
            "tc_K": tc.get("tc_K"), "tc_err_K": tc.get("tc_err_K"), "run_dir": str(run_dir)}


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


def _measured(mt=None, series=None):
    """{name: (T, y, e, unit label, needs scale)} from an M(T) CSV and an image-series CSV."""
    from thinfilm.analysis.mt_fit import noise_level
    from thinfilm.analysis.mt_table import read_curve

    out = {}
    if mt is not None:
        c = read_curve(mt)
        y = c["signal"] if np.mean(c["signal"][:3]) >= 0 else -c["signal"]
        e = c["signal_err"] if c["signal_err"] is not None else np.full(y.size, noise_level(y))
        out["magnetisation"] = (c["temperature_K"], y, e,
                                f"{c['signal_name']} ({c['signal_unit']})", True)
    if series is not None:
        from thinfilm.runs.folder import read_csv_table

        tab = read_csv_table(series)
        if "temperature_K" not in tab:
            raise InputError(f"{series}: has no temperature_K column; give the image_series.csv "
                             "written by thinfilm image-series")
        for name in ("correlation_length_nm", "mean_domain_area_nm2", "period_nm",
                     "stripe_order"):
            if name in tab and np.isfinite(tab[name]).sum() >= 2:
                err = tab.get(name + "_err", np.zeros(len(tab[name])))
                out[name] = (tab["temperature_K"], tab[name], np.nan_to_num(err), name, False)
    if not out:
        raise InputError("compare: give a measured M(T) CSV (--mt) or an image_series.csv "
                         "(--series)")
    return out


def compare_run(run_dir, out_dir, *, mt=None, series=None, tc_measured_K=None,
                tc_measured_err_K=None):
    """Measured curves beside a simulated sweep. Writes ``compare.csv``, ``compare.json`` and
    ``compare.png`` (with ``captions.md``) into ``out_dir``.

    Parameters
    ----------
    run_dir : path
        Sweep run folder (observables.csv, tc.json).
    mt, series : path, optional
        Measured M(T) CSV (as for ``thinfilm fit-mt``) and/or an image_series.csv.
    tc_measured_K, tc_measured_err_K : float, optional
        The sample's Tc for the reduced axis; default: a critical fit of the M(T) CSV.

    Returns
    -------
    dict
        The content of compare.json.
    """
    sim = read_simulation(run_dir)
    meas = _measured(mt, series)
    if tc_measured_K is None and mt is not None:
        from thinfilm.analysis.mt_fit import fit_magnetisation
        from thinfilm.analysis.mt_table import read_curve

        try:
            fit = fit_magnetisation(read_curve(mt))
            tc_measured_K, tc_measured_err_K = fit["tc_K"], fit["tc_err_K"]
        except InputError:
            tc_measured_K = None
    offsets, rows = {}, []
    for name, (T, y, e, _label, scale) in meas.items():
        col = SIM_QUANTITIES[name]
        if col not in sim["columns"] or not np.isfinite(sim["columns"][col]).any():
            offsets[name] = {"note": f"the run folder has no {col} values"}
            continue
        ys = sim["columns"][col]
        es = sim["columns"].get(col + "_err", np.zeros(ys.size))
        try:
            offsets[name] = thermometer_offset(T, y, e, sim["temperature_K"], ys, es,
                                               scale=scale)
        except InputError as exc:
            offsets[name] = {"note": str(exc)}
        s = offsets[name].get("scale", 1.0)
        for k in range(len(T)):
            t = T[k]
            inside = sim["temperature_K"][0] <= t <= sim["temperature_K"][-1]
            red = t / tc_measured_K if tc_measured_K else math.nan
            t_sim_red = red * sim["tc_K"] if (sim["tc_K"] and tc_measured_K) else math.nan
            at_red = (float(np.interp(t_sim_red, sim["temperature_K"], ys))
                      if np.isfinite(t_sim_red) and sim["temperature_K"][0] <= t_sim_red
                      <= sim["temperature_K"][-1] else math.nan)
            rows.append([name, t, red, y[k], e[k], s * y[k],
                         float(np.interp(t, sim["temperature_K"], ys)) if inside else math.nan,
                         at_red])
    out = Path(out_dir)
    cols = ["quantity", "temperature_K", "T_over_Tc_measured", "measured", "measured_err",
            "measured_scaled", "simulated_at_same_T", "simulated_at_same_T_over_Tc"]
    _io.write_csv(out / "compare.csv", cols, rows)
    info = {"run_dir": str(run_dir), "simulated_size": sim["size"],
            "simulated_tc_K": sim["tc_K"], "simulated_tc_err_K": sim["tc_err_K"],
            "measured_tc_K": tc_measured_K, "measured_tc_err_K": tc_measured_err_K,
            "offsets": offsets,
            "offset_note": ("fitted constant thermometer offset dT in s y(T) = y_sim(T - dT); "
                            "reported only, not applied to any table or figure"),
            "measured_sources": {"mt": None if mt is None else str(mt),
                                 "series": None if series is None else str(series)}}
    if sim["tc_K"] and tc_measured_K:
        info["tc_difference_K"] = tc_measured_K - sim["tc_K"]
    from thinfilm.render.compare_plot import plot_compare

    info["figure"] = plot_compare(sim, meas, offsets, info, out).name
    _io.write_json(out / "compare.json", info)
    return info
