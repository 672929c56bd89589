"""Critical-temperature estimates: Binder-cumulant crossings and susceptibility/heat peaks.

Error bars by parametric bootstrap: every input curve is redrawn from independent normal
errors, the same local fits are repeated, and the spread of the result is quoted.
"""

import warnings

import numpy as np

from thinfilm.input.errors import ThinFilmWarning

__all__ = ["tc_from_binder_crossing", "tc_from_peaks", "estimate_tc", "table_from_results"]


def _arrays(temps, values, errs):
    t = np.asarray(temps, dtype=np.float64).ravel()
    v = np.asarray(values, dtype=np.float64).ravel()
    e = np.asarray(errs, dtype=np.float64).ravel()
    if not (t.size == v.size == e.size):
        raise ValueError("temperatures, values and errors must have the same length")
    if t.size < 3:
        raise ValueError("at least 3 temperatures are needed")
    if np.any(np.diff(t) <= 0):
        raise ValueError("temperatures must be strictly increasing")
    # zero errors would give infinite weights: floor them at a tiny fraction of the scale
    floor = 1e-9 * max(np.max(np.abs(v)), 1.0)
    return t, v, np.maximum(e, floor)


def _window(t, centre, n_local):
    n = min(n_local, t.size)
    idx = np.argsort(np.abs(t - centre), kind="stable")[:n]
    return np.sort(idx)


def _fit(t, v, e, degree, t0):
    # weighted polynomial in (t - t0) for conditioning; numpy weights are 1/sigma
    return np.polynomial.polynomial.polyfit(t - t0, v, degree, w=1.0 / e)


def _crossing(t, ua, ea, ub, eb, idx, degree, t_guess):
    """Root of the difference of the two local fits; straight lines if the curves miss."""
    tc, uc = _crossing_deg(t, ua, ea, ub, eb, idx, degree, t_guess)
    if not np.isfinite(tc) and degree > 1:
        tc, uc = _crossing_deg(t, ua, ea, ub, eb, idx, 1, t_guess)
    if not np.isfinite(tc):
        # curves too sharp for smooth local fits (large L near Tc): linear interpolation
        # between the bracketing temperatures of the (redrawn) data
        r = _rough_crossing(t[idx], ua[idx], ub[idx], ea[idx], eb[idx])
        if r is not None:
            tc, uc = r, float(np.interp(r, t[idx], ua[idx]))
    return tc, uc


def _crossing_deg(t, ua, ea, ub, eb, idx, degree, t_guess):
    tw = t[idx]
    t0 = t_guess
    deg = int(min(degree, idx.size - 1))
    ca = _fit(tw, ua[idx], ea[idx], deg, t0)
    cb = _fit(tw, ub[idx], eb[idx], deg, t0)
    diff = cb - ca
    if np.all(np.abs(diff[1:]) == 0):
        return np.nan, np.nan
    roots = np.polynomial.polynomial.polyroots(np.trim_zeros(diff, "b"))
    roots = roots[np.abs(roots.imag) < 1e-12].real + t0
    # the crossing must stay near the bracket found in the data: within one local temperature
    # step of the guess (a smooth fit that misplaces a sharp drop falls back to interpolation)
    k = int(np.clip(np.searchsorted(t, t_guess), 1, t.size - 1))
    step = t[k] - t[k - 1]
    roots = roots[np.abs(roots - t_guess) <= step]
    if roots.size == 0:
        return np.nan, np.nan
    r = roots[np.argmin(np.abs(roots - t_guess))]
    return float(r), float(np.polynomial.polynomial.polyval(r - t0, ca))


def side_significance(z, k_max=3):
    """Evidence on one side of a crossing: the largest combined z (Stouffer, sum z / sqrt k)
    of the k = 1..k_max points nearest to it (``z`` ordered from the crossing outwards);
    -inf without points."""
    z = np.asarray(z, dtype=np.float64)
    if z.size == 0:
        return -np.inf
    c = np.cumsum(z[:k_max]) / np.sqrt(np.arange(1, min(k_max, z.size) + 1))
    return float(np.max(c))


def _rough_crossing(t, ua, ub, ea=None, eb=None):
    """Bracket the crossing by linear interpolation of the data.

    Where several sign changes of d = U_large - U_small occur (noise in the ordered plateau,
    where both curves sit at 2/3, can cross them), the most significant change from d > 0
    (below Tc) to d < 0 (above) is taken: the one whose weaker side is strongest, a side's
    strength being :func:`side_significance` of d in units of its combined error.
    """
    d = ub - ua  # larger size minus smaller: > 0 below Tc, < 0 above
    sig = np.ones_like(d) if ea is None or eb is None else np.sqrt(ea**2 + eb**2)
    z = d / np.maximum(sig, 1e-300)
    changes = np.nonzero((d[:-1] > 0) & (d[1:] <= 0))[0]
    if changes.size == 0:
        changes = np.nonzero(np.sign(d[:-1]) != np.sign(d[1:]))[0]
    if changes.size == 0:
        return None
    strength = [min(side_significance(z[: k + 1][::-1]), side_significance(-z[k + 1:]))
                for k in changes]
    k = changes[int(np.argmax(strength))]
    return float(t[k] + (t[k + 1] - t[k]) * d[k] / (d[k] - d[k + 1]))


