"""The heating plan's reading of a finished sweep folder: its observables, its one Tc
(``tc.json``) and the windows, curves and schedule of the largest size.

Called by :func:`thinfilm.plan.heating_plan.make_plan`; temperatures in K, lengths in nm.
"""

import json
import math
from pathlib import Path

import numpy as np

from thinfilm._io import write_json
from thinfilm.analysis.tc_rule import choose_tc
from thinfilm.input.errors import InputError
from thinfilm.plan.beyond_lattice import _lengths
from thinfilm.plan.curves import crossing, fill_errors, schedule, smooth_log
from thinfilm.runs.folder import read_csv_table

__all__ = ["analyse_sweep", "tc_record", "NEEDED"]

NEEDED = ("temperature_K", "m_abs", "correlation_length_nm", "mean_domain_area_nm2")


def _read_sweep(out):
    """The observables table (all sizes) and the curves of the largest size."""
    path = out / "observables.csv"
    tab = read_csv_table(path)
    missing = [c for c in NEEDED + ("size",) if c not in tab]
    if missing:
        raise InputError(f"{path}: lacks the column(s) {', '.join(missing)} the heating plan needs")
    sizes = tab["size"][np.isfinite(tab["size"])]
    if not sizes.size:
        raise InputError(f"{path}: has no rows with a lattice size; run the sweep again")
    size = int(np.max(sizes))
    keep = (tab["size"] == size) & np.isfinite(tab["temperature_K"])
    order = np.argsort(tab["temperature_K"][keep])
    cols = {k: v[keep][order] for k, v in tab.items() if v.dtype.kind == "f"}
    return size, cols, tab


def _col(cols, name):
    v = cols.get(name)
    return np.full_like(cols["temperature_K"], np.nan) if v is None else v


def tc_record(scenario, out, tab=None):
    """The one Tc of a sweep folder, by :func:`thinfilm.analysis.tc_rule.choose_tc` on its
    observables.csv. A ``tc.json`` holding something else (written by an earlier version) is
    rewritten, with the manifest's ``tc_K``, so the folder and the plan give one answer.

    Returns
    -------
    (dict, bool)
        The record (tc.json content) and whether tc.json was rewritten.
    """
    out = Path(out)
    if tab is None:
        tab = read_csv_table(out / "observables.csv")
    try:
        old = json.loads((out / "tc.json").read_text())
    except (OSError, ValueError):
        old = {}
    if not isinstance(old, dict):
        old = {}
    rec = choose_tc(tab, anisotropy=scenario.material.anisotropy_J)
    for k in ("tc_realisations_K", "tc_spread_K", "warnings"):
        if k in old:
            rec[k] = old[k]
    rec["cross_checks"] += [c for c in old.get("cross_checks") or []
                            if isinstance(c, dict) and c.get("method") == "realisation_mean"]

    def same(a, b):
        if a is None or b is None:
            return a is b
        return abs(float(a) - float(b)) <= 1e-9 * max(1.0, abs(float(a)))

    stale = (old.get("status") != rec["status"] or old.get("method") != rec["method"]
             or not same(old.get("tc_K"), rec["tc_K"])
             or not same(old.get("tc_err_K"), rec["tc_err_K"]))
    if stale:
        write_json(out / "tc.json", rec)
        man = out / "manifest.json"
        try:
            m = json.loads(man.read_text())
        except (OSError, ValueError):
            m = None
        if isinstance(m, dict) and "tc_K" in m and m.get("tc_K") != rec["tc_K"]:
            m["tc_K"] = rec["tc_K"]
            write_json(man, m)
    return rec, stale


def _diameter(area):
    return np.sqrt(4.0 * np.asarray(area, dtype=np.float64) / math.pi)


