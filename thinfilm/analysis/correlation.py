"""Correlation lengths in nm: second moment of S(k) and Ornstein-Zernike fit of C(r), with errors.

Also re-exports :func:`structure_factor` and :func:`correlation_function`, which live in
:mod:`thinfilm.analysis.lattice_fourier` and :mod:`thinfilm.analysis.pair_correlation`.
"""

import numpy as np
from scipy import special

from thinfilm.analysis.lattice_fourier import _TWO_PI, _geometry, _spacing, structure_factor
from thinfilm.analysis.pair_correlation import (
    _binning,
    _fit_oz,
    _pair_entries,
    _radial,
    correlation_function,
    ornstein_zernike_fit,
)
from thinfilm.input.errors import InputError

__all__ = [
    "structure_factor",
    "correlation_function",
    "second_moment_length",
    "ornstein_zernike_fit",
    "correlation_length",
    "second_moment_series",
    "kmin_plan",
    "kmin_power",
]


def _khat2(k, c, lattice_form):
    """Squared lattice wavevector 4 sin^2(k c / 2) / c^2 (square grids) or k^2."""
    return (2.0 * np.sin(0.5 * k * c) / c) ** 2 if lattice_form else k**2


def _sm_plan(pos, box, cell, period, f_shape):
    """Phase matrix (N, 5) for k = 0, (k1, 0), (0, k1), (2 k1, 0), (0, 2 k1) and khat^2 values."""
    k1 = _TWO_PI / box
    ks = np.array([[0, 0], [k1[0], 0], [0, k1[1]], [2 * k1[0], 0], [0, 2 * k1[1]]])
    xy = pos.reshape(-1, 2)
    phases = np.exp(-1j * (xy @ ks.T))
    square = tuple(period) == (1, 1)
    axis = [0, 1, 0, 1]
    kh = np.array([_khat2(ks[i + 1, axis[i]], cell[axis[i]], square) for i in range(4)])
    return phases, kh


def _sm_periodic(s5, kh, subtract_mean):
    """Second-moment xi from mean [S(0), S(k1x), S(k1y), S(k2x), S(k2y)]; nan when undefined."""
    xis = []
    for d in (0, 1):
        s1, s2 = s5[1 + d], s5[3 + d]
        k1, k2 = kh[d], kh[2 + d]
        if subtract_mean:
            num, den = s1 - s2, k2 * s2 - k1 * s1
        else:
            num, den = s5[0] - s1, k1 * s1
        xis.append(np.sqrt(num / den) if num > 0 and den > 0 else np.nan)
    return float(np.mean(xis))


def _sm_open(dist, c_entries, site_area, fit):
    """Real-space second moment of C(r) with the fitted OZ form completing the tail.

    ``xi^2 = M2 / (4 M0)`` with ``Mn = sum_d r^n (C(d) - B)`` over displacement vectors inside
    ``r_c = 3 xi_fit`` (times the area per vector), plus the exact tail integrals of the fitted
    ``A K0(r / xi)`` beyond r_c: ``2 pi A xi^2 t K1(t)`` and
    ``2 pi A xi^4 (t^3 K1(t) + 2 t^2 K2(t))`` at ``t = r_c / xi``. B is the fitted offset left by
    removing the sample mean.
    """
    xi, _, amp, off = fit[:4]
    if not np.isfinite(xi):
        return np.nan
    n_sub = max(1.0, float(np.sum(dist == 0)))
    r_c = 3.0 * xi
    sel = dist < r_c
    ce = (c_entries[sel] - off) * site_area / n_sub
    t = r_c / xi
    m0 = np.sum(ce) + 2 * np.pi * amp * xi**2 * t * special.k1(t)
    m2 = np.sum(dist[sel] ** 2 * ce) + 2 * np.pi * amp * xi**4 * (
        t**3 * special.k1(t) + 2 * t**2 * special.kn(2, t)
    )
    return float(np.sqrt(m2 / (4.0 * m0))) if m0 > 0 and m2 > 0 else np.nan


