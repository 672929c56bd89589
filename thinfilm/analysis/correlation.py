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
    ``A K0(r / xi)`` beyond r_c: ``2 pi A xi^2 t K1(t)`` and ``2 pi A xi^4 (t^3 K1(t) + 2 t^2 K2(t))``
    at ``t = r_c / xi``. B is the fitted offset left by removing the sample mean.
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
