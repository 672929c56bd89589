"""Fourier transforms of fields on the (ny, nx) grids of every lattice: the exact structure factor.

Triangular and honeycomb grids are split into the Bravais sublattices of their rectangular cell
(``period``); each is transformed by FFT and recombined with its phase factor.
"""

import numpy as np

from thinfilm.input.errors import InputError

__all__ = ["structure_factor"]

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
                f"correlation analysis: the validity mask must have shape ({ny}, {nx}); "
                f"got {valid.shape}"
            )
    if valid.sum() < 2:
        raise InputError("correlation analysis: fewer than two valid sites remain after masking")
    if not np.all(np.isfinite(f[:, valid])):
        raise InputError(
            "correlation analysis: the field holds NaN or infinite values at valid sites; "
            "mark them invalid with a mask"
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
