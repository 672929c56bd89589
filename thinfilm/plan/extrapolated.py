"""Finite-size scaling and extrapolated lengths from a sweep table, for the heating plan.

Plain functions of the observables table (``thinfilm.runs.folder.read_csv_table`` of
``observables.csv``: columns size, temperature_K, binder, binder_err, correlation_length_nm,
correlation_length_nm_err, mean_domain_area_nm2, mean_domain_area_nm2_err). Nothing is written;
:data:`EXTRAPOLATION_COLUMNS` gives the units of the suggested ``extrapolation.csv``.
"""

import numpy as np

from thinfilm.analysis.extrapolation import fit_critical_length, fit_domain_size, predict_length
from thinfilm.analysis.length_window import temperatures_for_length
from thinfilm.analysis.scaling import joint_collapse_fit
from thinfilm.analysis.size_convergence import CONVERGED, size_convergence
from thinfilm.analysis.universality import check_universality, universality_class
from thinfilm.input.errors import InputError
from thinfilm.plan.curves import clean_json

__all__ = ["EXTRAPOLATION_COLUMNS", "collapse_from_table", "extrapolated_lengths"]

#: {column of extrapolation.csv: unit or description}
EXTRAPOLATION_COLUMNS = {
    "temperature_K": "K",
    "t_reduced": "(T - Tc)/Tc with the Tc of the fit",
    "correlation_length_nm": ("nm, infinite film: fit xi = A abs(t)^-nu (1 + c abs(t)) of "
                              "correlation_length_nm, through the finite-size scaling form when "
                              "the sweep has two or more sizes"),
    "correlation_length_err_nm": "nm, one standard error (fit covariance, Tc error included)",
    "correlation_length_flag": ("measured (inside the temperatures where a size converged), "
                                "finite-size scaling (inside the fitted points, where no size "
                                "converged), extrapolated, or refused"),
    "converged_length_nm": ("nm, correlation_length_nm of the size converged in the film size "
                            "with the smallest error at this sweep temperature; empty where "
                            "none converged"),
    "converged_length_err_nm": "nm, its standard error",
    "converged_size": "L of that size (empty where none converged)",
    "domain_diameter_nm": "nm, the same fit of 2 sqrt(mean_domain_area_nm2 / pi) above Tc",
    "domain_diameter_err_nm": "nm, one standard error",
    "domain_diameter_flag": "measured, extrapolated, or refused",
}


def _side_nm(film_side_nm, sizes):
    if callable(film_side_nm):
        return np.array([float(film_side_nm(int(L))) for L in sizes])
    if isinstance(film_side_nm, dict):
        try:
            return np.array([float(film_side_nm[int(L)]) for L in sizes])
        except KeyError as exc:
            raise InputError(f"film_side_nm has no entry for size {exc.args[0]}") from None
    return np.asarray(sizes, dtype=np.float64) * float(film_side_nm)


def _col(table, name):
    if name not in table:
        raise InputError(f"the observables table lacks the column {name!r}")
    return np.asarray(table[name], dtype=np.float64)


def collapse_from_table(table, film_side_nm, *, tc_guess_K, anisotropy,
                        quantities=("binder",), **kw):
    """Data collapse of U4 (and optionally xi/L) from the observables table.

    Parameters
    ----------
    table : dict of arrays
        Observables table (module docstring).
    film_side_nm : dict, callable or float
        {L: side of the film in nm}, a function of L, or the cell size in nm (side = L x it).
    tc_guess_K : float
        Starting Tc (K), e.g. tc.json's tc_K.
    anisotropy : float
        Single-ion anisotropy K (sign only) for the universality check.
    quantities : tuple of str
        "binder" and/or "xi_over_L" (correlation_length_nm / film side). The sweep's
        correlation_length_nm switches to its ordered-phase form where binder > 0.4, which
        puts a step into xi/L near Tc; hence binder alone by default.
    **kw
        Passed to :func:`thinfilm.analysis.scaling.joint_collapse_fit`.

    Returns
    -------
    dict (JSON-ready)
        tc_K, tc_err_K, nu, nu_err, chi2_dof, dof, x_window, x_range, n_points, sizes,
        error_method, quantities, universality (from
        :func:`thinfilm.analysis.universality.check_universality`).
    """
    L = _col(table, "size")
    T = _col(table, "temperature_K")
    data = {}
    for q in quantities:
        if q == "binder":
            data[q] = (L, T, _col(table, "binder"), _col(table, "binder_err"))
        elif q == "xi_over_L":
            side = _side_nm(film_side_nm, L)
            data[q] = (L, T, _col(table, "correlation_length_nm") / side,
                       _col(table, "correlation_length_nm_err") / side)
        else:
            raise InputError(f"collapse quantity {q!r}: use 'binder' or 'xi_over_L'")
    fit = joint_collapse_fit(data, tc_guess_K=tc_guess_K, **kw)
    keep = ("tc_K", "tc_err_K", "nu", "nu_err", "corr_tc_nu", "chi2_dof", "dof", "x_window",
            "x_range", "n_points", "sizes", "error_method", "errors_scaled_by")
    out = {k: fit[k] for k in keep}
    out["quantities"] = list(quantities)
    out["universality"] = check_universality(fit, anisotropy)
    return clean_json(out)


