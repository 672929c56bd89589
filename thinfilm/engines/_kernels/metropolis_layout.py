"""The Metropolis kernels' memory layout: row classes, row bands and chunks, and the transposed
band arrays T[b, j, c, P] with ghost rows (see :mod:`thinfilm.engines._kernels.metropolis`)."""

import numba as nb
import numpy as np

from thinfilm.engines._kernels.field import row_pad

__all__ = ["row_colouring", "band_table", "chunk_table", "make_work", "BAND_ROWS", "W"]

_OPT = dict(cache=True, error_model="numpy", boundscheck=False)
BAND_ROWS = 128  # rows per band (at least): chunks of 64 rows of one class, long column loops
W = 128  # scratch row length: the most rows of one class in a band (bands <= 2 W rows)


def row_colouring(ny, periodic):
    """Row classes: no two rows of one class are adjacent.

    Parameters
    ----------
    ny : int
        Number of rows.
    periodic : bool
        Periodic edges.

    Returns
    -------
    order : ndarray of int64, shape (ny,)
        Rows sorted by class (within a class in increasing order).
    bounds : ndarray of int64, shape (n_classes + 1,)
        order[bounds[c]:bounds[c + 1]] are the rows of class c.

    Class 0: even rows, class 1: odd rows; with periodic edges and an odd number of rows the
    last row (even) is adjacent to row 0 through the wrap and forms a class 2 of its own.
    """
    classes = [list(range(0, ny, 2)), list(range(1, ny, 2))]
    if periodic and ny % 2 == 1 and ny > 1:
        classes[0].remove(ny - 1)
        classes.append([ny - 1])
    classes = [c for c in classes if c]
    order = np.array([r for c in classes for r in c], dtype=np.int64)
    bounds = np.cumsum([0] + [len(c) for c in classes]).astype(np.int64)
    return order, bounds

@nb.njit(cache=True)
def band_table(ny):
    """Row bands [bands[b], bands[b + 1]): contiguous, even starts, about BAND_ROWS rows and at
    most 2 W rows each. They depend only on ny (not on the thread count)."""
    nb_ = max(ny // BAND_ROWS, (ny + 2 * W - 1) // (2 * W), 1)
    bands = np.empty(nb_ + 1, dtype=np.int64)
    for b in range(nb_):
        bands[b] = 2 * ((b * ny // nb_) // 2)
    bands[nb_] = ny
    return bands

@nb.njit(cache=True)
def chunk_table(order, bounds):
    """Chunks of the row classes: cbounds (n_classes + 1,), chunks (n_chunks, 4), bands.

    chunks[cbounds[c]:cbounds[c + 1]] split class c by band (see :func:`band_table`); a chunk
    is (band, first row, n rows, rank of its first row in order); its rows are first row + 2 q
    (q < n).
    """
    ny = order.shape[0]
    bands = band_table(ny)
    n_cls = bounds.shape[0] - 1
    band_of = np.empty(ny, dtype=np.int64)
    for b in range(bands.shape[0] - 1):
        band_of[bands[b]:bands[b + 1]] = b
    chunks = np.zeros((ny, 4), dtype=np.int64)
    cbounds = np.zeros(n_cls + 1, dtype=np.int64)
    e = -1
    for c in range(n_cls):
        prev = -1
        for r in range(bounds[c], bounds[c + 1]):
            i = order[r]
            if band_of[i] != prev:
                e += 1
                prev = band_of[i]
                chunks[e, 0] = prev
                chunks[e, 1] = i
                chunks[e, 2] = 0
                chunks[e, 3] = r
            chunks[e, 2] += 1
        cbounds[c + 1] = e + 1
    return cbounds, chunks[:e + 1], bands

@nb.njit(inline="always", **_OPT)
def _put(col, P, v):
    col[P] = v

@nb.njit(inline="always", **_OPT)
def _get(col, P):
    return col[P]

@nb.njit(**_OPT)
def _work(s, chunks, bands):
    """Transposed spins T (n_bands, nx, 3, LP), a zero column (3, LP) and per-chunk scratch
    buf (n_chunks, 6, W) (spins, local fields), g (n_chunks, 3 W + 8) (Gaussian numbers) and
    cnt (n_chunks, 3, W) (accepted moves). Band b, column j, component c, local padded row
    P = i - bands[b] + 1 (ghost rows P = 0 and P = band length + 1: the rows next to the band)
    at T[b, j, c, P]. Each band has its own memory, so threads share no cache lines inside a
    class."""
    nx = s.shape[1]
    lmax = 1
    for b in range(bands.shape[0] - 1):
        lmax = max(lmax, bands[b + 1] - bands[b])
    LP = row_pad(lmax)
    nch = max(1, chunks.shape[0])
    return (np.zeros((bands.shape[0] - 1, nx, 3, LP)), np.zeros((3, LP)),
            np.empty((nch, 6, W)), np.empty((nch, 3 * W + 8)),
            np.empty((nch, 3, W), dtype=np.int64))

_TILE = 16  # rows per tile of the transposes (16 cache lines stay in L1 across columns)

@nb.njit(**_OPT)
def _to_t(s, T, bands, b, periodic):
    """Band b of s (ny, nx, 3) into T[b] with its ghost rows (neighbour rows or zeros)."""
    ny, nx = s.shape[0], s.shape[1]
    lo = bands[b]
    hi = bands[b + 1]
    tb = T[b]
    for a in range(lo, hi, _TILE):
        e = min(a + _TILE, hi)
        for j in range(nx):
            for c in range(3):
                col = tb[j, c]
                for i in range(a, e):
                    _put(col, i - lo + 1, s[i, j, c])
    below = lo - 1 if lo > 0 else (ny - 1 if periodic else -1)
    above = hi if hi < ny else (0 if periodic else -1)
    for j in range(nx):
        for c in range(3):
            _put(tb[j, c], 0, s[below, j, c] if below >= 0 else 0.0)
            _put(tb[j, c], hi - lo + 1, s[above, j, c] if above >= 0 else 0.0)

@nb.njit(**_OPT)
def _from_t(T, s, bands, b):
    nx = s.shape[1]
    lo = bands[b]
    hi = bands[b + 1]
    tb = T[b]
    for a in range(lo, hi, _TILE):
        e = min(a + _TILE, hi)
        for j in range(nx):
            for c in range(3):
                col = tb[j, c]
                for i in range(a, e):
                    s[i, j, c] = _get(col, i - lo + 1)

@nb.njit(parallel=True, **_OPT)
def _convert_par(s, T, bands, periodic, to_t):
    for b in nb.prange(bands.shape[0] - 1):
        if to_t:
            _to_t(s, T, bands, b, periodic)
        else:
            _from_t(T, s, bands, b)

@nb.njit(**_OPT)
def _convert(s, T, bands, periodic, to_t, parallel):
    if parallel:
        _convert_par(s, T, bands, periodic, to_t)
    else:
        for b in range(bands.shape[0] - 1):
            if to_t:
                _to_t(s, T, bands, b, periodic)
            else:
                _from_t(T, s, bands, b)

def make_work(s, order, bounds):
    """Work tuple (cbounds, chunks, bands, T, zc, buf, g, cnt) for spins shaped like s (ny, nx,
    3) and row classes (order, bounds); reusable across calls of :func:`sweeps_with_work` and
    :func:`samples_with_work` (about the size of the spin array)."""
    cbounds, chunks, bands = chunk_table(order, bounds)
    return (cbounds, chunks, bands) + tuple(_work(s, chunks, bands))
