"""Analysis of one sweep point's snapshots: correlation lengths, C(r), domains, patterns.

Pure functions of the sampled fields and magnetisation series, called by
:func:`thinfilm.runs.sweep_point.compute_point`; they write nothing.

Units: lengths in nm, areas in nm^2.
"""

import math

import numpy as np

from thinfilm.analysis.correlation import (
    correlation_function,
    correlation_length,
    second_moment_series,
)
from thinfilm.analysis.domains import domain_statistics
from thinfilm.analysis.grain_pinning import wall_on_boundary_fraction
from thinfilm.analysis.patterns import bubble_statistics, stripe_orientation, stripe_period
from thinfilm.analysis.structure import structure_factor_length
from thinfilm.input.errors import InputError


def _mean_err(values):
    v = np.asarray(values, dtype=np.float64)
    v = v[np.isfinite(v)]
    if v.size == 0:
        return math.nan, math.nan
    return float(v.mean()), float(v.std(ddof=1) / math.sqrt(v.size)) if v.size > 1 else math.nan


ORDERED_BINDER = 0.4  # U4 above this: ordered-phase form of the second-moment estimator


def _sk_length(fields, pos, box, period, spacing_nm):
    """OZ fit of S(k != 0): the connected correlation length on both sides of Tc (nm)."""
    if len(fields) < 2:
        return math.nan, math.nan
    r = structure_factor_length(fields, pos, box, period, spacing_nm=spacing_nm)
    return r["xi_nm"], r["xi_err_nm"]


def _instrument_length(fields, lat, instrument, seed, ordered):
    """Second-moment xi (nm) of the snapshots as the instrument records them (blur + pixels).

    Same estimator as the raw ``correlation_length_nm``: a Gaussian blur multiplies S(k) by
    exp(-k^2 s^2), so it can only raise this xi; the difference shows what the instrument
    cannot resolve.
    """
    from thinfilm.analysis.instrument import instrument_view

    fwhm = instrument.get("resolution_nm")
    if not fwhm or not lat.periodic or len(fields) < 2:
        return math.nan, math.nan
    pixel = instrument.get("pixel_nm") or fwhm / 3.0
    rng = np.random.default_rng(seed)
    images = []
    for f in fields:
        img, (px, py) = instrument_view(f, lat.positions_nm, lat.box_nm, pixel_nm=pixel,
                                        fwhm_nm=fwhm, noise=instrument.get("noise", 0.0),
                                        rng=rng, periodic=True)
        images.append(img)
    ny, nx = images[0].shape
    if nx < 4 or ny < 4:
        return math.nan, math.nan
    i, j = np.meshgrid(np.arange(ny), np.arange(nx), indexing="ij")
    pos = np.stack([j * px, i * py], axis=-1).astype(np.float64)
    r = correlation_length(images, pos, (nx * px, ny * py), (1, 1), periodic=True,
                           subtract_mean=bool(ordered))
    return r["second_moment_nm"], r["second_moment_err_nm"]


def _patterns(fields, lat):
    """Stripe period (nm), stripe orientation order and bubble count, means over snapshots.

    NaN on open edges (the analysers assume periodic boundaries) and for uniform snapshots.
    """
    out = {"stripe_period_nm": math.nan, "stripe_order": math.nan, "bubble_count": math.nan}
    if not lat.periodic:
        return out
    geo = {"positions_nm": lat.positions_nm, "box_nm": lat.box_nm, "period": lat.period}
    periods, orders, bubbles = [], [], []
    for f in fields:
        try:
            periods.append(stripe_period(f, **geo)["period_nm"])
            orders.append(stripe_orientation(f, **geo)["order"])
            bubbles.append(bubble_statistics(f, lat.site_area_nm2, positions_nm=lat.positions_nm,
                                             box_nm=lat.box_nm, neighbours=lat.neighbours,
                                             periodic=True)["count"])
        except InputError:  # a uniform snapshot has no pattern
            continue
    for key, vals in (("stripe_period_nm", periods), ("stripe_order", orders),
                      ("bubble_count", bubbles)):
        if vals:
            out[key] = float(np.mean(vals))
    return out


def _pinning(fields, lat, params):
    """Fraction of domain-wall bonds on grain boundaries (mean over snapshots) and the fraction
    expected for walls placed without regard to the grains (NaN without grains)."""
    if params is None or getattr(params, "grain_id", None) is None:
        return {"wall_on_boundary_fraction": math.nan, "wall_on_boundary_expected": math.nan}
    res = [wall_on_boundary_fraction(f, params.grain_id, lat.neighbours, occupied=params.occupied)
           for f in fields]
    frac = [r["fraction"] for r in res if np.isfinite(r["fraction"])]
    return {"wall_on_boundary_fraction": float(np.mean(frac)) if frac else math.nan,
            "wall_on_boundary_expected": float(res[0]["expected"])}


