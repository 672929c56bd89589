"""Effective field, energy and magnetisation on the (ny, nx, 3) grid of every lattice shape.

Lattice codes: 0 square, 1 triangular (offset rows), 2 honeycomb (brick wall); the neighbours
are those of :mod:`thinfilm.model.neighbours`. Energies and measurements use its scalar form
(:func:`thinfilm.engines._kernels.neighbours.site_neighbour_sum`).

The fast path (``load_row``, ``field_soa``, used by ``effective_field`` and the Heun sweeps)
works on structure-of-arrays row buffers (3, L) with one ghost column on each side: column t
holds site t - 1, ghosts are copies of the wrapped sites for periodic edges and zeros for open
edges, and a missing neighbour row (open top or bottom) is an all-zero buffer. The neighbour
sums then have no branches and compile to SIMD loops: the neighbour rules are written out per
shape there (in the neighbour table's bonds, summed in the order right, left, up, down, shifted)
and checked against the table by tests/kernels/test_field_kernel.py.
"""

import numba as nb
import numpy as np

from thinfilm.engines._kernels.neighbours import site_neighbour_sum

__all__ = ["effective_field", "observables", "neighbour_rows", "row_pad",
           "load_row", "set_ghosts", "field_soa"]

_OPT = dict(cache=True, error_model="numpy", boundscheck=False)
_CHUNKS = 32


@nb.njit(cache=True)
def row_pad(nx):
    """Length L >= nx + 2 of a padded row buffer: a multiple of 8 doubles, not of 512 (4 KiB),
    so the many row buffers of a sweep do not alias in the L1 cache."""
    n = (nx + 2 + 7) // 8 * 8
    if n % 512 == 0:
        n += 8
    return n


@nb.njit(**_OPT)
def set_ghosts(b, nx, periodic):
    """Ghost columns 0 and nx + 1 of a (3, L) row buffer: wrapped copies or zeros."""
    for c in range(3):
        if periodic:
            b[c, 0] = b[c, nx]
            b[c, nx + 1] = b[c, 1]
        else:
            b[c, 0] = 0.0
            b[c, nx + 1] = 0.0


@nb.njit(**_OPT)
def load_row(src, b, periodic):
    """AoS row src (nx, 3) into the (3, L) buffer b (columns 1..nx) with its ghosts."""
    nx = src.shape[0]
    f = src.reshape(3 * nx)  # constant stride 3: the de-interleave compiles to shuffles
    bx = b[0]
    by = b[1]
    bz = b[2]
    for j in range(nx):
        bx[j + 1] = f[3 * j]
        by[j + 1] = f[3 * j + 1]
        bz[j + 1] = f[3 * j + 2]
    set_ghosts(b, nx, periodic)


@nb.njit(**_OPT)
def field_soa(code, i, dn, cur, up, jt, kt, ax, ay, az, bx, by, bz, nz, nx, h):
    """Effective field (T) of row i into h (3, >= nx) (column j = site j), branch-free.

    dn, cur, up : (3, L) buffers of rows i - 1, i, i + 1 (zeros for a missing row).
    nz : flat thermal field of the row, component c of site j at c * nx + j (T).
    """
    cx = cur[0]
    cy = cur[1]
    cz = cur[2]
    ux = up[0]
    uy = up[1]
    uz = up[2]
    dx = dn[0]
    dy = dn[1]
    dz = dn[2]
    hx = h[0]
    hy = h[1]
    hz = h[2]
    if code == 0:
        for j in range(nx):
            t = j + 1
            sn = kt * (cx[t] * ax + cy[t] * ay + cz[t] * az)
            hx[j] = jt * (cx[t + 1] + cx[t - 1] + ux[t] + dx[t]) + sn * ax + bx + nz[j]
            hy[j] = jt * (cy[t + 1] + cy[t - 1] + uy[t] + dy[t]) + sn * ay + by + nz[nx + j]
            hz[j] = jt * (cz[t + 1] + cz[t - 1] + uz[t] + dz[t]) + sn * az + bz + nz[2 * nx + j]
    elif code == 1:
        sh = -1 if i % 2 == 0 else 1
        for j in range(nx):
            t = j + 1
            q = t + sh
            sn = kt * (cx[t] * ax + cy[t] * ay + cz[t] * az)
            hx[j] = (jt * (cx[t + 1] + cx[t - 1] + ux[t] + dx[t] + ux[q] + dx[q]) + sn * ax + bx
                     + nz[j])
            hy[j] = (jt * (cy[t + 1] + cy[t - 1] + uy[t] + dy[t] + uy[q] + dy[q]) + sn * ay + by
                     + nz[nx + j])
            hz[j] = (jt * (cz[t + 1] + cz[t - 1] + uz[t] + dz[t] + uz[q] + dz[q]) + sn * az + bz
                     + nz[2 * nx + j])
    else:
        par = i & 1
        for j in range(nx):
            t = j + 1
            odd = ((j & 1) ^ par) != 0  # (i + j) odd: vertical bond down, else up
            vx0 = ux[t]
            vy0 = uy[t]
            vz0 = uz[t]
            vx1 = dx[t]
            vy1 = dy[t]
            vz1 = dz[t]
            vx = vx1 if odd else vx0
            vy = vy1 if odd else vy0
            vz = vz1 if odd else vz0
            sn = kt * (cx[t] * ax + cy[t] * ay + cz[t] * az)
            hx[j] = jt * (cx[t + 1] + cx[t - 1] + vx) + sn * ax + bx + nz[j]
            hy[j] = jt * (cy[t + 1] + cy[t - 1] + vy) + sn * ay + by + nz[nx + j]
            hz[j] = jt * (cz[t + 1] + cz[t - 1] + vz) + sn * az + bz + nz[2 * nx + j]


