"""Energies and measurements of the Metropolis kernels: single-site energy changes, row sums of
magnetisation and energy, and sampled series (see :mod:`thinfilm.engines._kernels.metropolis`)."""

import numba as nb
import numpy as np

from thinfilm.engines._kernels.field import neighbour_rows
from thinfilm.engines._kernels.metropolis import (
    _columns,
    _gather,
    _run_sweeps,
)
from thinfilm.engines._kernels.metropolis_layout import _convert, _work, chunk_table
from thinfilm.engines._kernels.metropolis_moves import _de
from thinfilm.engines._kernels.neighbours import site_neighbour_sum

__all__ = ["neighbour_sum", "site_energy_change", "kernel_energy_changes", "row_sums",
           "row_sums_serial", "samples_with_work", "metropolis_samples"]

_OPT = dict(cache=True, error_model="numpy", boundscheck=False)


@nb.njit(inline="always", cache=True)
def neighbour_sum(s, i, j, dn, up, has_dn, has_up, code, periodic):
    """Sum of the neighbour spins of site (i, j) (the neighbour table's order; dn, up unused)."""
    return site_neighbour_sum(s, i, j, code, periodic)

@nb.njit(cache=True)
def site_energy_change(s, i, j, new, code, periodic, jt, kt, axis, b):
    """Energy change (units of mu_s * T) when site (i, j) of s changes to the unit vector new.

    Uses the same neighbour sum and local energy as the sweep; s is not modified.
    """
    dn, up, has_dn, has_up = neighbour_rows(i, s.shape[0], periodic)
    hx, hy, hz = neighbour_sum(s, i, j, dn, up, has_dn, has_up, code, periodic)
    fx = jt * hx + b[0]
    fy = jt * hy + b[1]
    fz = jt * hz + b[2]
    dx = new[0] - s[i, j, 0]
    dy = new[1] - s[i, j, 1]
    dz = new[2] - s[i, j, 2]
    sn = s[i, j, 0] * axis[0] + s[i, j, 1] * axis[1] + s[i, j, 2] * axis[2]
    pn = new[0] * axis[0] + new[1] * axis[1] + new[2] * axis[2]
    return -(fx * dx + fy * dy + fz * dz) - 0.5 * kt * (pn * pn - sn * sn)

@nb.njit(**_OPT)
def kernel_energy_changes(s, order, bounds, code, periodic, jt, kt, axis, b, new):
    """Energy change (mu_s T) of every site (i, j) of s changing alone to new[i, j], computed
    through the sweep kernel's own path (transposed columns, ghost rows, gather, move energy);
    s is not modified. For tests against a full reference energy."""
    ny, nx = s.shape[0], s.shape[1]
    cbounds, chunks, bands = chunk_table(order, bounds)
    T, zc, buf, g, cnt = _work(s, chunks, bands)
    _convert(s, T, bands, periodic, True, False)
    out = np.empty((ny, nx))
    bb = buf[0]
    for e in range(chunks.shape[0]):
        bnd, i0, n = chunks[e, 0], chunks[e, 1], chunks[e, 2]
        for j in range(nx):
            cur, lft, rgt, dia = _columns(T[bnd], zc, j, i0, code, periodic)
            vo = 1 if (i0 + j) % 2 == 0 else -1
            _gather(code, vo, i0 - bands[bnd] + 1, n, cur, lft, rgt, dia, jt, b[0], b[1], b[2],
                    bb)
            for q in range(n):
                i = i0 + 2 * q
                out[i, j] = _de(bb[0, q], bb[1, q], bb[2, q], new[i, j, 0], new[i, j, 1],
                                new[i, j, 2], bb[3, q], bb[4, q], bb[5, q], axis[0], axis[1],
                                axis[2], 0.5 * kt)
    return out

