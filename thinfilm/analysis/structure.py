"""Ornstein-Zernike fit of the small-wavevector structure factor: 1/S(k) = (1 + k^2 xi^2)/chi."""

import math

import numpy as np

from thinfilm.analysis.correlation import structure_factor
from thinfilm.input.errors import InputError

__all__ = ["structure_factor_length"]


def _mean_sk(snapshots, positions_nm, box_nm, period, subtract_mean):
    total = None
    for f in snapshots:
        kx, ky, s = structure_factor(f, positions_nm, box_nm, period, subtract_mean=subtract_mean)
        total = s if total is None else total + s
    return kx, ky, total / len(snapshots)


def structure_factor_length(snapshots, positions_nm, box_nm, period=(1, 1), *, spacing_nm=None,
                            k_max_xi=2.0, n_blocks=10, subtract_mean=True):
    """Correlation length (nm) from a straight-line fit of 1/S(k) against k^2 at small k != 0.

    The Ornstein-Zernike form S(k) = chi / (1 + k^2 xi^2) (Ornstein and Zernike 1914) makes
    1/S linear in k^2 with slope/intercept = xi^2. The k = 0 mode is left out (it carries the
    slow, large fluctuations of the total moment), so the estimate is much less noisy than the
    second-moment ratio S(0)/S(k_min) at the price of assuming the OZ form. On a square lattice
    of spacing a the lattice form k^2 -> (2/a)^2 [sin^2(kx a/2) + sin^2(ky a/2)] is used.

    Parameters
    ----------
    snapshots : sequence of ndarray (ny, nx)
        Periodic fields of one geometry.
    positions_nm, box_nm, period
        Geometry as for :func:`thinfilm.analysis.correlation.structure_factor`.
    spacing_nm : float, optional
        Lattice spacing for the square-lattice form (None: use |k|^2).
    k_max_xi : float
        Fit modes with k xi below this (iterated from a first guess).
    n_blocks : int
        Jackknife blocks of consecutive snapshots for the error.

    Returns
    -------
    dict with ``xi_nm``, ``xi_err_nm``, ``chi`` (S extrapolated to k = 0), ``n_modes``.
    """
    snaps = [np.asarray(s, dtype=np.float64) for s in snapshots]
    if len(snaps) < 2:
        raise InputError("structure_factor_length: give at least two snapshots")
    kx, ky, _ = structure_factor(snaps[0], positions_nm, box_nm, period)
    if spacing_nm:
        k2 = (2 / spacing_nm) ** 2 * (np.sin(kx * spacing_nm / 2) ** 2
                                      + np.sin(ky * spacing_nm / 2) ** 2)
    else:
        k2 = kx**2 + ky**2
    nonzero = k2 > 0
    kmin2 = k2[nonzero].min()

    def line(s_mean, sel):
        # 1/S has a relative scatter that is the same for every mode: weight by S (1/sigma)
        slope, icpt = np.polyfit(k2[sel], 1.0 / s_mean[sel], 1, w=s_mean[sel])
        if not icpt > 0 or not slope > 0:
            return math.nan, math.nan
        return math.sqrt(slope / icpt), 1.0 / icpt

    def first_guess(s_mean):
        """xi^2 to start the iteration: 1/k_min^2, unless S(k) keeps its small-k plateau well
        beyond the first shells (L >> xi); then 1/k_half^2, k_half where the mean S of the
        modes sorted by k first falls below half the plateau (OZ: S = chi/2 at k xi = 1)."""
        low = nonzero & (k2 <= 3.5 * kmin2)
        plateau = float(s_mean[low].mean())
        order = np.argsort(k2[nonzero], kind="stable")
        kk, ss = k2[nonzero][order], s_mean[nonzero][order]
        group = max(8, int(low.sum()))
        n = kk.size // group
        if n < 2:
            return 1.0 / kmin2
        means = ss[: n * group].reshape(n, group).mean(axis=1)
        below = np.nonzero(means < 0.5 * plateau)[0]
        if below.size == 0:
            return 1.0 / kmin2
        k2_half = float(kk[below[0] * group: (below[0] + 1) * group].mean())
        return 1.0 / k2_half if k2_half > 3.5 * kmin2 else 1.0 / kmin2

    def select(s_mean):
        """Modes with k xi <= k_max_xi (at least the first three shells), iterated."""
        xi2 = first_guess(s_mean)
        sel = nonzero & (k2 <= 3.5 * kmin2)
        for _ in range(20):
            sel = nonzero & (k2 <= max(k_max_xi**2 / xi2, 3.5 * kmin2))
            xi, _ = line(s_mean, sel)
            if not math.isfinite(xi) or abs(xi * xi - xi2) <= 1e-9 * xi2:
                break
            xi2 = xi * xi
        return sel

    blocks = np.array_split(np.arange(len(snaps)), min(n_blocks, len(snaps)))
    sums = []
    for b in blocks:
        _, _, s = _mean_sk([snaps[i] for i in b], positions_nm, box_nm, period, subtract_mean)
        sums.append(s * len(b))
    sums = np.array(sums)
    counts = np.array([len(b) for b in blocks], dtype=float)
    s_all = sums.sum(0) / counts.sum()
    sel = select(s_all)
    xi, chi = line(s_all, sel)
    n_modes = int(sel.sum())
    jack = []
    for i in range(len(blocks)):
        keep = np.arange(len(blocks)) != i
        jack.append(line(sums[keep].sum(0) / counts[keep].sum(), sel)[0])
    jack = np.array(jack)
    nb = len(blocks)
    err = math.sqrt((nb - 1) / nb * np.sum((jack - jack.mean()) ** 2)) if nb > 1 else math.nan
    return {"xi_nm": xi, "xi_err_nm": err, "chi": chi, "n_modes": n_modes}
