"""Curve tools of the heating plan: smoothing, threshold crossings with bootstrap errors and
the equal-change temperature schedule.

All curves are sampled on increasing temperatures (K); lengths in nm.
"""

import math

import numpy as np

from thinfilm.analysis.tc_methods import clean_json

__all__ = ["smooth_log", "crossing", "schedule", "fill_errors", "clean_json"]


def fill_errors(y, err, default_rel=0.1):
    """Standard errors with missing or non-positive entries replaced.

    Missing errors take the median relative error of the others (``default_rel`` when there
    are none), so every point enters the bootstrap with a plausible spread.
    """
    y = np.asarray(y, dtype=np.float64)
    err = np.full_like(y, np.nan) if err is None else np.asarray(err, dtype=np.float64)
    ok = np.isfinite(err) & (err > 0) & np.isfinite(y) & (y > 0)
    rel = float(np.median(err[ok] / y[ok])) if ok.any() else default_rel
    return np.where(ok, err, rel * np.abs(y))


def smooth_log(t, ly, w=None, width=None):
    """Gaussian-kernel (Nadaraya-Watson) smoothing of a curve at its own temperatures.

    Parameters
    ----------
    t : ndarray (n,)
        Temperatures (K), increasing.
    ly : ndarray (n,)
        Values (here logarithms of lengths).
    w : ndarray (n,), optional
        Weights (inverse variances); default equal.
    width : float, optional
        Kernel standard deviation (K); default 0.75 x the median temperature step. Zero
        returns the curve unchanged.

    Returns
    -------
    ndarray (n,)
    """
    t = np.asarray(t, dtype=np.float64)
    ly = np.asarray(ly, dtype=np.float64)
    if t.size < 3:
        return ly.copy()
    if width is None:
        width = 0.75 * float(np.median(np.diff(t)))
    if not width > 0:
        return ly.copy()
    w = np.ones_like(ly) if w is None else np.asarray(w, dtype=np.float64)
    k = np.exp(-0.5 * ((t[:, None] - t[None, :]) / width) ** 2) * w[None, :]
    return (k @ ly) / k.sum(axis=1)


def _fall(t, ly, lthr, start):
    """First temperature above index ``start`` where ly falls below lthr: (T, bound)."""
    if ly[start] < lthr:
        return float(t[start]), "at_or_below_start"
    for i in range(start + 1, t.size):
        if ly[i] < lthr:
            f = (ly[i - 1] - lthr) / (ly[i - 1] - ly[i])
            return float(t[i - 1] + f * (t[i] - t[i - 1])), None
    return float(t[-1]), "at_or_above_end"


def _rise(t, ly, lthr, stop):
    """Last temperature below index ``stop`` (the peak) where ly rises above lthr."""
    if ly[stop] < lthr:
        return math.nan, "never"
    for i in range(stop - 1, -1, -1):
        if ly[i] < lthr:
            f = (lthr - ly[i]) / (ly[i + 1] - ly[i])
            return float(t[i] + f * (t[i + 1] - t[i])), None
    return float(t[0]), "at_or_below_start"


def _one(kind, t, ly, lthr, w):
    s = smooth_log(t, ly, w)
    peak = int(np.argmax(s))
    if kind == "fall_from_start":
        return _fall(t, s, lthr, 0)
    if kind == "fall_after_peak":
        if s[peak] < lthr:
            return math.nan, "never"
        return _fall(t, s, lthr, peak)
    if kind == "rise_before_peak":
        return _rise(t, s, lthr, peak)
    raise ValueError(f"unknown crossing kind {kind!r}")