def _grid(fit, measured_T, n_fine):
    """Measured temperatures inside the valid range plus n_fine log-spaced points per side."""
    tc = fit["tc_K"]
    extra = []
    for s in fit["sides"]:
        lo, hi = fit["valid_t_min"][s], fit["t_range"][s][0]
        if lo < hi:
            a = np.geomspace(lo, hi, n_fine)
            extra.append(tc * (1 + a) if s == "above" else tc * (1 - a))
    T = np.unique(np.concatenate([np.asarray(measured_T, dtype=np.float64)] + extra))
    keep = predict_length(fit, T, strict=False)["flag"] != "refused"
    return T[keep]


def extrapolated_lengths(table, film_side_nm, *, tc_K, tc_err_K, anisotropy, resolution_nm=None,
                         temperatures_K=None, n_fine=10, amplitude_ratio=None, **kw):
    """Correlation length and domain diameter extrapolated to lengths the lattice cannot hold.

    Easy axis (K > 0) only: xi = A abs(t)^-1 (1 + c abs(t)) on both sides of Tc. Each row is
    first flagged converged in the film size or finite-size limited
    (:func:`thinfilm.analysis.size_convergence.size_convergence`). With two or more sizes every
    row enters through the finite-size scaling form xi_L = L f(t L^(1/nu)) (``finite_size`` of
    :func:`thinfilm.analysis.extrapolation.fit_critical_length`), so a length cut down by the
    box is read as what it is; with one size (or when that fit is refused) only the converged
    rows are fitted. The below-Tc amplitude is
    fitted (``amplitude_ratio`` None) because the sweep's length is a second-moment estimator,
    for which the exact-length ratio f+/f- = 2 does not hold; pass 2.0 for an exponential
    length.

    Parameters
    ----------
    table : dict of arrays
        Observables table (module docstring).
    film_side_nm : dict, callable or float
        As in :func:`collapse_from_table`.
    tc_K, tc_err_K : float
        Tc and its error (K), e.g. from tc.json or :func:`collapse_from_table`.
    anisotropy : float
        Single-ion anisotropy K (sign only).
    resolution_nm : float, optional
        Instrument resolution (nm): adds the window where xi exceeds it.
    temperatures_K : array_like, optional
        Rows of the table; default the measured temperatures inside the valid range plus
        ``n_fine`` log-spaced points per side between the valid limit and the fitted points.
    **kw
        Passed to the fits (min_ratio, t_max, max_rel_err, max_factor, correction).

    Returns
    -------
    dict (JSON-ready)
        ``columns`` ({name of :data:`EXTRAPOLATION_COLUMNS`: list}, or None), ``fits``
        ({quantity: summary}), ``resolved_window`` (from
        :func:`thinfilm.analysis.length_window.temperatures_for_length`, or None),
        ``universality`` and ``note``.
    """
    cls = universality_class(anisotropy)
    if not cls["power_law"]:
        return clean_json({"columns": None, "fits": {}, "resolved_window": None,
                           "universality": cls,
                           "note": f"{cls['note']}: no power-law extrapolation"})
    L = _col(table, "size")
    side = _side_nm(film_side_nm, L)
    T = _col(table, "temperature_K")
    x, e = _col(table, "correlation_length_nm"), _col(table, "correlation_length_nm_err")
    others = [_col(table, c) for c in ("correlation_length_sk_nm", "correlation_length_fit_nm")
              if c in table]
    conv = size_convergence(L, T, x, e, side, others=others)
    converged = conv["status"] == CONVERGED
    xfit, notes = None, []
    if np.unique(L[np.isfinite(x)]).size >= 2:
        try:
            xfit = fit_critical_length(T, x, e, tc_K=tc_K, tc_err_K=tc_err_K, film_side_nm=side,
                                       nu=cls["nu"], amplitude_ratio=amplitude_ratio,
                                       finite_size=True, **kw)
        except InputError as exc:
            notes.append(f"finite-size scaling fit refused ({exc}); fitted the converged "
                         f"points alone")
    if xfit is None:  # converged rows only: a finite-size-limited length is never fitted
        xfit = fit_critical_length(T[converged], x[converged], e[converged], tc_K=tc_K,
                                   tc_err_K=tc_err_K, film_side_nm=side[converged],
                                   nu=cls["nu"], amplitude_ratio=amplitude_ratio, **kw)
    grid = _grid(xfit, T, n_fine) if temperatures_K is None else np.asarray(temperatures_K, float)
    px = predict_length(xfit, grid, strict=False)
    flag = _converged_flags(px, xfit, T, converged)
    byt = conv["by_temperature"]
    at_sweep = np.array([np.argmin(np.abs(byt["temperature_K"] - g)) for g in grid])
    same = np.abs(byt["temperature_K"][at_sweep] - grid) < 1e-6
    pick = same & byt["converged"][at_sweep]

    def conv_col(name):
        return np.where(pick, byt[name][at_sweep], np.nan)

    cols = {"temperature_K": grid, "t_reduced": px["t_reduced"],
            "correlation_length_nm": px["value_nm"], "correlation_length_err_nm": px["err_nm"],
            "correlation_length_flag": flag, "converged_length_nm": conv_col("value_nm"),
            "converged_length_err_nm": conv_col("err_nm"), "converged_size": conv_col("size")}
    fits = {"correlation_length": _summary(xfit)}
    fits["correlation_length"]["n_converged_rows"] = int(converged.sum())
    if "mean_domain_area_nm2" in table:
        try:
            dfit = fit_domain_size(T, _col(table, "mean_domain_area_nm2"),
                                   _col(table, "mean_domain_area_nm2_err"), tc_K=tc_K,
                                   tc_err_K=tc_err_K, film_side_nm=side, **kw)
            pd = predict_length(dfit, grid, strict=False)
            cols.update(domain_diameter_nm=pd["value_nm"], domain_diameter_err_nm=pd["err_nm"],
                        domain_diameter_flag=pd["flag"])
            fits["domain_diameter"] = _summary(dfit)
        except InputError as exc:
            notes.append(f"domain diameter not extrapolated: {exc}")
    window = None
    if resolution_nm is not None:
        window = temperatures_for_length(xfit, resolution_nm, strict=False)
    return clean_json({"columns": cols, "fits": fits, "resolved_window": window,
                       "universality": cls, "note": "; ".join(notes), "converged": byt})


