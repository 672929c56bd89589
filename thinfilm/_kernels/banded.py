"""Metropolis state kept in the sweep kernel's banded layout: sweeps, samples and row sums
without converting the spins back to (ny, nx, 3) between calls.

Layout (see :mod:`thinfilm._kernels.metropolis`): T[b, j, c, P] holds component c of the spin
at row i = bands[b] + P - 1, column j of band b; P = 0 and P = band length + 1 are ghost rows
(the neighbouring band's edge row, the wrapped row, or zeros at open edges). The sweeps keep
the ghost rows current, so T alone is the whole state between sweeps.

:func:`banded_row_sums` evaluates exactly the expressions of
:func:`thinfilm._kernels.metropolis.row_sums` in the same order (neighbour sum left, right,
up, down, diagonals; row sums in increasing column order), so its results are bitwise equal to
converting T to (ny, nx, 3) and calling ``row_sums``.

Dispatch. Cached compiled functions here never call a ``parallel=True`` function: a cached
caller of a parallel callee that was itself loaded from the cache can segfault when it is
loaded back (numba issue 8578). The threaded path is therefore driven from Python, one sweep
kernel call per sample (negligible against a sweep of >= 4096 sites), the serial path by
compiled loops.
"""

import numba as nb

from .field import neighbour_rows
from .metropolis import _convert_par, _from_t, _sweeps_t, _sweeps_t_serial, _to_t

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
def _band_sums(T, bands, bnd, ny, code, periodic, jt, kt, axis, b, rows):
    """Row sums (mx, my, mz, energy in mu_s T) of the rows of band bnd into rows."""
    tb = T[bnd]
    nx = tb.shape[0]
    lo = bands[bnd]
    hi = bands[bnd + 1]
    for i in range(lo, hi):
        for c in range(4):
            rows[i, c] = 0.0
    for j in range(nx):
        jl = j - 1
        jr = j + 1
        if jl < 0:
            jl = nx - 1 if periodic else -1
        if jr >= nx:
            jr = 0 if periodic else -1
        for i in range(lo, hi):
            P = i - lo + 1
            _, _, has_dn, has_up = neighbour_rows(i, ny, periodic)
            hx = 0.0
            hy = 0.0
            hz = 0.0
            if jl >= 0:
                hx += tb[jl, 0, P]
                hy += tb[jl, 1, P]
                hz += tb[jl, 2, P]
            if jr >= 0:
                hx += tb[jr, 0, P]
                hy += tb[jr, 1, P]
                hz += tb[jr, 2, P]
            if code == 2:
                if (i + j) % 2 == 0:
                    if has_up:
                        hx += tb[j, 0, P + 1]
                        hy += tb[j, 1, P + 1]
                        hz += tb[j, 2, P + 1]
                elif has_dn:
                    hx += tb[j, 0, P - 1]
                    hy += tb[j, 1, P - 1]
                    hz += tb[j, 2, P - 1]
            else:
                if has_up:
                    hx += tb[j, 0, P + 1]
                    hy += tb[j, 1, P + 1]
                    hz += tb[j, 2, P + 1]
                if has_dn:
                    hx += tb[j, 0, P - 1]
                    hy += tb[j, 1, P - 1]
                    hz += tb[j, 2, P - 1]
                if code == 1:
                    js = j + (-1 if i % 2 == 0 else 1)
                    ok = True
                    if js < 0 or js >= nx:
                        if periodic:
                            js = js % nx
                        else:
                            ok = False
                    if ok:
                        if has_up:
                            hx += tb[js, 0, P + 1]
                            hy += tb[js, 1, P + 1]
                            hz += tb[js, 2, P + 1]
                        if has_dn:
                            hx += tb[js, 0, P - 1]
                            hy += tb[js, 1, P - 1]
                            hz += tb[js, 2, P - 1]
            sx = tb[j, 0, P]
            sy = tb[j, 1, P]
            sz = tb[j, 2, P]
            sn = sx * axis[0] + sy * axis[1] + sz * axis[2]
            rows[i, 0] += sx
            rows[i, 1] += sy
            rows[i, 2] += sz
            rows[i, 3] += (-0.5 * jt * (sx * hx + sy * hy + sz * hz) - 0.5 * kt * sn * sn
                           - (sx * b[0] + sy * b[1] + sz * b[2]))


@nb.njit(parallel=True, **_OPT)
def _row_sums_par(T, bands, ny, code, periodic, jt, kt, axis, b, rows):
    for bnd in nb.prange(bands.shape[0] - 1):
        _band_sums(T, bands, bnd, ny, code, periodic, jt, kt, axis, b, rows)


@nb.njit(**_OPT)
def _row_sums_serial(T, bands, ny, code, periodic, jt, kt, axis, b, rows):
    for bnd in range(bands.shape[0] - 1):
        _band_sums(T, bands, bnd, ny, code, periodic, jt, kt, axis, b, rows)


def banded_row_sums(T, bands, ny, code, periodic, jt, kt, axis, b, rows, parallel):
    """Per-row sums into rows (ny, 4): mx, my, mz and the energy (units of mu_s * T), as
    :func:`thinfilm._kernels.metropolis.row_sums` (bitwise equal), read from the banded T."""
    kern = _row_sums_par if parallel else _row_sums_serial
    kern(T, bands, ny, code, periodic, jt, kt, axis, b, rows)


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
        _row_sums_serial(T, bands, ny, code, periodic, jt, kt, axis, b, rows)
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
        _row_sums_par(T, bands, ny, code, periodic, jt, kt, axis, b, rows)
        row_totals(rows, out, k)
