"""Sweep tables: column units, the critical-temperature estimate and near-Tc refinement.

All functions read the per-point rows ``{(size, temperature_K): row}`` of
:mod:`thinfilm.sweep` (rows as in :data:`thinfilm.sweep_point.ROW_COLUMNS`).
"""

import math

import numpy as np

from thinfilm.analysis.tc_rule import choose_tc

__all__ = ["COLUMN_UNITS", "sweep_table", "tc_estimate", "refine_temperatures", "N_REFINE",
           "TABLE_EXTRA", "length_convergence", "select_second_moment"]

N_REFINE = 6  # points added around the transition by refine: near-tc

#: {column of observables.csv: unit or description} (written as columns.json).
COLUMN_UNITS = {
    "size": "L, the lattice has L x L cells",
    "temperature_K": "K",
    "m_abs": "per spin, <|m|> of m along the anisotropy axis (|m| for K <= 0)",
    "m_abs_err": "per spin, standard error",
    "m_norm": "per spin, <|m vector|>",
    "m_norm_err": "per spin, standard error",
    "susceptibility": "1/meV per spin, N(<m^2>-<|m|>^2)/(kB T)",
    "susceptibility_err": "1/meV per spin, standard error",
    "susceptibility_norm": "1/meV per spin, the same with |m vector|",
    "susceptibility_norm_err": "1/meV per spin, standard error",
    "specific_heat": "kB per spin, N(<e^2>-<e>^2)/(kB T)^2",
    "specific_heat_err": "kB per spin, standard error",
    "energy_meV": "meV per spin, <e>",
    "energy_meV_err": "meV per spin, standard error",
    "binder": "dimensionless, 1 - <m^4>/(3<m^2>^2)",
    "binder_err": "dimensionless, standard error",
    "tau_int": "samples, integrated autocorrelation time (largest of e, |m|, m^2, |m vector|)",
    "n_effective": "effectively independent samples, n_samples/(2 tau_int)",
    "n_samples": "samples in the time series",
    "correlation_length_nm": ("nm, second-moment estimator (Cooper, Freedman and Preston 1982) "
                              "xi^2 = (S(0)/S(k_min) - 1)/khat_min^2: S(0) = <M^2>/N from the "
                              "whole magnetisation series above Tc, connected (<M^2> - "
                              "<|M|>^2)/N below Tc (the sweep's Tc; binder > 0.4 where it has "
                              "none; second_moment_connected says which), S(k_min) averaged "
                              "over the equivalent smallest "
                              "wavevectors and up to 1000 probes along the run; 0 where noise "
                              "puts S(0) at or below S(k_min) (xi below what the samples resolve); "
                              "empty where undefined (point.json second_moment_undefined says "
                              "why)"),
    "correlation_length_nm_err": ("nm, jackknife over 20 stretches of the run (an upper bound "
                                  "where the value is 0)"),
    "correlation_length_fit_nm": "nm, Ornstein-Zernike fit of C(r) of S.n",
    "correlation_length_full_nm": ("nm, the second moment with S(0) = <M^2>/N (disordered phase "
                                   "and the finite-size scaling region)"),
    "correlation_length_full_nm_err": "nm, jackknife over 20 stretches of the run",
    "correlation_length_connected_nm": ("nm, the second moment with S(0) = (<M^2> - <|M|>^2)/N "
                                        "(ordered phase)"),
    "correlation_length_connected_nm_err": "nm, jackknife over 20 stretches of the run",
    "second_moment_connected": "1 where correlation_length_nm is the connected form, else 0",
    "correlation_length_sk_nm": ("nm, Ornstein-Zernike fit 1/S(k) = (1 + k^2 xi^2)/chi "
                                 "at small k != 0 "
                                 "(connected correlations, both sides of Tc)"),
    "correlation_length_sk_nm_err": "nm, jackknife over snapshots",
    "correlation_length_instrument_nm": ("nm, as correlation_length_nm (second moment) but of the "
                                         "instrument view (Gaussian PSF of FWHM = resolution, "
                                         "pixel size)"),
    "correlation_length_instrument_nm_err": "nm, jackknife over snapshots",
    "correlation_length_fit_nm_err": "nm, jackknife over snapshots",
    "mean_domain_area_nm2": "nm^2, mean area of up and down domains, mean over snapshots",
    "mean_domain_area_nm2_err": "nm^2, standard error over snapshots",
    "area_weighted_domain_area_nm2": "nm^2, sum A^2/sum A, mean over snapshots",
    "domain_count": "domains per snapshot (up and down), mean over snapshots",
    "largest_domain_fraction": "largest domain area / film area, mean over snapshots",
    "stripe_period_nm": "nm, period from the radial peak of S(k) of S.n, mean over snapshots",
    "stripe_order": ("dimensionless, nematic orientation order of the pattern "
                     "(0 isotropic, 1 stripes)"),
    "bubble_count": "round (bubble) domains per snapshot, mean over snapshots",
    "wall_on_boundary_fraction": ("fraction of domain-wall bonds that lie on grain boundaries, "
                                  "mean over snapshots (films with grains)"),
    "wall_on_boundary_expected": ("fraction of all bonds on grain boundaries: what walls placed "
                                  "without regard to the grains would give"),
    "film_side_nm": "nm, the shorter side of the simulated film of this row",
    "correlation_length_converged": ("1 where correlation_length_nm is converged in the film size "
                                     "(film side >= 10 x the largest length estimate, or it "
                                     "agrees with the next larger size, itself converged, within "
                                     "2 errors), 0 where it is finite-size limited (a length of "
                                     "this film, not of the infinite one), empty where undefined "
                                     "(thinfilm.analysis.size_convergence)"),
    "method": "sampler: monte-carlo or llg",
    "seed": "seed of this point, derived from (scenario seed, size, temperature)",
}


