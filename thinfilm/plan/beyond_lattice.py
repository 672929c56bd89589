"""The plan beyond the lattice: scaling collapse, extrapolated lengths and the resolved window.

Called by :func:`thinfilm.plan.heating_plan.make_plan`. Writes ``extrapolation.csv`` (units in
the column names; every row flagged measured, extrapolated or refused) and returns the part of
plan.json that says what was measured on a lattice and what was extrapolated.

Near Tc the absolute edges of the resolved window carry the error of Tc, but its width does not:
with xi = A |t|^-1 the window where xi exceeds a resolution R is |T - Tc| < Tc A / R, whose error
comes from the amplitude A alone. The plan therefore also gives this half-width, which sets the
temperature step an experiment needs, even where Tc itself is less certain than the window is
wide (then Tc has to be located in the experiment, and the plan says so).
"""

import math

import numpy as np

from thinfilm._io import write_csv
from thinfilm._numbers import fmt_value, round_pm
from thinfilm.analysis.universality import check_universality
from thinfilm.input.errors import InputError
from thinfilm.model.parameters import build_model
from thinfilm.plan.curves import clean_json
from thinfilm.plan.extrapolated import (
    EXTRAPOLATION_COLUMNS,
    collapse_from_table,
    extrapolated_lengths,
)
from thinfilm.runs.folder import read_csv_table
from thinfilm.runs.sweep_point import sized_scenario

__all__ = ["beyond_lattice"]


def _halfwidths(fit, tc_K, resolution_nm):
    """{side: (half-width K, error K)} of |T - Tc| where A |t|^-1 exceeds the resolution."""
    out = {}
    for side, key in (("above", "amplitude_nm"), ("below", "amplitude_below_nm")):
        a = fit.get(key)
        if side not in fit.get("sides", ()) or a is None or not math.isfinite(a):
            continue
        err = fit.get(key.replace("_nm", "_err_nm"))
        w = tc_K * a / resolution_nm
        out[side] = [w, None if err is None else tc_K * err / resolution_nm]
    return out


def _lengths(tab):
    """The table with correlation_length_nm taken from the S(k) Ornstein-Zernike length where
    that has a finite value and error (it is far less noisy than the second moment, on both
    sides of Tc), else from the second-moment estimator."""
    sk, sk_err = tab.get("correlation_length_sk_nm"), tab.get("correlation_length_sk_nm_err")
    if sk is None or sk_err is None:
        return tab
    ok = np.isfinite(sk) & np.isfinite(sk_err) & (sk_err > 0)
    out = dict(tab)
    out["correlation_length_nm"] = np.where(ok, sk, tab["correlation_length_nm"])
    out["correlation_length_nm_err"] = np.where(ok, sk_err, tab["correlation_length_nm_err"])
    return out


def beyond_lattice(scenario, out, *, tc_K, tc_err_K, resolution_nm, field_of_view_nm=None,
                   collapse=None):
    """Collapse, extrapolated xi and domain size, and the resolved window; writes the CSV.

    ``collapse`` is the U4 collapse already fitted for the Tc record (tc.json ``collapse``):
    it is reused, not fitted again, so the plan shows one collapse (a text: the reason the
    record has none).

    Returns a JSON-ready dict: ``collapse`` (or ``collapse_refused``), ``fits``,
    ``resolved_window`` (absolute edges with errors, or the reason they are refused),
    ``resolved_halfwidth_K`` ({side: [K, error K]}), ``universality``, ``csv`` and ``note``.
    """
    tab = _lengths(read_csv_table(out / "observables.csv"))
    sides = {}

    def film_side(size):
        if size not in sides:
            sides[size] = float(min(build_model(sized_scenario(scenario, size)).lattice.box_nm))
        return sides[size]

    k = scenario.material.anisotropy_J
    res = {"resolution_nm": resolution_nm}
    if isinstance(collapse, str):
        res["collapse_refused"] = collapse
    elif collapse is not None:
        res["collapse"] = dict(collapse, universality=check_universality(collapse, k))
    else:
        try:
            res["collapse"] = collapse_from_table(tab, film_side, tc_guess_K=tc_K, anisotropy=k)
        except InputError as exc:
            res["collapse_refused"] = str(exc)
    try:
        ext = extrapolated_lengths(tab, film_side, tc_K=tc_K, tc_err_K=tc_err_K or 0.0,
                                   anisotropy=k, resolution_nm=resolution_nm)
    except InputError as exc:
        res.update(extrapolation_refused=str(exc), csv=None)
        return clean_json(res)
    res.update(fits=ext["fits"], resolved_window=ext["resolved_window"],
               universality=ext["universality"], note=ext["note"], csv=None)
    cols = ext["columns"]
    if cols is not None:
        names = [c for c in EXTRAPOLATION_COLUMNS if c in cols]
        rows = list(zip(*[cols[c] for c in names], strict=True))
        write_csv(out / "extrapolation.csv", names, rows)
        res["csv"] = "extrapolation.csv"
        res["columns"] = {c: EXTRAPOLATION_COLUMNS[c] for c in names}
        res["curve"] = {"temperature_K": cols["temperature_K"],
                        "correlation_length_nm": cols["correlation_length_nm"],
                        "correlation_length_err_nm": cols["correlation_length_err_nm"],
                        "flag": cols["correlation_length_flag"]}
        fit = ext["fits"].get("correlation_length", {})
        res["resolved_halfwidth_K"] = _halfwidths(fit, tc_K, resolution_nm)
        if field_of_view_nm is not None:
            res["view_halfwidth_K"] = _halfwidths(fit, tc_K, field_of_view_nm)
        widths = [w for w, _ in res["resolved_halfwidth_K"].values() if np.isfinite(w)]
        if widths and tc_err_K and max(widths) < tc_err_K:
            res["tc_note"] = (f"the resolved window (half-width {fmt_value(max(widths), None, 2)}"
                              f" K) is narrower than the error of Tc "
                              f"({round_pm(tc_K, tc_err_K)[1]} K): locate Tc in the "
                              f"experiment and step by less than the half-width around it")
    return clean_json(res)