def crossing(kind, t, y, err, threshold, *, n_boot=400, seed=0):
    """Temperature where a positive curve crosses a threshold, with a bootstrap error.

    The curve is compared in ln y after light kernel smoothing (:func:`smooth_log`, weights
    (y/err)^2); the crossing is interpolated linearly between the bracketing temperatures. The
    error comes from a parametric bootstrap: ln y is redrawn from N(ln y, err/y) ``n_boot``
    times and the spread of the crossings (half the 16-84 % range) is the standard error.

    Parameters
    ----------
    kind : {"fall_from_start", "fall_after_peak", "rise_before_peak"}
        First fall below the threshold going up from the lowest temperature; first fall after
        the maximum of the curve; rise above it on the low-temperature side of the maximum.
    t, y, err : array_like (n,)
        Temperatures (K, increasing), curve (> 0, NaN rows are dropped) and standard errors.
    threshold : float
        Same unit as y, > 0.
    n_boot : int
        Bootstrap replicas.
    seed : int
        Seed of the bootstrap generator.

    Returns
    -------
    dict
        ``value_K`` (float or None), ``err_K`` (float or None), ``bound`` (None, or
        "at_or_below_start" / "at_or_above_end" when the crossing lies outside the range,
        value_K then being the range end, or "never" when the curve never reaches the
        threshold), ``boot_fraction`` (share of replicas that crossed inside the range).
    """
    t = np.asarray(t, dtype=np.float64)
    y = np.asarray(y, dtype=np.float64)
    keep = np.isfinite(t) & np.isfinite(y) & (y > 0)
    t, y = t[keep], y[keep]
    e = fill_errors(y, None if err is None else np.asarray(err, dtype=np.float64)[keep])
    if t.size < 2:
        return {"value_K": None, "err_K": None, "bound": "never", "boot_fraction": 0.0}
    ly, sl = np.log(y), e / y
    lthr = math.log(threshold)
    w = 1.0 / sl**2
    value, bound = _one(kind, t, ly, lthr, w)
    rng = np.random.default_rng(seed)
    vals = []
    for _ in range(int(n_boot)):
        v, b = _one(kind, t, ly + sl * rng.standard_normal(t.size), lthr, w)
        if b is None:
            vals.append(v)
    frac = len(vals) / max(int(n_boot), 1)
    errk = None
    if bound is None and len(vals) >= 10:
        p16, p84 = np.percentile(vals, [16, 84])
        errk = float(max(0.5 * (p84 - p16), 1e-9))
    return {"value_K": None if not math.isfinite(value) else value, "err_K": errk,
            "bound": bound, "boot_fraction": frac}


def schedule(t, m_abs, xi_nm, n_points, *, floor=0.15, t_range=None, step_K=0.1):
    """Heating temperatures spaced so each step changes the pattern by a similar amount.

    The pattern is described by the point (|m|, ln xi), each coordinate normalised to its
    range over the sweep; temperatures are placed at equal arclength along this curve, plus
    a floor share ``floor`` of uniform spacing so flat stretches still get points. Smoothing:
    :func:`smooth_log` on both coordinates.

    Parameters
    ----------
    t : ndarray (n,)
        Sweep temperatures (K), increasing.
    m_abs, xi_nm : ndarray (n,)
        Order parameter and correlation length (nm); NaN entries are interpolated over.
    n_points : int
        Number of temperatures (>= 2).
    floor : float
        Share of the arclength spread uniformly in temperature.
    t_range : (float, float), optional
        Clip range (K); default the sweep range.
    step_K : float
        Rounding of the temperatures (K).

    Returns
    -------
    list of float
        Increasing temperatures (K), rounded, without duplicates.
    """
    t = np.asarray(t, dtype=np.float64)
    lo, hi = (t[0], t[-1]) if t_range is None else t_range

    def norm(v):
        v = np.asarray(v, dtype=np.float64)
        ok = np.isfinite(v)
        if ok.sum() < 2:
            return np.zeros_like(t)
        v = np.interp(t, t[ok], v[ok])
        v = smooth_log(t, v)
        span = v.max() - v.min()
        return (v - v.min()) / span if span > 0 else np.zeros_like(v)

    xi = np.asarray(xi_nm, dtype=np.float64)
    u = norm(m_abs)
    v = norm(np.where(xi > 0, np.log(np.where(xi > 0, xi, 1.0)), np.nan))
    grid = np.linspace(lo, hi, 801)
    gu, gv = np.interp(grid, t, u), np.interp(grid, t, v)
    ds = np.hypot(np.diff(gu), np.diff(gv))
    total = ds.sum()
    ds = (1 - floor) * ds + floor * (total if total > 0 else 1.0) * np.diff(grid) / (hi - lo)
    s = np.concatenate([[0.0], np.cumsum(ds)])
    temps = np.interp(np.linspace(0, s[-1], int(n_points)), s, grid)
    temps = np.clip(np.round(temps / step_K) * step_K, lo, hi)
    return [float(round(x, 6)) for x in np.unique(temps)]
