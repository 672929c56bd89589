"""A plain numba Heun peer for the benchmarks: the step written the obvious way.

Square lattice, periodic edges, array-of-structures spins, two parallel sweeps per step
(predictor of every site into ``sp``, then the corrector), the same counter-based thermal noise
as the engine. No row buffers, no band scheduling: what a careful first version looks like. The
engine's fused kernel is measured against it in the same process (``run_all.py``).
"""

import math

import numba as nb
import numpy as np

from thinfilm.engines._kernels.rng import key, normals_row


@nb.njit(inline="always")
def _rhs(sx, sy, sz, hx, hy, hz, gdt, alpha):
    cx = sy * hz - sz * hy
    cy = sz * hx - sx * hz
    cz = sx * hy - sy * hx
    return (-gdt * (cx + alpha * (sy * cz - sz * cy)),
            -gdt * (cy + alpha * (sz * cx - sx * cz)),
            -gdt * (cz + alpha * (sx * cy - sy * cx)))


@nb.njit(inline="always")
def _field(s, i, j, ny, nx, jt, kt, ax, ay, az, b, nz):
    jl = j - 1 if j > 0 else nx - 1
    jr = j + 1 if j < nx - 1 else 0
    iu = i + 1 if i < ny - 1 else 0
    idn = i - 1 if i > 0 else ny - 1
    sn = kt * (s[i, j, 0] * ax + s[i, j, 1] * ay + s[i, j, 2] * az)
    hx = jt * (s[i, jr, 0] + s[i, jl, 0] + s[iu, j, 0] + s[idn, j, 0]) + sn * ax + b[0] + nz[j]
    hy = jt * (s[i, jr, 1] + s[i, jl, 1] + s[iu, j, 1] + s[idn, j, 1]) + sn * ay + b[1] + nz[nx + j]
    hz = (jt * (s[i, jr, 2] + s[i, jl, 2] + s[iu, j, 2] + s[idn, j, 2]) + sn * az + b[2]
          + nz[2 * nx + j])
    return hx, hy, hz


@nb.njit(parallel=True, cache=True)
def plain_heun(s, n_steps, step0, seed, jt, kt, axis, b, sigma, gdt, alpha, sp, d1, nz):
    """n_steps Heun steps of s (ny, nx, 3); work arrays sp, d1 (ny, nx, 3), nz (ny, 3 nx)."""
    ny, nx = s.shape[0], s.shape[1]
    ax, ay, az = axis[0], axis[1], axis[2]
    per_row = (3 * nx + 1) // 2
    for n in range(n_steps):
        k = key(seed, 0, step0 + n)
        for i in nb.prange(ny):
            normals_row(k, i * per_row, sigma, nz[i])
            for j in range(nx):
                hx, hy, hz = _field(s, i, j, ny, nx, jt, kt, ax, ay, az, b, nz[i])
                dx, dy, dz = _rhs(s[i, j, 0], s[i, j, 1], s[i, j, 2], hx, hy, hz, gdt, alpha)
                d1[i, j, 0] = dx
                d1[i, j, 1] = dy
                d1[i, j, 2] = dz
                px = s[i, j, 0] + dx
                py = s[i, j, 1] + dy
                pz = s[i, j, 2] + dz
                inv = 1.0 / math.sqrt(px * px + py * py + pz * pz)
                sp[i, j, 0] = px * inv
                sp[i, j, 1] = py * inv
                sp[i, j, 2] = pz * inv
        for i in nb.prange(ny):
            for j in range(nx):
                hx, hy, hz = _field(sp, i, j, ny, nx, jt, kt, ax, ay, az, b, nz[i])
                dx, dy, dz = _rhs(sp[i, j, 0], sp[i, j, 1], sp[i, j, 2], hx, hy, hz, gdt, alpha)
                qx = s[i, j, 0] + 0.5 * (d1[i, j, 0] + dx)
                qy = s[i, j, 1] + 0.5 * (d1[i, j, 1] + dy)
                qz = s[i, j, 2] + 0.5 * (d1[i, j, 2] + dz)
                inv = 1.0 / math.sqrt(qx * qx + qy * qy + qz * qz)
                s[i, j, 0] = qx * inv
                s[i, j, 1] = qy * inv
                s[i, j, 2] = qz * inv


def plain_work(ny, nx):
    """Work arrays (sp, d1, nz) of :func:`plain_heun`."""
    return np.empty((ny, nx, 3)), np.empty((ny, nx, 3)), np.empty((ny, 3 * nx))



