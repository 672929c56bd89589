"""Stochastic Landau-Lifshitz-Gilbert integration by the Heun (Stratonovich) scheme.

Gilbert form with Brown's thermal field b (tesla), written in Landau-Lifshitz form:

    dS/dt = -gamma/(1 + alpha^2) [S x (B + b) + alpha S x (S x (B + b))]

with each Cartesian component of b drawn per step from Normal(0, 2 alpha kB T/(gamma mu_s dt))
and held fixed inside the step. Predictor and corrector are renormalised to unit length.

``heun_run`` is a fused, band-parallel sweep: each band of rows computes predictor rows into a
3-row ring buffer and corrects row r as soon as predictor row r + 1 exists, so the predictor
state never goes to main memory. Rows just outside a band are read from copies taken at the
start of the step. Noise comes from the counter-based generator keyed by (seed, step, site), so
results are bitwise independent of the number of threads and bands.

References: Garcia-Palacios and Lazaro, Phys. Rev. B 58, 14937 (1998) (Heun scheme for the
stochastic LLG); Brown, Phys. Rev. 130, 1677 (1963) (thermal field).
"""

import math

import numba as nb
import numpy as np

from .field import neighbour_rows, row_field
from .rng import key, normals3

__all__ = ["heun_run", "heun_run_twopass", "noise_field"]


@nb.njit(cache=True)
def _noise_row(k, row, nx, sigma, out):
    base = row * nx
    for j in range(nx):
        a, b, c = normals3(k, base + j)
        out[j, 0] = sigma * a
        out[j, 1] = sigma * b
        out[j, 2] = sigma * c


@nb.njit(cache=True)
def _predict_row(dn, cur, up, i, has_dn, has_up, code, periodic, jt, kt, axis, bx, by, bz,
                 noise, gdt, alpha, h, sp, d1):
    row_field(dn, cur, up, i, has_dn, has_up, code, periodic, jt, kt, axis[0], axis[1],
              axis[2], bx, by, bz, noise, h)
    for j in range(cur.shape[0]):
        sx = cur[j, 0]
        sy = cur[j, 1]
        sz = cur[j, 2]
        hx = h[j, 0]
        hy = h[j, 1]
        hz = h[j, 2]
        cx = sy * hz - sz * hy
        cy = sz * hx - sx * hz
        cz = sx * hy - sy * hx
        dx = -gdt * (cx + alpha * (sy * cz - sz * cy))
        dy = -gdt * (cy + alpha * (sz * cx - sx * cz))
        dz = -gdt * (cz + alpha * (sx * cy - sy * cx))
        d1[j, 0] = dx
        d1[j, 1] = dy
        d1[j, 2] = dz
        px = sx + dx
        py = sy + dy
        pz = sz + dz
        inv = 1.0 / math.sqrt(px * px + py * py + pz * pz)
        sp[j, 0] = px * inv
        sp[j, 1] = py * inv
        sp[j, 2] = pz * inv


@nb.njit(cache=True)
def _correct_row(pdn, pcur, pup, i, has_dn, has_up, code, periodic, jt, kt, axis, bx, by, bz,
                 noise, gdt, alpha, h, d1, s_row):
    row_field(pdn, pcur, pup, i, has_dn, has_up, code, periodic, jt, kt, axis[0], axis[1],
              axis[2], bx, by, bz, noise, h)
    for j in range(pcur.shape[0]):
        sx = pcur[j, 0]
        sy = pcur[j, 1]
        sz = pcur[j, 2]
        hx = h[j, 0]
        hy = h[j, 1]
        hz = h[j, 2]
        cx = sy * hz - sz * hy
        cy = sz * hx - sx * hz
        cz = sx * hy - sy * hx
        dx = -gdt * (cx + alpha * (sy * cz - sz * cy))
        dy = -gdt * (cy + alpha * (sz * cx - sx * cz))
        dz = -gdt * (cz + alpha * (sx * cy - sy * cx))
        nx_ = s_row[j, 0] + 0.5 * (d1[j, 0] + dx)
        ny_ = s_row[j, 1] + 0.5 * (d1[j, 1] + dy)
        nz_ = s_row[j, 2] + 0.5 * (d1[j, 2] + dz)
        inv = 1.0 / math.sqrt(nx_ * nx_ + ny_ * ny_ + nz_ * nz_)
        s_row[j, 0] = nx_ * inv
        s_row[j, 1] = ny_ * inv
        s_row[j, 2] = nz_ * inv


@nb.njit(inline="always", cache=True)
def _old_row(s, edge, a, h, o, bnd, nbands):
    """Row at band offset o (-2 .. h + 1) as it was at the start of the step."""
    if o < 0:
        return edge[(bnd - 1) % nbands, 4 + o]
    if o >= h:
        return edge[(bnd + 1) % nbands, o - h]
    return s[a + o]


@nb.njit(cache=True)
def _band_predict(s, edge, a, h, o, bnd, nbands, ny, k, sigma, code, periodic, jt, kt, axis,
                  bx, by, bz, gdt, alpha, ring_sp, ring_d1, ring_nz, hbuf):
    r = a + o
    rr = r % ny
    has_dn = periodic or r - 1 >= 0
    has_up = periodic or r + 1 < ny
    cur = _old_row(s, edge, a, h, o, bnd, nbands)
    dn = _old_row(s, edge, a, h, o - 1, bnd, nbands) if has_dn else cur
    up = _old_row(s, edge, a, h, o + 1, bnd, nbands) if has_up else cur
    slot = (o + 3) % 3
    nz = ring_nz[bnd, slot]
    nx = s.shape[1]
    if sigma > 0.0:
        _noise_row(k, rr, nx, sigma, nz)
    else:
        nz[:, :] = 0.0
    _predict_row(dn, cur, up, rr, has_dn, has_up, code, periodic, jt, kt, axis, bx, by, bz,
                 nz, gdt, alpha, hbuf[bnd], ring_sp[bnd, slot], ring_d1[bnd, slot])