def _analyse(fields, valid, pos, box, period, cell, periodic, subtract_mean, n_blocks, fit):
    """Both estimators from snapshot stacks with blocked-jackknife errors."""
    m = fields.shape[0]
    f = fields - (fields[:, valid].mean(axis=1)[:, None, None]) * valid
    spacing = _spacing(cell, period)
    r_lim = 0.5 * float(box.min())
    dist, sums, counts = _pair_entries(f, valid, pos, box, period, cell, periodic)
    binmat = _binning(dist, 0.5 * spacing, r_lim)
    if periodic:
        phases, kh = _sm_plan(pos, box, cell, period, fields.shape[1:])
        raw = fields if not subtract_mean else f
        s5 = np.abs(raw.reshape(m, -1) @ phases) ** 2 / raw[0].size

        def sm(idx):
            return _sm_periodic(s5[idx].mean(axis=0), kh, subtract_mean)
    else:
        site_area = float(box[0] * box[1]) / valid.size

        def sm(idx):
            mean = sums[idx].mean(axis=0)
            r, c, _ = _radial(binmat, dist, mean, counts)
            return _sm_open(dist, mean / counts, site_area, _fit_oz(r, c, spacing, r_lim, **fit))

    def oz(idx):
        r, c, _ = _radial(binmat, dist, sums[idx].mean(axis=0), counts)
        return _fit_oz(r, c, spacing, r_lim, **fit)

    everything = np.arange(m)
    xi_sm = sm(everything)
    fit_all = oz(everything)
    out = {
        "second_moment_nm": xi_sm,
        "second_moment_err_nm": np.nan,
        "fit_nm": fit_all[0],
        "fit_err_nm": fit_all[1],
        "fit_range_nm": (fit_all[4], fit_all[5]),
        "n_snapshots": m,
        "n_blocks": 0,
    }
    n_b = min(int(n_blocks), m)
    if n_b >= 2:
        blocks = np.array_split(everything, n_b)
        guess = dict(fit)
        if guess.get("xi_guess_nm") is None and np.isfinite(fit_all[0]):
            guess["xi_guess_nm"] = fit_all[0]
        jk_sm, jk_fit = [], []
        for blk in blocks:
            rest = np.setdiff1d(everything, blk)
            jk_sm.append(sm(rest))
            r, c, _ = _radial(binmat, dist, sums[rest].mean(axis=0), counts)
            jk_fit.append(_fit_oz(r, c, spacing, r_lim, **guess)[0])

        def jackknife(vals):
            vals = np.asarray(vals)
            return float(np.sqrt((n_b - 1) / n_b * np.sum((vals - vals.mean()) ** 2)))

        out["second_moment_err_nm"] = jackknife(jk_sm)
        out["fit_err_nm"] = jackknife(jk_fit)
        out["n_blocks"] = n_b
    return out


def second_moment_length(
    field, positions_nm, box_nm, period=(1, 1), *, periodic=True, subtract_mean=False, valid=None
):
    """Second-moment correlation length xi in nm of one field.

    Periodic grids use the estimator of Cooper, Freedman & Preston (Nucl. Phys. B 210, 210,
    1982), ``xi^2 = (S(0) / S(k1) - 1) / khat1^2`` with the smallest non-zero wavevectors along x
    and along y (the two xi are averaged); ``khat = 2 sin(k c / 2) / c`` on square grids (c the
    spacing) and ``|k|`` otherwise. With ``subtract_mean=True`` (ordered phase, where S(0) holds
    the spontaneous moment) S(0) is replaced by the Ornstein-Zernike extrapolation through the
    two smallest wavevectors k1 and k2 = 2 k1: ``xi^2 = (S1 - S2) / (khat2^2 S2 - khat1^2 S1)``,
    which reduces to the form above when k1 -> 0.

    Open edges (``periodic=False``, images) use the real-space second moment of the connected
    correlation, ``xi^2 = sum_r r^2 C(r) / (4 sum_r C(r))`` over all displacement vectors up to the
    first zero of the radial C(r); the mean is always removed there.

    Parameters
    ----------
    field, positions_nm, box_nm, period
        As in :func:`structure_factor`.
    periodic : bool
        Torus or open edges.
    subtract_mean : bool
        See above (periodic grids only).
    valid : ndarray of bool, optional
        Valid sites (open edges only).

    Returns
    -------
    float
        xi in nm; nan when the estimate is undefined (S(k1) >= S(0) from noise).
    """
    if periodic and valid is not None and not np.all(valid):
        raise InputError(
            "second_moment_length: a validity mask is only supported with periodic=False"
        )
    f, valid, pos, box, period, cell = _geometry(
        field, positions_nm, box_nm, period, periodic, valid
    )
    if periodic:
        phases, kh = _sm_plan(pos, box, cell, period, f.shape[1:])
        g = f - f.mean() if subtract_mean else f
        s5 = np.abs(g.reshape(1, -1) @ phases)[0] ** 2 / g[0].size
        return _sm_periodic(s5, kh, subtract_mean)
    g = np.where(valid, f - f[0][valid].mean(), 0.0)
    dist, sums, counts = _pair_entries(g, valid, pos, box, period, cell, False)
    spacing, r_lim = _spacing(cell, period), 0.5 * float(box.min())
    r, c, _ = _radial(_binning(dist, 0.5 * spacing, r_lim), dist, sums[0], counts)
    fit = _fit_oz(r, c, spacing, r_lim)
    return _sm_open(dist, sums[0] / counts, float(box[0] * box[1]) / f[0].size, fit)


