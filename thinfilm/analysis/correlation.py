"""Structure factor, pair correlation C(r) and correlation lengths of scalar fields on 2D grids."""

import warnings

import numpy as np
from scipy import optimize, sparse, special

from thinfilm.input.errors import InputError

__all__ = [
    "structure_factor",
    "correlation_function",
    "second_moment_length",
    "ornstein_zernike_fit",
    "correlation_length",
]

_TWO_PI = 2.0 * np.pi


def _geometry(field, positions_nm, box_nm, period, periodic, valid=None, stack=False):
    """Check inputs; return (fields (M, ny, nx), valid, pos, box, period, cell)."""
    try:
        f = np.asarray(field, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise InputError(
            f"correlation analysis: the field must be a numeric array; {exc}"
        ) from None
    if not stack:
        if f.ndim != 2:
            raise InputError(
                f"correlation analysis: the field must be a 2D array (ny, nx) of one scalar per "
                f"site; got shape {f.shape}. Pass one component, e.g. spins[..., 2]."
            )
        f = f[None]
    elif f.ndim != 3 or f.shape[0] < 1:
        raise InputError(
            f"correlation analysis: snapshots must be a sequence of 2D arrays of one shape; "
            f"got an array of shape {f.shape}"
        )
    ny, nx = f.shape[1:]
    pos = np.asarray(positions_nm, dtype=np.float64)
    if pos.shape != (ny, nx, 2):
        raise InputError(
            f"correlation analysis: positions_nm must have shape ({ny}, {nx}, 2) to match the "
            f"field; got {pos.shape}"
        )
    box = np.asarray(box_nm, dtype=np.float64).reshape(-1)
    if box.shape != (2,) or not np.all(np.isfinite(box)) or np.any(box <= 0):
        raise InputError(
            f"correlation analysis: box_nm must be two positive lengths in nm; got {box_nm!r}"
        )
    pr, pc = (int(p) for p in period)
    if pr < 1 or pc < 1 or ny % pr or nx % pc:
        raise InputError(
            f"correlation analysis: period {tuple(period)} must divide the grid shape ({ny}, {nx})"
        )
    if valid is None:
        valid = np.ones((ny, nx), dtype=bool)
    else:
        valid = np.asarray(valid, dtype=bool)
        if valid.shape != (ny, nx):
            raise InputError(
                f"correlation analysis: the validity mask must have shape ({ny}, {nx}); got {valid.shape}"
            )
    if valid.sum() < 2:
        raise InputError("correlation analysis: fewer than two valid sites remain after masking")
    if not np.all(np.isfinite(f[:, valid])):
        raise InputError(
            "correlation analysis: the field holds NaN or infinite values at valid sites; mark them "
            "invalid with a mask"
        )
    cell = np.array([box[0] * pc / nx, box[1] * pr / ny])
    for a in range(pr):
        for b in range(pc):
            sub = pos[a::pr, b::pc]
            i, j = np.meshgrid(np.arange(sub.shape[0]), np.arange(sub.shape[1]), indexing="ij")
            diff = sub - pos[a, b] - np.stack([j * cell[0], i * cell[1]], axis=-1)
            diff -= box * np.round(diff / box)
            if np.max(np.abs(diff)) > 1e-6 * cell.max():
                raise InputError(
                    f"correlation analysis: positions_nm do not repeat with the rectangular cell "
                    f"{cell[0]:.6g} x {cell[1]:.6g} nm implied by box_nm {tuple(box)} and period "
                    f"{(pr, pc)}; pass the lattice's own positions, box and period"
                )
    f = np.where(valid, f, 0.0)
    return f, valid, pos, box, (pr, pc), cell


def _spacing(cell, period):
    """Smallest grid step in nm (nearest-neighbour scale used for default bins)."""
    return float(min(cell[0] / period[1], cell[1] / period[0]))


def structure_factor(field, positions_nm, box_nm, period=(1, 1), *, subtract_mean=False):
    """Exact structure factor on the reciprocal lattice of a periodic 2D grid.

    The grid is split into its ``period[0] * period[1]`` rectangular Bravais sublattices; each is
    Fourier transformed with ``numpy.fft.fft2`` and the transforms are combined with the phase
    factors ``exp(-i k.p)`` of the sublattice origins p, so ``F(k) = sum_r s(r) exp(-i k.r)``
    holds for the true site positions r (square, triangular or honeycomb).

    Parameters
    ----------
    field : ndarray, shape (ny, nx)
        One scalar per site (e.g. the out-of-plane spin component), dimensionless.
    positions_nm : ndarray, shape (ny, nx, 2)
        Site positions (x, y) in nm.
    box_nm : (float, float)
        Torus periods (Lx, Ly) in nm.
    period : (int, int)
        (rows, columns) of the rectangular Bravais cell in index units.
    subtract_mean : bool
        Remove the spatial mean first (then S(0) = 0).

    Returns
    -------
    kx, ky : ndarray, shape (ny, nx)
        Wavevector components in rad/nm, ``kx = 2 pi m / Lx``, ``ky = 2 pi n / Ly`` with m, n in
        numpy FFT order (for Bravais lattices a complete orthogonal set on the sites, so
        Parseval holds; for the honeycomb basis the set spans two Brillouin zones).
    s_k : ndarray, shape (ny, nx)
        ``S(k) = |F(k)|^2 / N``, dimensionless.
    """
    f, _, pos, box, (pr, pc), _ = _geometry(field, positions_nm, box_nm, period, True)
    f = f[0]
    if subtract_mean:
        f = f - f.mean()
    ny, nx = f.shape
    my, mx = ny // pr, nx // pc
    m = np.rint(np.fft.fftfreq(nx, 1.0 / nx)).astype(int)
    n = np.rint(np.fft.fftfreq(ny, 1.0 / ny)).astype(int)
    kx, ky = np.meshgrid(_TWO_PI * m / box[0], _TWO_PI * n / box[1])
    amp = np.zeros((ny, nx), dtype=np.complex128)
    for a in range(pr):
        for b in range(pc):
            sub = np.fft.fft2(f[a::pr, b::pc])[np.ix_(n % my, m % mx)]
            amp += np.exp(-1j * (kx * pos[a, b, 0] + ky * pos[a, b, 1])) * sub
    return kx, ky, np.abs(amp) ** 2 / f.size


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