@nb.njit(cache=True)
def _row_sum(s, i, code, periodic, jt, kt, axis, b, rows):
    ny, nx = s.shape[0], s.shape[1]
    dn, up, has_dn, has_up = neighbour_rows(i, ny, periodic)
    rx = 0.0
    ry = 0.0
    rz = 0.0
    re = 0.0
    for j in range(nx):
        hx, hy, hz = neighbour_sum(s, i, j, dn, up, has_dn, has_up, code, periodic)
        sx = s[i, j, 0]
        sy = s[i, j, 1]
        sz = s[i, j, 2]
        sn = sx * axis[0] + sy * axis[1] + sz * axis[2]
        rx += sx
        ry += sy
        rz += sz
        re += (-0.5 * jt * (sx * hx + sy * hy + sz * hz) - 0.5 * kt * sn * sn
               - (sx * b[0] + sy * b[1] + sz * b[2]))
    rows[i, 0] = rx
    rows[i, 1] = ry
    rows[i, 2] = rz
    rows[i, 3] = re

@nb.njit(parallel=True, cache=True)
def row_sums(s, code, periodic, jt, kt, axis, b, rows):
    """Per-row sums into rows (ny, 4): mx, my, mz and the energy (units of mu_s * T).

    Energy of a row: -(jt/2) sum S.h - (kt/2) sum (S.n)^2 - sum b.S, h the neighbour sum, so
    the row energies add up to the total with every bond once. Summing rows in a fixed order
    afterwards keeps totals independent of the thread count.
    """
    for i in nb.prange(s.shape[0]):
        _row_sum(s, i, code, periodic, jt, kt, axis, b, rows)

@nb.njit(cache=True)
def row_sums_serial(s, code, periodic, jt, kt, axis, b, rows):
    """Single-thread twin of :func:`row_sums`."""
    for i in range(s.shape[0]):
        _row_sum(s, i, code, periodic, jt, kt, axis, b, rows)

@nb.njit(**_OPT)
def samples_with_work(s, cbounds, chunks, bands, T, zc, buf, g, cnt, code, periodic, jt, kt,
                      axis, b, beta, sigma, seed, stream, sweep0, n_samples, sample_every, reflect,
                      n_or, counts, rows, out, parallel):
    """:func:`metropolis_samples` with preallocated work arrays (see :func:`make_work`)."""
    ny = s.shape[0]
    _convert(s, T, bands, periodic, True, parallel)
    for k in range(n_samples):
        _run_sweeps(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta,
                    sigma, seed, stream, sweep0 + k * sample_every, sample_every, reflect, n_or,
                    counts, buf, g, cnt, parallel)
        _convert(s, T, bands, periodic, False, parallel)
        if parallel:
            row_sums(s, code, periodic, jt, kt, axis, b, rows)
        else:
            row_sums_serial(s, code, periodic, jt, kt, axis, b, rows)
        for c in range(4):
            acc = 0.0
            for i in range(ny):
                acc += rows[i, c]
            out[k, c] = acc

@nb.njit(**_OPT)
def metropolis_samples(s, order, bounds, code, periodic, jt, kt, axis, b, beta, sigma, seed,
                       stream, sweep0, n_samples, sample_every, reflect, n_or, counts, rows,
                       out, parallel):
    """n_samples times: sample_every sweeps, then the totals (mx, my, mz, energy) into out.

    out : (n_samples, 4) float64; energy in units of mu_s * T (multiply by mu_s for J).
    rows : (ny, 4) scratch. parallel : use the threaded sweep and sums (same results).
    Other arguments as :func:`metropolis_sweeps`. The work arrays are made once per call.
    """
    cbounds, chunks, bands = chunk_table(order, bounds)
    T, zc, buf, g, cnt = _work(s, chunks, bands)
    samples_with_work(s, cbounds, chunks, bands, T, zc, buf, g, cnt, code, periodic, jt, kt,
                      axis, b, beta, sigma, seed, stream, sweep0, n_samples, sample_every,
                      reflect, n_or, counts, rows, out, parallel)