def correlation_length(
    snapshots,
    positions_nm,
    box_nm,
    period=(1, 1),
    *,
    periodic=True,
    subtract_mean=False,
    valid=None,
    n_blocks=20,
    r_min_nm=None,
    r_max_nm=None,
):
    """Both correlation-length estimators over a set of snapshots, with standard errors.

    The second-moment estimator (see :func:`second_moment_length`) is applied to the snapshot
    average of S(k) (periodic) or of the pair sums (open edges) -- the ratio of averages, not the
    average of per-snapshot ratios. The OZ fit (see :func:`ornstein_zernike_fit`) is applied to
    the snapshot-averaged connected C(r) (each snapshot's own mean removed). Standard errors come
    from a jackknife over ``n_blocks`` consecutive blocks of snapshots (blocks absorb residual
    autocorrelation of a time series).

    Parameters
    ----------
    snapshots : sequence of ndarray (ny, nx), or ndarray (M, ny, nx)
        Fields of one geometry, dimensionless.
    positions_nm, box_nm, period, periodic, valid
        Geometry, as in :func:`correlation_function`.
    subtract_mean : bool
        Ordered-phase form of the second-moment estimator (periodic grids).
    n_blocks : int
        Jackknife blocks (at most the number of snapshots; with one snapshot no error is given).
    r_min_nm, r_max_nm : float, optional
        OZ fit range in nm.

    Returns
    -------
    dict
        ``second_moment_nm``, ``second_moment_err_nm``, ``fit_nm``, ``fit_err_nm`` (nm; errors
        are jackknife standard errors, or for a single snapshot nan and the fit covariance
        error respectively), ``fit_range_nm``, ``n_snapshots``, ``n_blocks``.
    """
    try:
        stack = np.stack([np.asarray(s, dtype=np.float64) for s in snapshots])
    except (TypeError, ValueError) as exc:
        raise InputError(
            f"correlation_length: snapshots must be 2D arrays of one shape; {exc}"
        ) from None
    f, valid, pos, box, period, cell = _geometry(
        stack, positions_nm, box_nm, period, periodic, valid, True
    )
    if periodic and not np.all(valid):
        raise InputError(
            "correlation_length: a validity mask is only supported with periodic=False"
        )
    fit = {"r_min_nm": r_min_nm, "r_max_nm": r_max_nm, "xi_guess_nm": None}
    return _analyse(f, valid, pos, box, period, cell, periodic, subtract_mean, n_blocks, fit)



def kmin_plan(positions_nm, box_nm, period=(1, 1)):
    """What :func:`kmin_power` needs: the smallest non-zero torus wavevectors of equal length.

    The candidates are (2 pi/Lx, 0) and (0, 2 pi/Ly); both are kept when their khat^2 agree
    (square boxes), else the shorter one alone (its partner -k gives the same S for a real
    field). ``khat = 2 sin(k c / 2) / c`` on square grids (c the spacing), ``|k|`` otherwise.

    Returns
    -------
    dict
        ``phases`` (N, n_modes) complex, ``khat2`` (1/nm^2), ``n_modes``, ``n_sites``.
    """
    ny, nx = np.asarray(positions_nm).shape[:2]
    _, _, pos, box, period, cell = _geometry(np.zeros((ny, nx)), positions_nm, box_nm, period,
                                             True)
    k1 = _TWO_PI / box
    square = tuple(period) == (1, 1)
    kh = np.array([_khat2(k1[0], cell[0], square), _khat2(k1[1], cell[1], square)])
    keep = np.nonzero(np.abs(kh - kh.min()) <= 1e-9 * kh.min())[0]
    ks = np.array([[k1[0], 0.0], [0.0, k1[1]]])[keep]
    return {"phases": np.exp(-1j * (pos.reshape(-1, 2) @ ks.T)), "khat2": float(kh.min()),
            "n_modes": int(keep.size), "n_sites": int(nx * ny)}


def kmin_power(field, plan):
    """S(k_min) of one field (ny, nx), averaged over the equivalent wavevectors of ``plan``."""
    amp = np.asarray(field, dtype=np.float64).reshape(-1) @ plan["phases"]
    return float(np.mean(np.abs(amp) ** 2) / plan["n_sites"])