def tc_from_binder_crossing(temps, curves, *, n_local=5, degree=2, n_boot=500, seed=0):
    """Tc from the crossings of Binder-cumulant curves of consecutive system sizes.

    For each pair of consecutive sizes the crossing is first bracketed by linear interpolation
    of the data, then located as the root of the difference of two weighted polynomial fits
    (degree ``degree``, straight lines when those miss each other) over the ``n_local``
    temperatures nearest to it. The pair results are
    combined by inverse-variance weights. Errors: parametric bootstrap of all curves at once,
    so the correlation between pairs that share a size is kept.

    Parameters
    ----------
    temps : array_like (n_T,)
        Temperatures (K), increasing, shared by all sizes.
    curves : dict
        {L: (U4, U4_err)} with arrays over temps.
    n_local, degree : int
        Points per local fit and polynomial degree.
    n_boot : int
        Bootstrap replicas.
    seed : int
        Seed of the bootstrap generator.

    Returns
    -------
    dict
        tc_K, tc_err_K, method ("binder_crossing"), u_cross, u_cross_err, pairs (list of dicts
        with sizes, tc_K, tc_err_K, u_cross, u_cross_err), n_boot_failed.
    """
    sizes = sorted(curves)
    if len(sizes) < 2:
        raise ValueError("a Binder crossing needs curves of at least two sizes")
    data = {}
    for L in sizes:
        u, e = curves[L]
        data[L] = _arrays(temps, u, e)
    t = data[sizes[0]][0]
    pairs = []
    for a, b in zip(sizes[:-1], sizes[1:], strict=True):
        guess = _rough_crossing(t, data[a][1], data[b][1], data[a][2], data[b][2])
        if guess is None:
            raise ValueError(f"the Binder curves of L = {a} and {b} do not cross in "
                             f"[{t[0]:.4g}, {t[-1]:.4g}] K: widen the temperature range")
        idx = _window(t, guess, n_local)
        tc, uc = _crossing(t, data[a][1], data[a][2], data[b][1], data[b][2], idx, degree, guess)
        pairs.append({"sizes": (a, b), "guess": guess, "idx": idx, "tc_K": tc, "u_cross": uc})
    rng = np.random.default_rng(seed)
    boot_t = np.full((n_boot, len(pairs)), np.nan)
    boot_u = np.full((n_boot, len(pairs)), np.nan)
    for r in range(n_boot):
        drawn = {L: data[L][1] + data[L][2] * rng.standard_normal(t.size) for L in sizes}
        for p, pr in enumerate(pairs):
            a, b = pr["sizes"]
            boot_t[r, p], boot_u[r, p] = _crossing(t, drawn[a], data[a][2], drawn[b],
                                                   data[b][2], pr["idx"], degree, pr["guess"])
    good = np.all(np.isfinite(boot_t), axis=1)
    n_failed = int(n_boot - good.sum())
    if good.sum() < max(10, n_boot // 4):
        raise ValueError("the bootstrap crossings fail too often: the curves barely cross "
                         "within their errors")
    if n_failed > 0.05 * n_boot:
        warnings.warn(f"{n_failed} of {n_boot} bootstrap replicas found no crossing; the "
                      "error bar may be underestimated", ThinFilmWarning, stacklevel=2)
    bt, bu = boot_t[good], boot_u[good]
    sd = bt.std(axis=0, ddof=1)
    su = bu.std(axis=0, ddof=1)
    w = 1.0 / np.maximum(sd, 1e-300) ** 2
    w /= w.sum()
    tcs = np.array([p["tc_K"] for p in pairs])
    ucs = np.array([p["u_cross"] for p in pairs])
    out_pairs = [{"sizes": p["sizes"], "tc_K": p["tc_K"], "tc_err_K": float(sd[k]),
                  "u_cross": p["u_cross"], "u_cross_err": float(su[k])}
                 for k, p in enumerate(pairs)]
    return {"tc_K": float(w @ tcs), "tc_err_K": float((bt @ w).std(ddof=1)),
            "method": "binder_crossing", "u_cross": float(w @ ucs),
            "u_cross_err": float((bu @ w).std(ddof=1)), "pairs": out_pairs,
            "n_boot_failed": n_failed}


def _vertex(t, v, e, idx):
    tw = t[idx]
    t0 = tw.mean()
    c = _fit(tw, v[idx], e[idx], 2, t0)
    if c[2] >= 0:  # not a maximum: fall back to the largest point
        k = idx[np.argmax(v[idx])]
        return float(t[k]), float(v[k])
    x = -c[1] / (2.0 * c[2])
    x = min(max(x, tw[0] - t0), tw[-1] - t0)
    return float(x + t0), float(np.polynomial.polynomial.polyval(x, c))


def tc_from_peaks(temps, values, errs, *, n_local=5, n_boot=500, seed=0):
    """Temperature of the maximum of a curve (susceptibility or specific heat).

    A weighted parabola is fitted to the ``n_local`` points centred on the largest value; its
    vertex (kept inside the fit window) is the peak. Error: parametric bootstrap, combined with
    the distance to the vertex of the three points about the maximum (the parabola's model
    error). When the parabola's maximum lies more than two errors below the largest point, the
    peak is too sharp for it: the largest point is the peak, its position known to half the
    temperature step.

    Parameters
    ----------
    temps, values, errs : array_like (n_T,)
        Temperatures (K, increasing), curve and its standard errors.

    Returns
    -------
    dict
        tc_K, tc_err_K, method ("peak"), peak_value, peak_value_err, at_edge, peak_form
        ("parabola" or "largest point").

    Warns
    -----
    ThinFilmWarning
        When the largest value sits at the end of the temperature range.
    """
    t, v, e = _arrays(temps, values, errs)
    n = min(n_local, t.size)
    k = int(np.argmax(v))
    at_edge = k == 0 or k == t.size - 1
    if at_edge:
        warnings.warn("the peak is at the end of the temperature range; the estimate is only "
                      "a bound", ThinFilmWarning, stacklevel=2)
    lo = min(max(k - n // 2, 0), t.size - n)
    idx = np.arange(lo, lo + n)
    tc, peak = _vertex(t, v, e, idx)
    rng = np.random.default_rng(seed)
    bt = np.empty(n_boot)
    bv = np.empty(n_boot)
    for r in range(n_boot):
        bt[r], bv[r] = _vertex(t, v + e * rng.standard_normal(t.size), e, idx)
    err, peak_err, form = float(bt.std(ddof=1)), float(bv.std(ddof=1)), "parabola"
    # a parabola that passes far below the largest point does not describe the peak (too
    # sharp for the window): take the largest point, its position known to half a step
    if peak < v[k] - 2.0 * e[k]:
        half = 0.5 * max(t[min(k + 1, t.size - 1)] - t[k], t[k] - t[max(k - 1, 0)])
        tc, peak, form = float(t[k]), float(v[k]), "largest point"
        err, peak_err = max(err, half), float(e[k])
    elif n >= 5 and not at_edge:
        # model error: the vertex of the 3 points about the maximum against the wider fit
        lo3 = min(max(k - 1, 0), t.size - 3)
        t3, _ = _vertex(t, v, e, np.arange(lo3, lo3 + 3))
        err = float(np.hypot(err, t3 - tc))
    return {"tc_K": tc, "tc_err_K": err, "method": "peak", "peak_value": peak,
            "peak_value_err": peak_err, "at_edge": at_edge, "peak_form": form}


def table_from_results(results):
    """Build an :func:`estimate_tc` table from an iterable of (L, thermodynamics dict).

    Returns {L: {key: array over temperature}} with rows sorted by temperature_K.
    """
    table = {}
    for L, d in results:
        table.setdefault(L, []).append(d)
    out = {}
    for L, rows in table.items():
        rows = sorted(rows, key=lambda d: d["temperature_K"])
        out[L] = {k: np.array([d[k] for d in rows]) for k in rows[0]
                  if np.isscalar(rows[0][k])}
    return out


def estimate_tc(table, *, peak_quantity="susceptibility", **kw):
    """Tc from a table of thermodynamics over temperature for one or several sizes.

    Parameters
    ----------
    table : dict
        {L: {"temperature_K": array, "binder": array, "binder_err": array,
        "susceptibility": array, "susceptibility_err": array, ...}} (see
        :func:`table_from_results`).
    peak_quantity : str
        Curve used when there is a single size ("susceptibility" or "specific_heat").
    **kw
        Passed to the estimator.

    Returns
    -------
    dict
        As :func:`tc_from_binder_crossing` with two or more sizes (same temperatures), else
        :func:`tc_from_peaks` of the single size, plus "sizes".
    """
    sizes = sorted(table)
    if not sizes:
        raise ValueError("the table is empty")
    if len(sizes) >= 2:
        t = np.asarray(table[sizes[0]]["temperature_K"], dtype=np.float64)
        for L in sizes[1:]:
            tl = np.asarray(table[L]["temperature_K"], dtype=np.float64)
            if tl.shape != t.shape or not np.allclose(tl, t):
                raise ValueError("all sizes need the same temperatures for a Binder crossing")
        res = tc_from_binder_crossing(
            t, {L: (table[L]["binder"], table[L]["binder_err"]) for L in sizes}, **kw)
    else:
        d = table[sizes[0]]
        res = tc_from_peaks(d["temperature_K"], d[peak_quantity], d[peak_quantity + "_err"],
                            **kw)
    res["sizes"] = sizes
    return res