def _converged_flags(pred, fit, T_rows, converged):
    """predict_length flags with "measured" kept only inside the abs(t) range of the sweep
    temperatures where a size converged (per side, to 0.1 % of abs(t): the fit's Tc moves
    within its prior); elsewhere inside the fitted points the flag is "finite-size scaling"
    (every point there is cut down by the box), or "extrapolated" for a fit of converged
    rows alone."""
    tc = fit["tc_K"]
    other = "finite-size scaling" if fit.get("finite_size") else "extrapolated"
    flag = np.asarray(pred["flag"], dtype=object).copy()
    tconv = np.asarray(T_rows, dtype=np.float64)[converged]
    at_c = np.abs(tconv - tc) / tc
    side_c = np.where(tconv > tc, "above", "below")
    for i in np.nonzero(flag == "measured")[0]:
        a = abs(float(pred["t_reduced"][i]))
        mine = at_c[side_c == pred["side"][i]]
        if mine.size == 0 or not (mine.min() * (1 - 1e-3) <= a <= mine.max() * (1 + 1e-3)):
            flag[i] = other
    return flag.astype(str)


def _summary(fit):
    keep = ("quantity", "tc_K", "tc_err_K", "nu", "nu_err", "nu_fitted", "amplitude_nm",
            "amplitude_err_nm", "amplitude_below_nm", "correction", "chi2_dof", "dof", "sides",
            "t_range", "max_used_nm", "valid_t_min", "valid_range_K", "limit_reason", "rule")
    out = {k: fit[k] for k in keep}
    for k in ("finite_size", "xi_over_L_at_tc", "crossover_q"):
        if k in fit:
            out[k] = fit[k]
    out["n_points"] = int(np.sum(fit["used"]))
    return out
