"""Stochastic Landau-Lifshitz-Gilbert integration by the Heun (Stratonovich) scheme.

Gilbert form with Brown's thermal field b (tesla), written in Landau-Lifshitz form:

    dS/dt = -gamma/(1 + alpha^2) [S x (B + b) + alpha S x (S x (B + b))]

with each Cartesian component of b drawn per step from Normal(0, 2 alpha kB T/(gamma mu_s dt))
and held fixed inside the step. Predictor and corrector are renormalised to unit length.

``heun_run`` is a fused, band-parallel sweep: each band of rows computes predictor rows into a
3-row ring buffer and corrects row r as soon as predictor row r + 1 exists, so the predictor
state never goes to main memory (the spins are read once and written once per step). Rows just
outside a band are read from copies taken at the start of the step. Inside a band all rows are
padded structure-of-arrays buffers with ghost columns (see :mod:`.field`), so the inner loops
have no branches and compile to SIMD code.

Noise: row r of step n uses the key ``key(seed, 0, n)`` and the counters r * P + p,
P = ceil(3 nx / 2), one Box-Muller pair per counter (``rng.normals_row``); component c of site
(r, j) is normal number c * nx + j of the row. Results are therefore bitwise independent of the
number of threads and bands, and ``heun_run`` and ``heun_run_twopass`` agree bitwise.

References: Garcia-Palacios and Lazaro, Phys. Rev. B 58, 14937 (1998) (Heun scheme for the
stochastic LLG); Brown, Phys. Rev. 130, 1677 (1963) (thermal field).
"""

import math

import numba as nb
import numpy as np

from thinfilm.engines._kernels.field import field_soa, load_row, neighbour_rows, row_pad, set_ghosts
from thinfilm.engines._kernels.llg_square import _correct_sq, _predict_sq
from thinfilm.engines._kernels.rng import key, normals_row

__all__ = ["heun_run", "heun_run_twopass", "noise_field", "heun_work", "twopass_work"]

_OPT = dict(cache=True, error_model="numpy", boundscheck=False)
_CHUNKS = 32


def heun_work(ny, nx, nbands):
    """Work arrays (edge, ring_sp, ring_d1, ring_nz, hbuf) of ``heun_run`` for nbands bands.

    edge (nbands, 8, nx, 3): first and last two rows of each band at the start of a step
    (slots 0-3 even steps, 4-7 odd steps).
    ring_sp (nbands, 6, 3, L): slots 0-2 start-of-step rows, 3-5 predictor rows (padded SoA).
    ring_d1 (nbands, 3, 3, L): predictor increments. ring_nz (nbands, 3, 3 nx): thermal field.
    hbuf (nbands, 2, 3, L): slot 0 an all-zero row (missing neighbours), slot 1 the field.
    """
    L = row_pad(nx)
    return (np.empty((nbands, 8, nx, 3)), np.zeros((nbands, 6, 3, L)),
            np.zeros((nbands, 3, 3, L)), np.zeros((nbands, 3, 3 * nx)),
            np.zeros((nbands, 2, 3, L)))


def twopass_work(ny, nx):
    """Work arrays (sp, d1, nz, h) of ``heun_run_twopass``, each (ny, nx, 3)."""
    return tuple(np.zeros((ny, nx, 3)) for _ in range(4))


def n_pairs(nx):
    """Box-Muller pairs (noise counters) per row."""
    return (3 * nx + 1) // 2


