"""Metropolis state kept in the sweep kernel's banded layout: sweeps, samples and row sums
without converting the spins back to (ny, nx, 3) between calls.

Layout (see :mod:`thinfilm._kernels.metropolis`): T[b, j, c, P] holds component c of the spin
at row i = bands[b] + P - 1, column j of band b; P = 0 and P = band length + 1 are ghost rows
(the neighbouring band's edge row, the wrapped row, or zeros at open edges). The sweeps keep
the ghost rows current, so T alone is the whole state between sweeps.

:func:`banded_row_sums` evaluates exactly the expressions of
:func:`thinfilm.engines._kernels.metropolis_measure.row_sums` in the same order (neighbour sum
left, right, up, down, diagonals; row sums in increasing column order), so its results are
bitwise equal to converting T to (ny, nx, 3) and calling ``row_sums``. It reads whole columns
(rows of one parity at a time) into per-band accumulators, branch-free.

Dispatch. Cached compiled functions here never call a ``parallel=True`` function: a cached
caller of a parallel callee that was itself loaded from the cache can segfault when it is
loaded back (numba issue 8578). The threaded path is therefore driven from Python, one sweep
kernel call per sample (negligible against a sweep of >= 4096 sites), the serial path by
compiled loops.
"""

import numba as nb
import numpy as np

from thinfilm.engines._kernels.metropolis import (
    _convert_par,
    _from_t,
    _sweeps_t,
    _sweeps_t_serial,
    _to_t,
)

__all__ = ["to_banded", "from_banded", "banded_sweeps", "banded_row_sums", "banded_samples",
           "row_totals"]

_OPT = dict(cache=True, error_model="numpy", boundscheck=False)


@nb.njit(**_OPT)
def _to_banded_serial(s, T, bands, periodic):
    for b in range(bands.shape[0] - 1):
        _to_t(s, T, bands, b, periodic)


@nb.njit(**_OPT)
def _from_banded_serial(T, s, bands):
    for b in range(bands.shape[0] - 1):
        _from_t(T, s, bands, b)


def to_banded(s, T, bands, periodic, parallel):
    """Copy spins s (ny, nx, 3) into the banded array T, ghost rows included."""
    if parallel:
        _convert_par(s, T, bands, periodic, True)
    else:
        _to_banded_serial(s, T, bands, periodic)


def from_banded(T, s, bands, parallel):
    """Copy the banded spins T into s (ny, nx, 3)."""
    if parallel:
        _convert_par(s, T, bands, False, False)
    else:
        _from_banded_serial(T, s, bands)


def banded_sweeps(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta,
                  sigma, seed, stream, sweep0, n_sweeps, reflect, n_or, counts, buf, g, cnt,
                  parallel):
    """n_sweeps Metropolis sweeps of the banded spins T in place (arguments as
    :func:`thinfilm._kernels.metropolis.metropolis_sweeps`; work arrays from ``make_work``)."""
    kern = _sweeps_t if parallel else _sweeps_t_serial
    kern(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta, sigma, seed,
         stream, sweep0, n_sweeps, reflect, n_or, counts, buf, g, cnt)


@nb.njit(inline="always", **_OPT)
def _column(tb, zc, j, periodic):
    """Column j of band tb, or the zero column zc beyond an open edge."""
    nx = tb.shape[0]
    if j < 0:
        return tb[nx - 1] if periodic else zc
    if j >= nx:
        return tb[0] if periodic else zc
    return tb[j]


@nb.njit(inline="always", **_OPT)
def _accumulate(acc, cur, lft, rgt, up, dn, dia_up, dia_dn, p0, p1, step, jt, kt, ax, ay, az,
                bx, by, bz, diag, vo):
    """acc[:, P] += (S, energy) of rows P = p0, p0 + step, .. < p1 of one column. Neighbour sum in
    the order left, right, up, down (square, triangular), diagonal up, down (triangular), or
    left, right, vertical (honeycomb, vo = +1 up / -1 down, up/dn ignored)."""
    for P in range(p0, p1, step):
        sx = cur[0, P]
        sy = cur[1, P]
        sz = cur[2, P]
        hx = 0.0
        hy = 0.0
        hz = 0.0
        hx += lft[0, P]
        hy += lft[1, P]
        hz += lft[2, P]
        hx += rgt[0, P]
        hy += rgt[1, P]
        hz += rgt[2, P]
        if vo != 0:
            hx += cur[0, P + vo]
            hy += cur[1, P + vo]
            hz += cur[2, P + vo]
        else:
            hx += up[0, P + 1]
            hy += up[1, P + 1]
            hz += up[2, P + 1]
            hx += dn[0, P - 1]
            hy += dn[1, P - 1]
            hz += dn[2, P - 1]
            if diag:
                hx += dia_up[0, P + 1]
                hy += dia_up[1, P + 1]
                hz += dia_up[2, P + 1]
                hx += dia_dn[0, P - 1]
                hy += dia_dn[1, P - 1]
                hz += dia_dn[2, P - 1]
        sn = sx * ax + sy * ay + sz * az
        acc[0, P] += sx
        acc[1, P] += sy
        acc[2, P] += sz
        acc[3, P] += (-0.5 * jt * (sx * hx + sy * hy + sz * hz) - 0.5 * kt * sn * sn
                      - (sx * bx + sy * by + sz * bz))