#: Columns added to observables.csv once every point is known (after :data:`ROW_COLUMNS`).
TABLE_EXTRA = ("film_side_nm", "correlation_length_converged")


def select_second_moment(rows, tc_K):
    """correlation_length_nm of every row: the full form above ``tc_K``, the connected one
    below (rows without the two forms, or ``tc_K`` None, keep their own choice)."""
    if tc_K is None or not math.isfinite(tc_K):
        return rows
    for (_, temp), r in rows.items():
        if "correlation_length_full_nm" not in r:
            continue
        form = "connected" if temp < tc_K else "full"
        r["correlation_length_nm"] = r[f"correlation_length_{form}_nm"]
        r["correlation_length_nm_err"] = r[f"correlation_length_{form}_nm_err"]
        r["second_moment_connected"] = float(form == "connected")
    return rows


def length_convergence(rows, film_side_nm):
    """Add ``film_side_nm`` and ``correlation_length_converged`` (1, 0 or NaN) to every row.

    ``film_side_nm``: a function of the size L giving the shorter side of the film (nm).
    """
    from thinfilm.analysis.size_convergence import CONVERGED, UNDEFINED, size_convergence

    keys = sorted(rows)
    if not keys:
        return rows
    side = {L: float(film_side_nm(L)) for L in {k[0] for k in keys}}

    def col(c):
        return np.array([float(rows[k].get(c, math.nan)) for k in keys])

    res = size_convergence([k[0] for k in keys], [k[1] for k in keys],
                           col("correlation_length_nm"), col("correlation_length_nm_err"),
                           [side[k[0]] for k in keys],
                           others=(col("correlation_length_sk_nm"),
                                   col("correlation_length_fit_nm")))
    for k, st in zip(keys, res["status"], strict=True):
        rows[k]["film_side_nm"] = side[k[0]]
        rows[k]["correlation_length_converged"] = (math.nan if st == UNDEFINED else
                                                   float(st == CONVERGED))
    return rows


def sweep_table(rows):
    """{size: {column: array over increasing temperature}} of the numeric columns."""
    out = {}
    for L in sorted({k[0] for k in rows}):
        keys = sorted(k for k in rows if k[0] == L)
        cols = {}
        for c, v in rows[keys[0]].items():
            if isinstance(v, (int, float)) and not isinstance(v, bool):
                cols[c] = np.array([rows[k][c] for k in keys], dtype=np.float64)
        out[L] = cols
    return out


def tc_estimate(rows, anisotropy=None):
    """Critical temperature of a sweep, for ``tc.json``: one value by the rule of
    :func:`thinfilm.analysis.tc_rule.choose_tc` (Binder crossings, their drift with size, the
    U4 collapse and the susceptibility peaks, each counted only where the data bracket it),
    with the others as cross-checks. When the data do not bracket Tc, ``tc_K`` is None and
    ``status``, ``message`` and ``fix`` say what the data show and what to change.

    Parameters
    ----------
    rows : dict
        {(size, temperature_K): row} of the sweep.
    anisotropy : float, optional
        Single-ion anisotropy (its sign selects the universality class checks).

    Returns
    -------
    dict
        As :func:`thinfilm.analysis.tc_rule.choose_tc` (tc_K, tc_err_K, method, status, ...).
    """
    methods = {str(r.get("method")) for r in rows.values()}
    mode = {"llg": "llg-set", "monte-carlo": "mc-set"}.get(methods.pop()) if len(methods) == 1 \
        else None
    return choose_tc(sweep_table(rows), anisotropy=anisotropy, mode=mode)


def refine_temperatures(rows, temperatures_K, n=N_REFINE, anisotropy=None):
    """About ``n`` extra temperatures (K) around the transition, at a third of the step.

    The centre is the Binder crossing (several sizes) or the susceptibility peak of the
    largest size, each rounded to the first-pass grid's resolution; points are kept inside the
    first-pass range, rounded to 1 mK and at least a quarter of the fine step from existing
    temperatures.

    Returns
    -------
    list of float
        Increasing, possibly empty.
    """
    import warnings

    temps = np.asarray(sorted(temperatures_K), dtype=np.float64)
    if temps.size < 3:
        return []
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        est = tc_estimate(rows, anisotropy)
    centre = est.get("tc_K")
    if centre is None:
        # no bracketed Tc yet: refine about the best interior guess (largest sizes first), as
        # the refinement is what may bracket it
        lo, hi = temps[0], temps[-1]
        checks = list(reversed(est.get("cross_checks") or []))
        guesses = [e["tc_K"] for m in ("binder_crossing", "susceptibility_peak") for e in checks
                   if e.get("method") == m and e.get("tc_K") is not None and lo < e["tc_K"] < hi]
        if not guesses:
            return []
        centre = guesses[0]
    step = float(np.median(np.diff(temps))) / 3.0
    centre = min(max(centre, temps[0]), temps[-1])
    cand = centre + step * (np.arange(n) - (n - 1) / 2.0)
    out = []
    for t in np.round(cand, 3):
        if temps[0] < t < temps[-1] and np.min(np.abs(temps - t)) > 0.25 * step:
            out.append(float(t))
    return sorted(set(out))