@nb.njit(inline="always")
def _field_rows(dn, cur, up, j, nx, jt, kt, ax, ay, az, b, nz):
    """Field (T) of site j of row cur with neighbour rows dn and up, each (nx, 3)."""
    jl = j - 1 if j > 0 else nx - 1
    jr = j + 1 if j < nx - 1 else 0
    sn = kt * (cur[j, 0] * ax + cur[j, 1] * ay + cur[j, 2] * az)
    hx = jt * (cur[jr, 0] + cur[jl, 0] + up[j, 0] + dn[j, 0]) + sn * ax + b[0] + nz[j]
    hy = jt * (cur[jr, 1] + cur[jl, 1] + up[j, 1] + dn[j, 1]) + sn * ay + b[1] + nz[nx + j]
    hz = jt * (cur[jr, 2] + cur[jl, 2] + up[j, 2] + dn[j, 2]) + sn * az + b[2] + nz[2 * nx + j]
    return hx, hy, hz


@nb.njit(parallel=True, cache=True)
def plain_fused_heun(s, n_steps, step0, seed, jt, kt, axis, b, sigma, gdt, alpha, nbands,
                     old, nz, ring_p, ring_d):
    """Fused Heun written plainly: copy the step's start state, then each band of rows computes
    predictor rows into a 3-row ring and corrects row r once predictor row r + 1 exists.

    Work arrays from :func:`plain_fused_work` (square lattice, periodic edges, ny >= 3).
    """
    ny, nx = s.shape[0], s.shape[1]
    ax, ay, az = axis[0], axis[1], axis[2]
    per_row = (3 * nx + 1) // 2
    for n in range(n_steps):
        k = key(seed, 0, step0 + n)
        for i in nb.prange(ny):
            normals_row(k, i * per_row, sigma, nz[i])
            for j in range(nx):
                old[i, j, 0] = s[i, j, 0]
                old[i, j, 1] = s[i, j, 1]
                old[i, j, 2] = s[i, j, 2]
        for bnd in nb.prange(nbands):
            a = bnd * ny // nbands
            e = (bnd + 1) * ny // nbands
            for r in range(a - 1, e + 1):
                i = r % ny
                slot = (r + 3) % 3
                pr = ring_p[bnd, slot]
                dr = ring_d[bnd, slot]
                dn = old[(i - 1) % ny]
                up = old[(i + 1) % ny]
                cur = old[i]
                for j in range(nx):
                    hx, hy, hz = _field_rows(dn, cur, up, j, nx, jt, kt, ax, ay, az, b, nz[i])
                    dx, dy, dz = _rhs(cur[j, 0], cur[j, 1], cur[j, 2], hx, hy, hz, gdt, alpha)
                    dr[j, 0] = dx
                    dr[j, 1] = dy
                    dr[j, 2] = dz
                    px = cur[j, 0] + dx
                    py = cur[j, 1] + dy
                    pz = cur[j, 2] + dz
                    inv = 1.0 / math.sqrt(px * px + py * py + pz * pz)
                    pr[j, 0] = px * inv
                    pr[j, 1] = py * inv
                    pr[j, 2] = pz * inv
                c = r - 1  # predictor rows c - 1, c, c + 1 now exist
                if c < a:
                    continue
                ci = c % ny
                pc = ring_p[bnd, (c + 3) % 3]
                pd = ring_p[bnd, (c + 2) % 3]
                pu = ring_p[bnd, (c + 4) % 3]
                d1 = ring_d[bnd, (c + 3) % 3]
                for j in range(nx):
                    hx, hy, hz = _field_rows(pd, pc, pu, j, nx, jt, kt, ax, ay, az, b, nz[ci])
                    dx, dy, dz = _rhs(pc[j, 0], pc[j, 1], pc[j, 2], hx, hy, hz, gdt, alpha)
                    qx = old[ci, j, 0] + 0.5 * (d1[j, 0] + dx)
                    qy = old[ci, j, 1] + 0.5 * (d1[j, 1] + dy)
                    qz = old[ci, j, 2] + 0.5 * (d1[j, 2] + dz)
                    inv = 1.0 / math.sqrt(qx * qx + qy * qy + qz * qz)
                    s[ci, j, 0] = qx * inv
                    s[ci, j, 1] = qy * inv
                    s[ci, j, 2] = qz * inv


def plain_fused_work(ny, nx, nbands):
    """Work arrays (old, nz, ring_p, ring_d) of :func:`plain_fused_heun`."""
    return (np.empty((ny, nx, 3)), np.empty((ny, 3 * nx)), np.empty((nbands, 3, nx, 3)),
            np.empty((nbands, 3, nx, 3)))