@nb.njit(parallel=True, cache=True)
def heun_run(s, n_steps, step0, seed, code, periodic, jt, kt, axis, b0, db, temp0, dtemp,
             sigma_coef, gdt, alpha, nbands, edge, ring_sp, ring_d1, ring_nz, hbuf):
    """Advance s (ny, nx, 3) in place by n_steps fused Heun steps.

    Parameters
    ----------
    step0 : int, global index of the first step (keys the noise).
    jt, kt : J/mu_s and 2K/mu_s (T). axis (3,) unit axis.
    b0, db : field (T) at the first step and its change per step (T).
    temp0, dtemp : temperature (K) at the first step and its change per step (K).
    sigma_coef : sqrt(2 alpha kB/(gamma mu_s dt)) in T/sqrt(K).
    gdt : gamma dt / (1 + alpha^2) in 1/T.
    nbands : number of row bands (each at least 2 rows); work arrays edge (nbands, 4, nx, 3),
        ring_sp, ring_d1, ring_nz (nbands, 3, nx, 3), hbuf (nbands, nx, 3).
    """
    ny = s.shape[0]
    for n in range(n_steps):
        temp = temp0 + dtemp * n
        if temp < 0.0:
            temp = 0.0
        sigma = sigma_coef * math.sqrt(temp)
        bx = b0[0] + db[0] * n
        by = b0[1] + db[1] * n
        bz = b0[2] + db[2] * n
        k = key(seed, 0, step0 + n)
        for bnd in nb.prange(nbands):
            a = bnd * ny // nbands
            e = (bnd + 1) * ny // nbands
            edge[bnd, 0] = s[a]
            edge[bnd, 1] = s[a + 1]
            edge[bnd, 2] = s[e - 2]
            edge[bnd, 3] = s[e - 1]
        for bnd in nb.prange(nbands):
            a = bnd * ny // nbands
            e = (bnd + 1) * ny // nbands
            h = e - a
            if periodic or a > 0:
                _band_predict(s, edge, a, h, -1, bnd, nbands, ny, k, sigma, code, periodic,
                              jt, kt, axis, bx, by, bz, gdt, alpha, ring_sp, ring_d1,
                              ring_nz, hbuf)
            _band_predict(s, edge, a, h, 0, bnd, nbands, ny, k, sigma, code, periodic, jt,
                          kt, axis, bx, by, bz, gdt, alpha, ring_sp, ring_d1, ring_nz, hbuf)
            for o in range(h):
                r = a + o
                if o + 1 < h or periodic or e < ny:
                    _band_predict(s, edge, a, h, o + 1, bnd, nbands, ny, k, sigma, code,
                                  periodic, jt, kt, axis, bx, by, bz, gdt, alpha, ring_sp,
                                  ring_d1, ring_nz, hbuf)
                has_dn = periodic or r - 1 >= 0
                has_up = periodic or r + 1 < ny
                pc = ring_sp[bnd, o % 3]
                pd = ring_sp[bnd, (o + 2) % 3] if has_dn else pc
                pu = ring_sp[bnd, (o + 1) % 3] if has_up else pc
                _correct_row(pd, pc, pu, r, has_dn, has_up, code, periodic, jt, kt, axis,
                             bx, by, bz, ring_nz[bnd, o % 3], gdt, alpha, hbuf[bnd],
                             ring_d1[bnd, o % 3], s[r])


@nb.njit(parallel=True, cache=True)
def heun_run_twopass(s, n_steps, step0, seed, code, periodic, jt, kt, axis, b0, db, temp0,
                     dtemp, sigma_coef, gdt, alpha, sp, d1, nz, h):
    """Same step as heun_run in two passes over full arrays (any ny; benchmark peer).

    Work arrays sp, d1, nz, h each (ny, nx, 3).
    """
    ny, nx = s.shape[0], s.shape[1]
    for n in range(n_steps):
        temp = temp0 + dtemp * n
        if temp < 0.0:
            temp = 0.0
        sigma = sigma_coef * math.sqrt(temp)
        bx = b0[0] + db[0] * n
        by = b0[1] + db[1] * n
        bz = b0[2] + db[2] * n
        k = key(seed, 0, step0 + n)
        for i in nb.prange(ny):
            dn, up, has_dn, has_up = neighbour_rows(i, ny, periodic)
            if sigma > 0.0:
                _noise_row(k, i, nx, sigma, nz[i])
            else:
                nz[i] = 0.0
            _predict_row(s[dn], s[i], s[up], i, has_dn, has_up, code, periodic, jt, kt, axis,
                         bx, by, bz, nz[i], gdt, alpha, h[i], sp[i], d1[i])
        for i in nb.prange(ny):
            dn, up, has_dn, has_up = neighbour_rows(i, ny, periodic)
            _correct_row(sp[dn], sp[i], sp[up], i, has_dn, has_up, code, periodic, jt, kt,
                         axis, bx, by, bz, nz[i], gdt, alpha, h[i], d1[i], s[i])


@nb.njit(parallel=True, cache=True)
def noise_field(ny, nx, seed, step, sigma, out):
    """The thermal field (T) heun_run uses at one step, into out (ny, nx, 3) (for tests)."""
    k = key(seed, 0, step)
    for i in nb.prange(ny):
        _noise_row(k, i, nx, sigma, out[i])
