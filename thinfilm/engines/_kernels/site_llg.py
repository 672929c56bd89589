"""Stochastic Heun (LLG) step with per-site parameters: two passes over flat site arrays.

Same equation, scheme and noise numbers as :mod:`.llg` (Garcia-Palacios and Lazaro, Phys.
Rev. B 58, 14937 (1998); Brown, Phys. Rev. 130, 1677 (1963)):

    dS/dt = -gamma/(1 + alpha^2) [S x (B + b) + alpha S x (S x (B + b))]

with the thermal field of site i drawn per step from Normal(0, 2 alpha kB T/(gamma mu_i dt)):
the standard normals are those of the uniform path (row r of step n: ``normals_row`` with key
``key(seed, 0, n)`` at counters r ceil(3 nx / 2) + p, component c of site j is number
c nx + j), multiplied by sigma_ref = sqrt(2 alpha kB T/(gamma mu_ref dt)) and by
scale_i = sqrt(mu_ref/mu_i). Vacancies (occ = 0) keep S = 0 and are never updated.
The field is that of the packed film form (:mod:`.site_field`: exchange, DMI, anisotropy,
uniform and per-site Zeeman) plus an optional added field hd (n, 3) (T; the dipolar field,
evaluated by the driver at the start-of-step spins for the predictor and at the predictor for
the corrector: :func:`site_predict_stage` / :func:`site_correct_stage`); hd with 0 rows
means none.
Pass 1 computes the predictor of every site, pass 2 the corrector; each pass is parallel over
rows and every site's arithmetic is fixed, so results do not depend on the thread count.
"""

import math

import numba as nb
import numpy as np

from thinfilm.engines._kernels.rng import key, normals_row
from thinfilm.engines._kernels.site_field import site_field

__all__ = ["site_heun_run", "site_heun_run_serial", "site_heun_work", "site_predict_stage",
           "site_correct_stage"]

_OPT = dict(cache=True, error_model="numpy", boundscheck=False)
_NONE = np.zeros((0, 3))  # no added field


def site_heun_work(ny, nx):
    """Work arrays (sp (n, 3), d1 (n, 3), nz (ny, 3 nx)) of :func:`site_heun_run`."""
    n = ny * nx
    return np.zeros((n, 3)), np.zeros((n, 3)), np.zeros((ny, 3 * nx))


@nb.njit(inline="always", **_OPT)
def _rhs(sx, sy, sz, hx, hy, hz, gdt, alpha):
    """-gdt [S x H + alpha S x (S x H)]."""
    cx = sy * hz - sz * hy
    cy = sz * hx - sx * hz
    cz = sx * hy - sy * hx
    return (-gdt * (cx + alpha * (sy * cz - sz * cy)),
            -gdt * (cy + alpha * (sz * cx - sx * cz)),
            -gdt * (cz + alpha * (sx * cy - sy * cx)))


@nb.njit(inline="always", **_OPT)
def _field(s, q, nbr, jt, dm, kt, axis, bs, hd, bx, by, bz, row, j, nx):
    """Field of site q (T): packed form + added field hd (if any) + noise row entry j."""
    hx, hy, hz = site_field(s, q, nbr, jt, dm, kt, axis, bs, bx, by, bz)
    if hd.shape[0] > 0:
        hx += hd[q, 0]
        hy += hd[q, 1]
        hz += hd[q, 2]
    return hx + row[j], hy + row[nx + j], hz + row[2 * nx + j]


@nb.njit(inline="always", **_OPT)
def _predict_row(i, s, nx, k, npair, sigma, nbr, jt, dm, kt, axis, bs, hd, occ, scale, bx, by,
                 bz, gdt, alpha, sp, d1, nz):
    """Noise and predictor of row i (pass 1)."""
    row = nz[i]
    if sigma > 0.0:
        normals_row(k, i * npair, sigma, row)
    else:
        row[:] = 0.0
    for j in range(nx):
        q = i * nx + j
        if not occ[q]:
            for c in range(3):
                sp[q, c] = 0.0
                d1[q, c] = 0.0
            continue
        c = scale[q]
        row[j] *= c
        row[nx + j] *= c
        row[2 * nx + j] *= c
        hx, hy, hz = _field(s, q, nbr, jt, dm, kt, axis, bs, hd, bx, by, bz, row, j, nx)
        sx = s[q, 0]
        sy = s[q, 1]
        sz = s[q, 2]
        dx, dy, dz = _rhs(sx, sy, sz, hx, hy, hz, gdt, alpha)
        d1[q, 0] = dx
        d1[q, 1] = dy
        d1[q, 2] = dz
        px = sx + dx
        py = sy + dy
        pz = sz + dz
        inv = 1.0 / math.sqrt(px * px + py * py + pz * pz)
        sp[q, 0] = px * inv
        sp[q, 1] = py * inv
        sp[q, 2] = pz * inv


