"""Pair correlation C(r) of scalar fields in nm, and its Ornstein-Zernike fit."""

import warnings

import numpy as np
from scipy import optimize, sparse, special

from thinfilm.analysis.lattice_fourier import _geometry, _spacing
from thinfilm.input.errors import InputError

__all__ = ["correlation_function", "ornstein_zernike_fit"]


def _pair_entries(f, valid, pos, box, period, cell, periodic):
    """Pair sums for every (sublattice pair, displacement): distances, sums (M, E), counts (E)."""
    pr, pc = period
    my, mx = f.shape[1] // pr, f.shape[2] // pc
    shape = (my, mx) if periodic else (2 * my, 2 * mx)
    subs = [(a, b) for a in range(pr) for b in range(pc)]
    ff = {s: np.fft.rfft2(f[:, s[0] :: pr, s[1] :: pc], s=shape) for s in subs}
    vv = {s: np.fft.rfft2(valid[s[0] :: pr, s[1] :: pc].astype(float), s=shape) for s in subs}
    u = np.arange(shape[0])
    v = np.arange(shape[1])
    if not periodic:
        u = np.where(u < my, u, u - shape[0])
        v = np.where(v < mx, v, v - shape[1])
    dj, di = np.meshgrid(v, u)
    dist, sums, counts = [], [], []
    for s1 in subs:
        for s2 in subs:
            cnt = np.rint(np.fft.irfft2(np.conj(vv[s1]) * vv[s2], s=shape)).ravel()
            tot = np.fft.irfft2(np.conj(ff[s1]) * ff[s2], s=shape).reshape(f.shape[0], -1)
            dx = pos[s2][0] - pos[s1][0] + dj * cell[0]
            dy = pos[s2][1] - pos[s1][1] + di * cell[1]
            if periodic:
                dx = dx - box[0] * np.round(dx / box[0])
                dy = dy - box[1] * np.round(dy / box[1])
            keep = cnt > 0.5
            dist.append(np.hypot(dx, dy).ravel()[keep])
            sums.append(tot[:, keep])
            counts.append(cnt[keep])
    return np.concatenate(dist), np.concatenate(sums, axis=1), np.concatenate(counts)


def _binning(dist, bin_nm, r_max_nm):
    """Sparse matrix (n_bins, E) mapping entries to radial bins of width bin_nm (centred on 0)."""
    idx = np.rint(dist / bin_nm).astype(np.int64)
    keep = dist <= r_max_nm * (1 + 1e-12)
    n_bins = int(idx[keep].max()) + 1
    cols = np.nonzero(keep)[0]
    return sparse.csr_matrix((np.ones(cols.size), (idx[keep], cols)), shape=(n_bins, dist.size))


def _radial(binmat, dist, sums_mean, counts):
    """Radial average: r (pair-weighted mean distance), C, pair counts; empty bins dropped."""
    pairs = binmat @ counts
    ok = pairs > 0
    r = (binmat @ (dist * counts))[ok] / pairs[ok]
    return r, (binmat @ sums_mean)[ok] / pairs[ok], pairs[ok]


def correlation_function(
    field,
    positions_nm,
    box_nm,
    period=(1, 1),
    *,
    periodic=True,
    subtract_mean=True,
    valid=None,
    bin_nm=None,
    r_max_nm=None,
):
    """Radially averaged pair correlation C(r) = <s(x) s(x + r)> - <s>^2 computed by FFT.

    Cross-correlations of all pairs of Bravais sublattices give every pair of sites with its exact
    real-space displacement (minimum image on a torus). With ``periodic=False`` (open edges,
    images) the sublattices are zero-padded and each displacement is normalised by its number of
    overlapping valid pairs, so C is unbiased by the edges and by masked sites.

    Parameters
    ----------
    field : ndarray, shape (ny, nx)
        One scalar per site or pixel, dimensionless.
    positions_nm, box_nm, period
        Geometry as in :func:`structure_factor`; for an image use the pixel grid, ``box_nm =
        (nx * pixel, ny * pixel)`` and period (1, 1).
    periodic : bool
        Torus (minimum-image displacements) or open edges.
    subtract_mean : bool
        Subtract the mean over valid sites (connected correlation).
    valid : ndarray of bool, shape (ny, nx), optional
        False marks sites/pixels to ignore.
    bin_nm : float, optional
        Width of the radial bins in nm (bins centred on 0, bin_nm, ...). Default: half the
        smallest grid step.
    r_max_nm : float, optional
        Largest distance kept; default min(Lx, Ly) / 2.

    Returns
    -------
    r_nm : ndarray
        Pair-weighted mean distance of each non-empty bin, nm.
    c : ndarray
        C(r), in field units squared.
    counts : ndarray
        Number of ordered site pairs in each bin.
    """
    f, valid, pos, box, period, cell = _geometry(
        field, positions_nm, box_nm, period, periodic, valid
    )
    if subtract_mean:
        f = np.where(valid, f - f[0][valid].mean(), 0.0)
    bin_nm = 0.5 * _spacing(cell, period) if bin_nm is None else float(bin_nm)
    r_max_nm = 0.5 * float(box.min()) if r_max_nm is None else float(r_max_nm)
    if not (bin_nm > 0 and r_max_nm > 0):
        raise InputError(
            f"correlation_function: bin_nm and r_max_nm must be positive; got {bin_nm}, {r_max_nm}"
        )
    dist, sums, counts = _pair_entries(f, valid, pos, box, period, cell, periodic)
    binmat = _binning(dist, bin_nm, r_max_nm)
    return _radial(binmat, dist, sums[0], counts)