@nb.njit(inline="always", **_OPT)
def _band_sums(T, zc, bands, bnd, code, periodic, jt, kt, axis, b, rows):
    """Row sums (mx, my, mz, energy in mu_s T) of the rows of band bnd into rows.

    Missing neighbours (open edges) are read as the zero ghost rows / zero column: adding
    +0.0 to a sum that started at +0.0 leaves it bitwise unchanged, so the results equal
    ``row_sums``, which skips them.
    """
    tb = T[bnd]
    nx = tb.shape[0]
    lo = bands[bnd]
    ln = bands[bnd + 1] - lo
    acc = np.zeros((4, ln + 2))
    ax, ay, az = axis[0], axis[1], axis[2]
    bx, by, bz = b[0], b[1], b[2]
    for j in range(nx):
        cur = tb[j]
        lft = _column(tb, zc, j - 1, periodic)
        rgt = _column(tb, zc, j + 1, periodic)
        # local row P = i - lo + 1: P odd <-> i even (bands start on even rows)
        if code == 0:  # all rows alike
            _accumulate(acc, cur, lft, rgt, cur, cur, cur, cur, 1, ln + 1, 1, jt, kt, ax, ay,
                        az, bx, by, bz, False, 0)
            continue
        for par in range(2):  # par 0: even rows i
            p0 = 1 + par
            if code == 1:
                dia = _column(tb, zc, j - 1 if par == 0 else j + 1, periodic)
                _accumulate(acc, cur, lft, rgt, cur, cur, dia, dia, p0, ln + 1, 2, jt, kt, ax,
                            ay, az, bx, by, bz, True, 0)
            else:
                vo = 1 if (lo + par + j) % 2 == 0 else -1
                _accumulate(acc, cur, lft, rgt, cur, cur, cur, cur, p0, ln + 1, 2, jt, kt, ax,
                            ay, az, bx, by, bz, False, vo)
    for P in range(1, ln + 1):
        for c in range(4):
            rows[lo + P - 1, c] = acc[c, P]


@nb.njit(parallel=True, **_OPT)
def _row_sums_par(T, zc, bands, code, periodic, jt, kt, axis, b, rows):
    for bnd in nb.prange(bands.shape[0] - 1):
        _band_sums(T, zc, bands, bnd, code, periodic, jt, kt, axis, b, rows)


@nb.njit(**_OPT)
def _row_sums_serial(T, zc, bands, code, periodic, jt, kt, axis, b, rows):
    for bnd in range(bands.shape[0] - 1):
        _band_sums(T, zc, bands, bnd, code, periodic, jt, kt, axis, b, rows)


def banded_row_sums(T, zc, bands, code, periodic, jt, kt, axis, b, rows, parallel):
    """Per-row sums into rows (ny, 4): mx, my, mz and the energy (units of mu_s * T), as
    :func:`thinfilm.engines._kernels.metropolis_measure.row_sums` (bitwise equal), read from the
    banded T."""
    kern = _row_sums_par if parallel else _row_sums_serial
    kern(T, zc, bands, code, periodic, jt, kt, axis, b, rows)


@nb.njit(**_OPT)
def row_totals(rows, out, k):
    """out[k, c] = sum of rows[:, c], added in increasing row order."""
    for c in range(4):
        acc = 0.0
        for i in range(rows.shape[0]):
            acc += rows[i, c]
        out[k, c] = acc


@nb.njit(**_OPT)
def _samples_serial(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta,
                    sigma, seed, stream, sweep0, n_samples, sample_every, reflect, n_or, counts,
                    buf, g, cnt, rows, out):
    for k in range(n_samples):
        _sweeps_t_serial(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b,
                         beta, sigma, seed, stream, sweep0 + k * sample_every, sample_every,
                         reflect, n_or, counts, buf, g, cnt)
        _row_sums_serial(T, zc, bands, code, periodic, jt, kt, axis, b, rows)
        row_totals(rows, out, k)


def banded_samples(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta,
                   sigma, seed, stream, sweep0, n_samples, sample_every, reflect, n_or, counts,
                   buf, g, cnt, rows, out, parallel):
    """n_samples times: sample_every sweeps of T, then the totals (mx, my, mz, energy in
    mu_s T) into out (n_samples, 4); rows (ny, 4) scratch. Totals add the rows in increasing
    order (independent of the thread count)."""
    if not parallel:
        _samples_serial(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta,
                        sigma, seed, stream, sweep0, n_samples, sample_every, reflect, n_or,
                        counts, buf, g, cnt, rows, out)
        return
    for k in range(n_samples):
        _sweeps_t(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta, sigma,
                  seed, stream, sweep0 + k * sample_every, sample_every, reflect, n_or, counts,
                  buf, g, cnt)
        _row_sums_par(T, zc, bands, code, periodic, jt, kt, axis, b, rows)
        row_totals(rows, out, k)