def analyse_sweep(out_dir, instrument, *, tc, box_nm=None, n_points=15, n_boot=400, seed=0):
    """Windows, curves and schedule from a finished sweep folder (no LLG runs).

    Parameters
    ----------
    out_dir : str or Path
        Folder with ``observables.csv``.
    instrument : dict
        As returned by :func:`instrument_values`.
    tc : dict
        The folder's Tc record (:func:`tc_record`) with status "found".
    box_nm : float, optional
        Side of the largest simulated film (nm); domains cannot be larger. Default: the field
        of view only.
    n_points : int
        Schedule length.

    Returns
    -------
    dict
        Plain data for :func:`make_plan` (see its ``plan.json`` keys).
    """
    out = Path(out_dir)
    size, cols, tab = _read_sweep(out)
    t = cols["temperature_K"]
    res, fov = instrument["resolution_nm"], instrument["field_of_view_nm"]
    xi, xi_err = cols["correlation_length_nm"], fill_errors(cols["correlation_length_nm"],
                                                            _col(cols, "correlation_length_nm_err"))
    area = cols["mean_domain_area_nm2"]
    rel_area = (fill_errors(area, _col(cols, "mean_domain_area_nm2_err"))
                / np.where(area > 0, area, np.nan))
    d_mean = _diameter(area)
    aw = _col(cols, "area_weighted_domain_area_nm2")
    typical = ("area_weighted_domain_area_nm2" if np.isfinite(aw).sum() >= 3
               else "mean_domain_area_nm2")
    d_typ = _diameter(aw) if typical != "mean_domain_area_nm2" else d_mean
    d_typ_err = 0.5 * rel_area * d_typ  # relative error of a diameter = half that of the area
    limit_nm = fov if box_nm is None else (box_nm if fov is None else min(fov, box_nm))
    low = crossing("fall_from_start", t, d_typ, d_typ_err, limit_nm, n_boot=n_boot, seed=seed)
    rlo = crossing("rise_before_peak", t, xi, xi_err, res, n_boot=n_boot, seed=seed + 1)
    rhi = crossing("fall_after_peak", t, xi, xi_err, res, n_boot=n_boot, seed=seed + 2)
    high, high_from = rhi, "correlation length"
    if rhi["bound"] == "never":
        high = crossing("fall_from_start", t, d_typ, d_typ_err, res, n_boot=n_boot, seed=seed + 3)
        high_from = "domain diameter (the correlation length never exceeds the resolution)"
    # the plan's one xi curve: the smoothed ln xi of the crossings, at the sweep temperatures
    # where xi was measured (NaN elsewhere; no curve from fewer than two points)
    okx = np.isfinite(xi) & (xi > 0)
    xi_smooth = np.full_like(t, np.nan)
    if okx.sum() >= 2:
        sm = np.exp(smooth_log(t[okx], np.log(xi[okx]), (xi[okx] / xi_err[okx]) ** 2))
        xi_smooth = np.where((t >= t[okx][0]) & (t <= t[okx][-1]), np.interp(t, t[okx], sm),
                             np.nan)
    sched = schedule(t, cols["m_abs"], xi, n_points)
    fit_xi = _lengths(tab)
    keep = fit_xi["size"] == size
    fit_t = fit_xi["temperature_K"][keep]
    fit_in = np.interp(t, fit_t[np.argsort(fit_t)], fit_xi["correlation_length_nm"][keep][
        np.argsort(fit_t)]) if keep.any() else np.full_like(t, np.nan)
    return {"size": size, "temperature_K": t, "m_abs": cols["m_abs"], "xi_nm": xi,
            "xi_err_nm": xi_err,
            "xi_smooth_nm": xi_smooth, "xi_extrapolation_input_nm": fit_in,
            "d_mean_nm": d_mean, "d_typ_nm": d_typ, "d_typ_err_nm": d_typ_err,
            "typical_column": typical,
            "tc_K": tc["tc_K"], "tc_err_K": tc["tc_err_K"], "tc_method": tc["method_text"],
            "tc_json": tc, "low": low, "high": high, "high_from": high_from, "resolved_low": rlo,
            "resolved_high": rhi, "view_limit_nm": limit_nm, "schedule_K": sched}