def _second_moment(lat, fields, series, xi_snap):
    """Second-moment xi (nm) in both forms: {"full": (xi, err, why), "connected": (...)}.

    ``why`` says why a value is undefined ("" when it is defined). Periodic films: S(0) from
    every sample of the magnetisation series, <M^2>/N ("full", the disordered phase and the
    finite-size scaling region above Tc) or (<M^2> - <|M|>^2)/N ("connected", the ordered
    phase), S(k_min) from probes along the run
    (:func:`thinfilm.analysis.correlation.second_moment_series`). Open edges: the real-space
    second moment of the snapshots' C(r) (``xi_snap``) in both entries.
    """
    if not lat.periodic:
        v = xi_snap["second_moment_nm"]
        one = (v, xi_snap["second_moment_err_nm"],
               "" if np.isfinite(v) else "open edges: C(r) has no positive moment")
        return {"full": one, "connected": one}
    if series is None or "s_kmin" not in series:
        none = (math.nan, math.nan, "no magnetisation time series")
        return {"full": none, "connected": none}
    out = {}
    for form in ("full", "connected"):
        r = second_moment_series(series["moment_sum"], series["s_kmin"], series["khat2_min"],
                                 series["n_sites"], probe_at=series["probe_at"],
                                 connected=form == "connected")
        out[form] = (r["xi_nm"], r["xi_err_nm"], r["reason"])
    return out


def _spatial(model, fields, ordered, instrument=None, seed=0, analysis=None, params=None,
             series=None):
    """Correlation lengths, C(r) and domain statistics of the snapshots' fields S.n (ny, nx).

    ``ordered`` selects the ordered-phase second-moment form (connected S(0) =
    (<M^2> - <|M|>^2)/N, since there <M^2> holds the spontaneous moment); otherwise
    S(0) = <M^2>/N. ``series`` holds ``moment_sum`` (sum over sites of S.n per sample),
    ``sample_block`` (snapshot stretch of each sample) and ``connected``.
    ``analysis`` holds the scenario's domain threshold ``level`` and ``smoothing_nm``.
    """
    analysis = analysis or {}
    lat = model.lattice
    pos, box = lat.positions_nm, lat.box_nm
    xi = correlation_length(fields, pos, box, lat.period, periodic=lat.periodic,
                            subtract_mean=bool(ordered))
    forms = _second_moment(lat, fields, series, xi)
    sm, sm_err, sm_why = forms["connected" if ordered else "full"]
    curves = [correlation_function(f, pos, box, lat.period, periodic=lat.periodic)
              for f in fields]
    r_nm = curves[0][0]
    cs = np.array([c[1] for c in curves])
    c_err = (cs.std(axis=0, ddof=1) / math.sqrt(len(cs)) if len(cs) > 1
             else np.full(r_nm.size, np.nan))
    corr_rows = list(zip(r_nm, cs.mean(axis=0), c_err, strict=True))
    dom_rows, means, weighted, counts, largest = [], [], [], [], []
    for k, f in enumerate(fields):
        st = domain_statistics(f, lat.site_area_nm2, neighbours=lat.neighbours,
                               periodic=lat.periodic, level=analysis.get("level", 0.0),
                               smoothing_nm=analysis.get("smoothing_nm"), positions_nm=pos,
                               box_nm=box if lat.periodic else None)
        a = st["area_by_label_nm2"]
        for lab in range(1, a.size):
            # 7 significant digits: an area is a whole number of site areas (exact to 1e-7)
            dom_rows.append((k, f"{a[lab]:.7g}", f"{2.0 * math.sqrt(a[lab] / math.pi):.7g}",
                             int(st["signs"][lab])))
        al = st["all"]
        means.append(al["mean_area_nm2"])
        weighted.append(al["area_weighted_mean_area_nm2"])
        counts.append(al["count"])
        largest.append(al["largest_fraction"])
    mean_a, mean_a_err = _mean_err(means)
    sk, sk_err = _sk_length(fields, pos, box, lat.period,
                            lat.spacing_nm if lat.shape == "square" else None)
    ins, ins_err = _instrument_length(fields, lat, instrument or {}, seed, ordered)
    row = {**_patterns(fields, lat), **_pinning(fields, lat, params),
        "correlation_length_sk_nm": sk, "correlation_length_sk_nm_err": sk_err,
        "correlation_length_instrument_nm": ins, "correlation_length_instrument_nm_err": ins_err,
        "correlation_length_nm": sm, "correlation_length_nm_err": sm_err,
        "correlation_length_full_nm": forms["full"][0],
        "correlation_length_full_nm_err": forms["full"][1],
        "correlation_length_connected_nm": forms["connected"][0],
        "correlation_length_connected_nm_err": forms["connected"][1],
        "second_moment_connected": float(bool(ordered)),
        "correlation_length_fit_nm": xi["fit_nm"],
        "correlation_length_fit_nm_err": xi["fit_err_nm"],
        "mean_domain_area_nm2": mean_a, "mean_domain_area_nm2_err": mean_a_err,
        "area_weighted_domain_area_nm2": _mean_err(weighted)[0],
        "domain_count": _mean_err(counts)[0],
        "largest_domain_fraction": _mean_err(largest)[0],
    }
    return row, corr_rows, dom_rows, {k: v[2] for k, v in forms.items()}