@nb.njit(inline="always", cache=True)
def neighbour_rows(i, ny, periodic):
    """(row below, row above, has_below, has_above) of row i."""
    dn = i - 1
    up = i + 1
    has_dn = True
    has_up = True
    if dn < 0:
        if periodic:
            dn += ny
        else:
            has_dn = False
            dn = 0
    if up >= ny:
        if periodic:
            up -= ny
        else:
            has_up = False
            up = ny - 1
    return dn, up, has_dn, has_up


@nb.njit(parallel=True, **_OPT)
def effective_field(s, code, periodic, jt, kt, axis, b, out):
    """Effective field (T) of every site of s (ny, nx, 3) into out (ny, nx, 3).

    Rows are split into up to 32 chunks; each chunk rolls three padded row buffers.
    Every row's arithmetic is the same whatever the chunking (thread-count independent).
    """
    ny, nx = s.shape[0], s.shape[1]
    L = row_pad(nx)
    nch = min(_CHUNKS, ny)  # row chunks, each with its own scratch buffers
    ax, ay, az = axis[0], axis[1], axis[2]
    for ch in nb.prange(nch):
        a = ch * ny // nch
        e = (ch + 1) * ny // nch
        buf = np.empty((3, 3, L))
        zero = np.zeros((3, L))
        nz = np.zeros(3 * nx)
        h = np.empty((3, L))
        for i in range(a, e):
            dn, up, has_dn, has_up = neighbour_rows(i, ny, periodic)
            if i == a:
                if has_dn:
                    load_row(s[dn], buf[(i + 2) % 3], periodic)
                load_row(s[i], buf[i % 3], periodic)
            if has_up:
                load_row(s[up], buf[(i + 1) % 3], periodic)
            rdn = buf[(i + 2) % 3] if has_dn else zero
            rup = buf[(i + 1) % 3] if has_up else zero
            field_soa(code, i, rdn, buf[i % 3], rup, jt, kt, ax, ay, az, b[0], b[1], b[2], nz,
                      nx, h)
            o = out[i]
            hx = h[0]
            hy = h[1]
            hz = h[2]
            for j in range(nx):
                o[j, 0] = hx[j]
                o[j, 1] = hy[j]
                o[j, 2] = hz[j]


@nb.njit(parallel=True, cache=True)
def observables(s, code, periodic, jt, kt, axis, b, work):
    """Sums over sites: (mx, my, mz, exchange, anisotropy, zeeman) as field-energy sums.

    Returns sum S (3 components) and the three energy sums in units of mu_s * tesla:
    exchange -jt sum_<ij> S_i.S_j (bonds once), anisotropy -(kt/2) sum (S.n)^2,
    Zeeman -sum B.S. Multiply by mu_s (J/T) for joules. ``work`` (ny, nx, 3) is not used
    (kept for the callers' signature); the neighbour sums come from the neighbour table.
    Rows are summed in parallel into a table, then the rows are added in row order, so the
    totals are bitwise the same on any number of threads.
    """
    ny, nx = s.shape[0], s.shape[1]
    rows = np.empty((ny, 6))
    for i in nb.prange(ny):
        rx = 0.0
        ry = 0.0
        rz = 0.0
        rex = 0.0
        ran = 0.0
        rze = 0.0
        for j in range(nx):
            sx = s[i, j, 0]
            sy = s[i, j, 1]
            sz = s[i, j, 2]
            rx += sx
            ry += sy
            rz += sz
            hx, hy, hz = site_neighbour_sum(s, i, j, code, periodic)
            rex += sx * hx + sy * hy + sz * hz
            sn = sx * axis[0] + sy * axis[1] + sz * axis[2]
            ran += sn * sn
            rze += sx * b[0] + sy * b[1] + sz * b[2]
        rows[i, 0] = rx
        rows[i, 1] = ry
        rows[i, 2] = rz
        rows[i, 3] = rex
        rows[i, 4] = ran
        rows[i, 5] = rze
    mx = 0.0
    my = 0.0
    mz = 0.0
    e_ex = 0.0
    e_an = 0.0
    e_ze = 0.0
    for i in range(ny):  # fixed order: independent of the thread count
        mx += rows[i, 0]
        my += rows[i, 1]
        mz += rows[i, 2]
        e_ex += rows[i, 3]
        e_an += rows[i, 4]
        e_ze += rows[i, 5]
    return mx, my, mz, -0.5 * jt * e_ex, -0.5 * kt * e_an, -e_ze