def second_moment_series(moment_sum, s_kmin, khat2_min, n_sites, *, probe_at=None,
                         connected=False, n_blocks=20):
    """Second-moment correlation length (nm) from time series of S(0) and S(k_min).

    Cooper, Freedman and Preston (Nucl. Phys. B 210, 210, 1982)::

        xi^2 = (S(0) / S(k_min) - 1) / khat_min^2

    * ``S(0) = <M^2> / N`` over every sample of the run (M the sum of the order-axis spin
      component over the N sites), or ``(<M^2> - <|M|>^2) / N`` with ``connected=True``
      (ordered phase, where <M^2> holds the spontaneous moment): the susceptibility times
      kB T, from the whole time series rather than a few snapshots;
    * ``S(k_min)``: the mean of the probes ``s_kmin`` taken along the same run, each already
      averaged over the equivalent smallest wavevectors (:func:`kmin_power`); averages are
      taken before the ratio, so one noisy direction or probe cannot void the value.

    Errors: jackknife over ``n_blocks`` consecutive stretches of the run; a stretch removes its
    samples from S(0) and its probes from S(k_min) together, so correlations between the two
    and along the run are carried.

    Where noise puts S(0) at or below S(k_min) (xi well below the lattice spacing, far above
    Tc) the estimate of xi^2 is not positive: the value is 0 and the error sqrt(error of xi^2),
    an upper bound. NaN only where the estimator is undefined in expectation, with the reason:
    S(k_min) = 0 (a uniform film), or fewer than two samples or probes.

    Parameters
    ----------
    moment_sum : array_like (n_samples,)
        Sum over sites of the spin component along the order axis, one entry per sample.
    s_kmin : array_like (n_probes,)
        S(k_min) probes along the run (:func:`kmin_power`).
    khat2_min : float
        khat^2 of k_min (1/nm^2), ``kmin_plan(...)["khat2"]``.
    n_sites : int
        N, the number of sites of the fields (normalisation of S).
    probe_at : array_like of int (n_probes,), optional
        Sample index at which each probe was taken; default evenly spread over the run.
    connected : bool
        Subtract <|M|>^2 (ordered phase).
    n_blocks : int
        Jackknife stretches (at most the number of probes).

    Returns
    -------
    dict
        ``xi_nm``, ``xi_err_nm``, ``reason`` ("" when defined), ``s0``, ``s_kmin``,
        ``n_probes``, ``n_blocks``.
    """
    mom = np.asarray(moment_sum, dtype=np.float64).ravel()
    s1 = np.asarray(s_kmin, dtype=np.float64).ravel()
    if not (np.all(np.isfinite(mom)) and np.all(np.isfinite(s1))):
        raise InputError("second_moment_series: the series hold NaN or infinite values")
    if probe_at is None:
        probe_at = np.linspace(0, max(mom.size - 1, 0), s1.size).round()
    at = np.asarray(probe_at, dtype=np.float64).ravel()
    if at.size != s1.size:
        raise InputError(f"second_moment_series: probe_at has {at.size} entries for "
                         f"{s1.size} probes")
    if not (khat2_min > 0 and n_sites > 0):
        raise InputError(f"second_moment_series: khat2_min {khat2_min!r} and n_sites "
                         f"{n_sites!r} must be positive")
    out = {"xi_nm": np.nan, "xi_err_nm": np.nan, "reason": "", "s0": np.nan,
           "s_kmin": float(s1.mean()) if s1.size else np.nan, "n_probes": int(s1.size),
           "n_blocks": 0}
    if mom.size < 2 or s1.size < 2:
        out["reason"] = "fewer than two samples or S(k_min) probes"
        return out
    if not out["s_kmin"] > 1e-12 * np.mean(mom**2) / n_sites:  # zero up to rounding
        out["reason"] = "S(k_min) = 0: a uniform film (no fluctuation at the smallest wavevector)"
        return out

    def xi2(keep_samples, keep_probes):
        mm = mom[keep_samples]
        s0 = np.mean(mm**2) / n_sites
        if connected:
            s0 -= np.mean(np.abs(mm)) ** 2 / n_sites
        den = s1[keep_probes].mean()
        return ((s0 / den - 1.0) / khat2_min if den > 0 else np.nan), s0

    val2, out["s0"] = xi2(slice(None), slice(None))
    n_b = min(int(n_blocks), s1.size)
    edges = np.linspace(0, mom.size, n_b + 1) if n_b >= 2 else np.array([])
    idx = np.arange(mom.size)
    reps = [xi2((idx < a) | (idx >= b), (at < a) | (at >= b))[0]
            for a, b in zip(edges[:-1], edges[1:], strict=True)]

    def jackknife(v):
        v = np.asarray(v, dtype=np.float64)
        if v.size < 2 or not np.all(np.isfinite(v)):
            return np.nan
        return float(np.sqrt((v.size - 1) / v.size * np.sum((v - v.mean()) ** 2)))

    out["n_blocks"] = len(reps)
    if val2 > 0:
        out["xi_nm"] = float(np.sqrt(val2))
        out["xi_err_nm"] = jackknife(np.sqrt(np.maximum(reps, 0.0)))
    else:
        out["xi_nm"] = 0.0
        e2 = jackknife(reps)
        out["xi_err_nm"] = float(np.sqrt(e2)) if np.isfinite(e2) else np.nan
    return out