@nb.njit(**_OPT)
def _noise(k, row, nx, sigma, nz):
    if sigma > 0.0:
        normals_row(k, row * ((3 * nx + 1) // 2), sigma, nz)
    else:
        nz[:] = 0.0


@nb.njit(**_OPT)
def _predict(cur, h, gdt, alpha, nx, periodic, d1, sp):
    """d1 = -gdt [S x H + alpha S x (S x H)] and sp = (S + d1)/|S + d1| of one row."""
    sx_ = cur[0]
    sy_ = cur[1]
    sz_ = cur[2]
    hx_ = h[0]
    hy_ = h[1]
    hz_ = h[2]
    dx_ = d1[0]
    dy_ = d1[1]
    dz_ = d1[2]
    px_ = sp[0]
    py_ = sp[1]
    pz_ = sp[2]
    for j in range(nx):
        t = j + 1
        sx = sx_[t]
        sy = sy_[t]
        sz = sz_[t]
        hx = hx_[j]
        hy = hy_[j]
        hz = hz_[j]
        cx = sy * hz - sz * hy
        cy = sz * hx - sx * hz
        cz = sx * hy - sy * hx
        dx = -gdt * (cx + alpha * (sy * cz - sz * cy))
        dy = -gdt * (cy + alpha * (sz * cx - sx * cz))
        dz = -gdt * (cz + alpha * (sx * cy - sy * cx))
        dx_[j] = dx
        dy_[j] = dy
        dz_[j] = dz
        px = sx + dx
        py = sy + dy
        pz = sz + dz
        inv = 1.0 / math.sqrt(px * px + py * py + pz * pz)
        px_[t] = px * inv
        py_[t] = py * inv
        pz_[t] = pz * inv
    set_ghosts(sp, nx, periodic)


@nb.njit(**_OPT)
def _correct(pcur, h, old, d1, gdt, alpha, nx, out):
    """out (nx, 3) = normalised old + (d1 + d2)/2, d2 the increment at the predictor."""
    sx_ = pcur[0]
    sy_ = pcur[1]
    sz_ = pcur[2]
    hx_ = h[0]
    hy_ = h[1]
    hz_ = h[2]
    ox_ = old[0]
    oy_ = old[1]
    oz_ = old[2]
    dx_ = d1[0]
    dy_ = d1[1]
    dz_ = d1[2]
    f = out.reshape(3 * nx)  # constant stride 3: the interleave compiles to shuffles
    for j in range(nx):
        t = j + 1
        sx = sx_[t]
        sy = sy_[t]
        sz = sz_[t]
        hx = hx_[j]
        hy = hy_[j]
        hz = hz_[j]
        cx = sy * hz - sz * hy
        cy = sz * hx - sx * hz
        cz = sx * hy - sy * hx
        dx = -gdt * (cx + alpha * (sy * cz - sz * cy))
        dy = -gdt * (cy + alpha * (sz * cx - sx * cz))
        dz = -gdt * (cz + alpha * (sx * cy - sy * cx))
        nx_ = ox_[t] + 0.5 * (dx_[j] + dx)
        ny_ = oy_[t] + 0.5 * (dy_[j] + dy)
        nz_ = oz_[t] + 0.5 * (dz_[j] + dz)
        inv = 1.0 / math.sqrt(nx_ * nx_ + ny_ * ny_ + nz_ * nz_)
        f[3 * j] = nx_ * inv
        f[3 * j + 1] = ny_ * inv
        f[3 * j + 2] = nz_ * inv


@nb.njit(inline="always", **_OPT)
def _old_row(s, edge, a, h, o, bnd, nbands, base):
    """Row at band offset o (-2 .. h + 1) as it was at the start of the step."""
    if o < 0:
        return edge[(bnd - 1) % nbands, base + 4 + o]
    if o >= h:
        return edge[(bnd + 1) % nbands, base + o - h]
    return s[a + o]


@nb.njit(**_OPT)
def _save_edges(s, edge, base, bnd, nbands, ny):
    a = bnd * ny // nbands
    e = (bnd + 1) * ny // nbands
    edge[bnd, base] = s[a]
    edge[bnd, base + 1] = s[a + 1]
    edge[bnd, base + 2] = s[e - 2]
    edge[bnd, base + 3] = s[e - 1]


@nb.njit(inline="always", **_OPT)
def _exists(a, o, ny, periodic):
    return periodic or (a + o >= 0 and a + o < ny)


@nb.njit(**_OPT)
def _band_predict(s, edge, base, a, h, o, bnd, nbands, ny, k, sigma, code, periodic, jt, kt, axis,
                  bx, by, bz, gdt, alpha, ring_sp, ring_d1, ring_nz, hbuf):
    """Predictor of band row o; loads start-of-step row o + 1 (rows o - 1, o are loaded)."""
    nx = s.shape[1]
    zero = hbuf[bnd, 0]
    if _exists(a, o + 1, ny, periodic):
        load_row(_old_row(s, edge, a, h, o + 1, bnd, nbands, base), ring_sp[bnd, (o + 4) % 3],
                 periodic)
    rr = (a + o) % ny
    cur = ring_sp[bnd, (o + 3) % 3]
    dn = ring_sp[bnd, (o + 2) % 3] if _exists(a, o - 1, ny, periodic) else zero
    up = ring_sp[bnd, (o + 4) % 3] if _exists(a, o + 1, ny, periodic) else zero
    nz = ring_nz[bnd, (o + 3) % 3]
    _noise(k, rr, nx, sigma, nz)
    if code == 0:
        _predict_sq(dn, cur, up, jt, kt, axis[0], axis[1], axis[2], bx, by, bz, nz, gdt, alpha,
                    nx, periodic, ring_d1[bnd, (o + 3) % 3], ring_sp[bnd, 3 + (o + 3) % 3])
        return
    hf = hbuf[bnd, 1]
    field_soa(code, rr, dn, cur, up, jt, kt, axis[0], axis[1], axis[2], bx, by, bz, nz, nx, hf)
    _predict(cur, hf, gdt, alpha, nx, periodic, ring_d1[bnd, (o + 3) % 3],
             ring_sp[bnd, 3 + (o + 3) % 3])


@nb.njit(**_OPT)
def _band_correct(s, a, o, bnd, ny, code, periodic, jt, kt, axis, bx, by, bz, gdt, alpha,
                  ring_sp, ring_d1, ring_nz, hbuf):
    nx = s.shape[1]
    zero = hbuf[bnd, 0]
    r = a + o
    pc = ring_sp[bnd, 3 + o % 3]
    pd = ring_sp[bnd, 3 + (o + 2) % 3] if _exists(a, o - 1, ny, periodic) else zero
    pu = ring_sp[bnd, 3 + (o + 1) % 3] if _exists(a, o + 1, ny, periodic) else zero
    if code == 0:
        _correct_sq(pd, pc, pu, jt, kt, axis[0], axis[1], axis[2], bx, by, bz,
                    ring_nz[bnd, o % 3], ring_sp[bnd, o % 3], ring_d1[bnd, o % 3], gdt, alpha,
                    nx, s[r])
        return
    hf = hbuf[bnd, 1]
    field_soa(code, r, pd, pc, pu, jt, kt, axis[0], axis[1], axis[2], bx, by, bz,
              ring_nz[bnd, o % 3], nx, hf)
    _correct(pc, hf, ring_sp[bnd, o % 3], ring_d1[bnd, o % 3], gdt, alpha, nx, s[r])


@nb.njit(parallel=True, **_OPT)
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
    nbands : number of row bands (each at least 2 rows, so nbands <= ny // 2); work arrays
        from ``heun_work(ny, nx, nbands)``.
    """
    ny = s.shape[0]
    hbuf[:, 0] = 0.0
    # edge rows double-buffered by step parity: each band saves its own edge rows when it
    # finishes a step, so a step needs one synchronisation (the end of the prange) only
    for bnd in nb.prange(nbands):
        _save_edges(s, edge, 0, bnd, nbands, ny)
    for n in range(n_steps):
        temp = temp0 + dtemp * n
        if temp < 0.0:
            temp = 0.0
        sigma = sigma_coef * math.sqrt(temp)
        bx = b0[0] + db[0] * n
        by = b0[1] + db[1] * n
        bz = b0[2] + db[2] * n
        k = key(seed, 0, step0 + n)
        base = 4 * (n % 2)
        for bnd in nb.prange(nbands):
            a = bnd * ny // nbands
            e = (bnd + 1) * ny // nbands
            h = e - a
            start = -1 if _exists(a, -1, ny, periodic) else 0
            if _exists(a, start - 1, ny, periodic):
                load_row(_old_row(s, edge, a, h, start - 1, bnd, nbands, base),
                         ring_sp[bnd, (start + 2) % 3], periodic)
            load_row(_old_row(s, edge, a, h, start, bnd, nbands, base),
                     ring_sp[bnd, (start + 3) % 3], periodic)
            for o in range(start, 1):
                _band_predict(s, edge, base, a, h, o, bnd, nbands, ny, k, sigma, code,
                              periodic, jt, kt, axis, bx, by, bz, gdt, alpha, ring_sp, ring_d1,
                              ring_nz, hbuf)
            for o in range(h):
                if _exists(a, o + 1, ny, periodic):
                    _band_predict(s, edge, base, a, h, o + 1, bnd, nbands, ny, k, sigma, code,
                                  periodic, jt, kt, axis, bx, by, bz, gdt, alpha, ring_sp,
                                  ring_d1, ring_nz, hbuf)
                _band_correct(s, a, o, bnd, ny, code, periodic, jt, kt, axis, bx, by, bz, gdt,
                              alpha, ring_sp, ring_d1, ring_nz, hbuf)
            _save_edges(s, edge, 4 - base, bnd, nbands, ny)


@nb.njit(parallel=True, **_OPT)
def heun_run_twopass(s, n_steps, step0, seed, code, periodic, jt, kt, axis, b0, db, temp0,
                     dtemp, sigma_coef, gdt, alpha, sp, d1, nz, h):
    """Same step as heun_run (bitwise) in two passes over full arrays (any ny; benchmark peer).

    Work arrays sp, d1, nz, h each (ny, nx, 3) (``twopass_work``); d1 and nz hold each row as
    flat component blocks, h is unused. Per-row scratch buffers are allocated per row chunk.
    """
    ny, nx = s.shape[0], s.shape[1]
    L = row_pad(nx)
    nch = min(_CHUNKS, ny)  # row chunks, each with its own scratch buffers
    for n in range(n_steps):
        temp = temp0 + dtemp * n
        if temp < 0.0:
            temp = 0.0
        sigma = sigma_coef * math.sqrt(temp)
        bx = b0[0] + db[0] * n
        by = b0[1] + db[1] * n
        bz = b0[2] + db[2] * n
        k = key(seed, 0, step0 + n)
        for ch in nb.prange(nch):
            buf = np.zeros((6, 3, L))
            zero = np.zeros((3, L))
            for i in range(ch * ny // nch, (ch + 1) * ny // nch):
                dn, up, has_dn, has_up = neighbour_rows(i, ny, periodic)
                load_row(s[dn], buf[0], periodic)
                load_row(s[i], buf[1], periodic)
                load_row(s[up], buf[2], periodic)
                nzi = nz[i].reshape(3 * nx)
                _noise(k, i, nx, sigma, nzi)
                field_soa(code, i, buf[0] if has_dn else zero, buf[1], buf[2] if has_up else zero,
                          jt, kt, axis[0], axis[1], axis[2], bx, by, bz, nzi, nx, buf[3])
                _predict(buf[1], buf[3], gdt, alpha, nx, periodic, buf[4], buf[5])
                d1i = d1[i].reshape(3 * nx)
                for j in range(nx):
                    d1i[j] = buf[4, 0, j]
                    d1i[nx + j] = buf[4, 1, j]
                    d1i[2 * nx + j] = buf[4, 2, j]
                    sp[i, j, 0] = buf[5, 0, j + 1]
                    sp[i, j, 1] = buf[5, 1, j + 1]
                    sp[i, j, 2] = buf[5, 2, j + 1]
        for ch in nb.prange(nch):
            buf = np.zeros((6, 3, L))
            zero = np.zeros((3, L))
            for i in range(ch * ny // nch, (ch + 1) * ny // nch):
                dn, up, has_dn, has_up = neighbour_rows(i, ny, periodic)
                load_row(sp[dn], buf[0], periodic)
                load_row(sp[i], buf[1], periodic)
                load_row(sp[up], buf[2], periodic)
                load_row(s[i], buf[4], periodic)
                field_soa(code, i, buf[0] if has_dn else zero, buf[1], buf[2] if has_up else zero,
                          jt, kt, axis[0], axis[1], axis[2], bx, by, bz, nz[i].reshape(3 * nx),
                          nx, buf[3])
                d1i = d1[i].reshape(3 * nx)
                for j in range(nx):
                    buf[5, 0, j] = d1i[j]
                    buf[5, 1, j] = d1i[nx + j]
                    buf[5, 2, j] = d1i[2 * nx + j]
                _correct(buf[1], buf[3], buf[4], buf[5], gdt, alpha, nx, s[i])


@nb.njit(parallel=True, **_OPT)
def noise_field(ny, nx, seed, step, sigma, out):
    """The thermal field (T) heun_run uses at one step, into out (ny, nx, 3) (for tests)."""
    k = key(seed, 0, step)
    for i in nb.prange(ny):
        flat = np.empty(3 * nx)
        normals_row(k, i * ((3 * nx + 1) // 2), sigma, flat)
        for j in range(nx):
            out[i, j, 0] = flat[j]
            out[i, j, 1] = flat[nx + j]
            out[i, j, 2] = flat[2 * nx + j]