@nb.njit(inline="always", **_OPT)
def _correct_row(i, s, nx, nbr, jt, dm, kt, axis, bs, hd, occ, bx, by, bz, gdt, alpha, sp, d1,
                 nz):
    """Corrector of row i (pass 2): s = normalised s + (d1 + d2)/2."""
    row = nz[i]
    for j in range(nx):
        q = i * nx + j
        if not occ[q]:
            continue
        hx, hy, hz = _field(sp, q, nbr, jt, dm, kt, axis, bs, hd, bx, by, bz, row, j, nx)
        dx, dy, dz = _rhs(sp[q, 0], sp[q, 1], sp[q, 2], hx, hy, hz, gdt, alpha)
        ox = s[q, 0] + 0.5 * (d1[q, 0] + dx)
        oy = s[q, 1] + 0.5 * (d1[q, 1] + dy)
        oz = s[q, 2] + 0.5 * (d1[q, 2] + dz)
        inv = 1.0 / math.sqrt(ox * ox + oy * oy + oz * oz)
        s[q, 0] = ox * inv
        s[q, 1] = oy * inv
        s[q, 2] = oz * inv


@nb.njit(parallel=True, **_OPT)
def site_heun_run(s, nx, n_steps, step0, seed, nbr, jt, dm, kt, axis, bs, occ, scale, b0, db,
                  temp0, dtemp, sigma_coef, gdt, alpha, sp, d1, nz):
    """Advance the flat spins s (n, 3) in place by n_steps Heun steps (rows in parallel).

    Parameters
    ----------
    nx : int, columns (rows ny = n / nx).
    step0 : int, global index of the first step (keys the noise).
    nbr, jt, dm, kt, axis, bs, occ : packed film arrays (see :mod:`.site_field`), T.
    scale : (n,) sqrt(mu_ref / mu_i), 0 on vacancies.
    b0, db : field (T) at the first step and its change per step (T).
    temp0, dtemp : temperature (K) at the first step and its change per step (K).
    sigma_coef : sqrt(2 alpha kB/(gamma mu_ref dt)) in T/sqrt(K).
    gdt : gamma dt/(1 + alpha^2) in 1/T.
    sp, d1, nz : work arrays from :func:`site_heun_work`.
    """
    ny = s.shape[0] // nx
    npair = (3 * nx + 1) // 2
    for st in range(n_steps):
        sigma = sigma_coef * math.sqrt(max(temp0 + dtemp * st, 0.0))
        bx = b0[0] + db[0] * st
        by = b0[1] + db[1] * st
        bz = b0[2] + db[2] * st
        k = key(seed, 0, step0 + st)
        for i in nb.prange(ny):
            _predict_row(i, s, nx, k, npair, sigma, nbr, jt, dm, kt, axis, bs, _NONE, occ, scale,
                         bx, by, bz, gdt, alpha, sp, d1, nz)
        for i in nb.prange(ny):
            _correct_row(i, s, nx, nbr, jt, dm, kt, axis, bs, _NONE, occ, bx, by, bz, gdt, alpha,
                         sp, d1, nz)


@nb.njit(**_OPT)
def site_heun_run_serial(s, nx, n_steps, step0, seed, nbr, jt, dm, kt, axis, bs, occ, scale, b0,
                         db, temp0, dtemp, sigma_coef, gdt, alpha, sp, d1, nz):
    """:func:`site_heun_run` on one thread (bitwise the same result; small lattices)."""
    ny = s.shape[0] // nx
    npair = (3 * nx + 1) // 2
    for st in range(n_steps):
        sigma = sigma_coef * math.sqrt(max(temp0 + dtemp * st, 0.0))
        bx = b0[0] + db[0] * st
        by = b0[1] + db[1] * st
        bz = b0[2] + db[2] * st
        k = key(seed, 0, step0 + st)
        for i in range(ny):
            _predict_row(i, s, nx, k, npair, sigma, nbr, jt, dm, kt, axis, bs, _NONE, occ, scale,
                         bx, by, bz, gdt, alpha, sp, d1, nz)
        for i in range(ny):
            _correct_row(i, s, nx, nbr, jt, dm, kt, axis, bs, _NONE, occ, bx, by, bz, gdt, alpha,
                         sp, d1, nz)


@nb.njit(parallel=True, **_OPT)
def site_predict_stage(s, nx, step, seed, nbr, jt, dm, kt, axis, bs, hd, occ, scale, bx, by, bz,
                       sigma, gdt, alpha, sp, d1, nz):
    """Predictor of one step (rows in parallel) with the added field hd (n, 3) (T) at s; the
    noise of step ``step`` (std sigma at mu_ref) is kept in nz for the corrector."""
    ny = s.shape[0] // nx
    npair = (3 * nx + 1) // 2
    k = key(seed, 0, step)
    for i in nb.prange(ny):
        _predict_row(i, s, nx, k, npair, sigma, nbr, jt, dm, kt, axis, bs, hd, occ, scale, bx,
                     by, bz, gdt, alpha, sp, d1, nz)


@nb.njit(parallel=True, **_OPT)
def site_correct_stage(s, nx, nbr, jt, dm, kt, axis, bs, hd, occ, bx, by, bz, gdt, alpha, sp, d1,
                       nz):
    """Corrector of one step with the added field hd (n, 3) (T) at the predictor sp."""
    ny = s.shape[0] // nx
    for i in nb.prange(ny):
        _correct_row(i, s, nx, nbr, jt, dm, kt, axis, bs, hd, occ, bx, by, bz, gdt, alpha, sp,
                     d1, nz)
