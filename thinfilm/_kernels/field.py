"""Effective field, energy and magnetisation on the (ny, nx, 3) grid of every lattice shape.

Rows are handled by ``row_field``, which reads the row itself and its two neighbour rows as
separate (nx, 3) arrays, so the same code serves the plain field and the fused Heun sweep.
Lattice codes: 0 square, 1 triangular (offset rows), 2 honeycomb (brick wall).
"""

import numba as nb
import numpy as np

__all__ = ["row_field", "effective_field", "observables", "neighbour_rows"]


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


@nb.njit(cache=True)
def row_field(dn, cur, up, i, has_dn, has_up, code, periodic, jt, kt, ax, ay, az,
              bx, by, bz, noise, out):
    """Effective field (T) of row i into out (nx, 3).

    dn, cur, up : rows i - 1, i, i + 1 of the spin array, each (nx, 3).
    jt : J / mu_s (T); kt : 2K / mu_s (T); (ax, ay, az) unit axis; (bx, by, bz) field (T).
    noise : (nx, 3) thermal field added to the result (T), or an empty (0, 3) array.
    """
    nx = cur.shape[0]
    add_noise = noise.shape[0] == nx
    shift = -1 if i % 2 == 0 else 1
    for j in range(nx):
        jl = j - 1
        jr = j + 1
        okl = True
        okr = True
        if jl < 0:
            if periodic:
                jl += nx
            else:
                okl = False
        if jr >= nx:
            if periodic:
                jr -= nx
            else:
                okr = False
        hx = 0.0
        hy = 0.0
        hz = 0.0
        if okl:
            hx += cur[jl, 0]
            hy += cur[jl, 1]
            hz += cur[jl, 2]
        if okr:
            hx += cur[jr, 0]
            hy += cur[jr, 1]
            hz += cur[jr, 2]
        if code == 2:
            if (i + j) % 2 == 0:
                if has_up:
                    hx += up[j, 0]
                    hy += up[j, 1]
                    hz += up[j, 2]
            elif has_dn:
                hx += dn[j, 0]
                hy += dn[j, 1]
                hz += dn[j, 2]
        else:
            if has_up:
                hx += up[j, 0]
                hy += up[j, 1]
                hz += up[j, 2]
            if has_dn:
                hx += dn[j, 0]
                hy += dn[j, 1]
                hz += dn[j, 2]
            if code == 1:
                js = j + shift
                ok = True
                if js < 0 or js >= nx:
                    if periodic:
                        js = js % nx
                    else:
                        ok = False
                if ok:
                    if has_up:
                        hx += up[js, 0]
                        hy += up[js, 1]
                        hz += up[js, 2]
                    if has_dn:
                        hx += dn[js, 0]
                        hy += dn[js, 1]
                        hz += dn[js, 2]
        sn = kt * (cur[j, 0] * ax + cur[j, 1] * ay + cur[j, 2] * az)
        fx = jt * hx + sn * ax + bx
        fy = jt * hy + sn * ay + by
        fz = jt * hz + sn * az + bz
        if add_noise:
            fx += noise[j, 0]
            fy += noise[j, 1]
            fz += noise[j, 2]
        out[j, 0] = fx
        out[j, 1] = fy
        out[j, 2] = fz


@nb.njit(parallel=True, cache=True)
def effective_field(s, code, periodic, jt, kt, axis, b, out):
    """Effective field (T) of every site of s (ny, nx, 3) into out (ny, nx, 3)."""
    ny = s.shape[0]
    empty = np.empty((0, 3))
    for i in nb.prange(ny):
        dn, up, has_dn, has_up = neighbour_rows(i, ny, periodic)
        row_field(s[dn], s[i], s[up], i, has_dn, has_up, code, periodic, jt, kt,
                  axis[0], axis[1], axis[2], b[0], b[1], b[2], empty, out[i])


@nb.njit(parallel=True, cache=True)
def observables(s, code, periodic, jt, kt, axis, b, work):
    """Sums over sites: (mx, my, mz, exchange, anisotropy, zeeman) as field-energy sums.

    Returns sum S (3 components) and the three energy sums in units of mu_s * tesla:
    exchange -jt sum_<ij> S_i.S_j (bonds once), anisotropy -(kt/2) sum (S.n)^2,
    Zeeman -sum B.S. Multiply by mu_s (J/T) for joules. work is a (ny, nx, 3) scratch array.
    """
    ny, nx = s.shape[0], s.shape[1]
    empty = np.empty((0, 3))
    mx = 0.0
    my = 0.0
    mz = 0.0
    e_ex = 0.0
    e_an = 0.0
    e_ze = 0.0
    for i in nb.prange(ny):
        dn, up, has_dn, has_up = neighbour_rows(i, ny, periodic)
        # neighbour sum only: jt = 1, no anisotropy, no field
        row_field(s[dn], s[i], s[up], i, has_dn, has_up, code, periodic, 1.0, 0.0,
                  axis[0], axis[1], axis[2], 0.0, 0.0, 0.0, empty, work[i])
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
            rex += sx * work[i, j, 0] + sy * work[i, j, 1] + sz * work[i, j, 2]
            sn = sx * axis[0] + sy * axis[1] + sz * axis[2]
            ran += sn * sn
            rze += sx * b[0] + sy * b[1] + sz * b[2]
        mx += rx
        my += ry
        mz += rz
        e_ex += rex
        e_an += ran
        e_ze += rze
    return mx, my, mz, -0.5 * jt * e_ex, -0.5 * kt * e_an, -e_ze