def _oz_model(r, amp, xi, offset):
    return amp * special.k0(r / xi) + offset


def _fit_oz(r, c, spacing, r_lim, r_min_nm=None, r_max_nm=None, xi_guess_nm=None):
    """Fit C(r) = A K0(r / xi) + B on [r_min, r_max]; returns (xi, err, A, B, r_min, r_max)."""
    nan = (np.nan, np.nan, np.nan, np.nan, np.nan, np.nan)
    r_min = 2.0 * spacing if r_min_nm is None else float(r_min_nm)
    if xi_guess_nm is not None and xi_guess_nm > 0:
        xi = float(xi_guess_nm)
    else:
        start = np.nonzero(r >= r_min)[0]
        if start.size == 0:
            return nan
        below = np.nonzero((r >= r_min) & (c < c[start[0]] / np.e))[0]
        xi = max(float(r[below[0]] - r_min) if below.size else r_lim / 4, spacing)
    result = nan
    for _ in range(4):
        r_max = min(5.0 * xi, r_lim) if r_max_nm is None else float(r_max_nm)
        sel = (r >= r_min) & (r <= r_max)
        if sel.sum() < 5:
            return result
        rs, cs = r[sel], c[sel]
        amp0 = cs[0] / max(special.k0(rs[0] / xi), 1e-300)
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                popt, pcov = optimize.curve_fit(
                    _oz_model,
                    rs,
                    cs,
                    p0=(amp0, xi, 0.0),
                    bounds=([-np.inf, 0.05 * spacing, -np.inf], [np.inf, 20.0 * r_lim, np.inf]),
                )
        except (RuntimeError, ValueError, optimize.OptimizeWarning):
            return result
        err = float(np.sqrt(pcov[1, 1])) if np.all(np.isfinite(pcov)) else np.nan
        new = float(popt[1])
        result = (new, err, float(popt[0]), float(popt[2]), float(r_min), float(r_max))
        if r_max_nm is not None or abs(new - xi) < 1e-3 * xi:
            break
        xi = new
    return result


def ornstein_zernike_fit(
    field,
    positions_nm,
    box_nm,
    period=(1, 1),
    *,
    periodic=True,
    valid=None,
    r_min_nm=None,
    r_max_nm=None,
    xi_guess_nm=None,
):
    """Correlation length from a fit of the 2D Ornstein-Zernike form to the connected C(r).

    Fits ``C(r) = A K0(r / xi) + B`` (K0 from ``scipy.special.k0``; the asymptotic OZ correlation
    in two dimensions) by least squares to the radially averaged connected correlation on
    ``[r_min, r_max]``. The constant B absorbs the offset left by subtracting the sample mean.
    By default r_min is twice the grid step and r_max = min(5 xi, L/2), iterated from a first
    guess.

    Parameters
    ----------
    field, positions_nm, box_nm, period, periodic, valid
        As in :func:`correlation_function`.
    r_min_nm, r_max_nm : float, optional
        Fit range in nm.
    xi_guess_nm : float, optional
        Starting value of xi in nm.

    Returns
    -------
    dict
        ``xi_nm``, ``xi_err_nm`` (one standard deviation from the fit covariance; it ignores the
        correlation between radial bins and so underestimates the true scatter),
        ``amplitude``, ``offset`` (field units squared), ``r_min_nm``, ``r_max_nm``.
        Values are nan when the fit fails.
    """
    f, valid, pos, box, period, cell = _geometry(
        field, positions_nm, box_nm, period, periodic, valid
    )
    f = np.where(valid, f - f[0][valid].mean(), 0.0)
    spacing = _spacing(cell, period)
    r_lim = 0.5 * float(box.min())
    dist, sums, counts = _pair_entries(f, valid, pos, box, period, cell, periodic)
    r, c, _ = _radial(_binning(dist, 0.5 * spacing, r_lim), dist, sums[0], counts)
    xi, err, amp, off, lo, hi = _fit_oz(r, c, spacing, r_lim, r_min_nm, r_max_nm, xi_guess_nm)
    return {
        "xi_nm": xi,
        "xi_err_nm": err,
        "amplitude": amp,
        "offset": off,
        "r_min_nm": lo,
        "r_max_nm": hi,
    }
