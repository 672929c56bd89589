"""Stochastic Landau-Lifshitz-Bloch step on a square grid of cells (numba).

Each cell carries the reduced magnetisation m = M / Ms(0) (a vector, not of unit length). The
effective field (tesla) is

    H = cex (sum_nn m_j - z_i m_i) + (la + lb m^2) m - kperp kscale_i (m_x, m_y, 0) + B + Hd_i

(exchange with the discrete Laplacian, z_i the neighbours present; the longitudinal field of
the LLB; uniaxial anisotropy along z written with the transverse susceptibility; applied and
dipolar fields). The motion, in the stochastic form of Evans et al., Phys. Rev. B 85, 014433
(2012), after Garanin, Phys. Rev. B 55, 3050 (1997):

    dm/dt = -gamma m x H + gamma a_par (m.H) m / m^2
            - gamma a_perp m x (m x (H + zeta_perp)) / m^2 + zeta_ad

with zeta_perp a field of variance s_perp^2 per component and step and zeta_ad a rate of
variance s_ad^2 (the driver computes both). Heun scheme (Stratonovich), the same noise in the
predictor and the corrector. Noise of step n, row i: ``normals_row(key(seed, stream, n),
i ceil(3 nx / 2), ...)`` with streams 20 (zeta_ad) and 21 (zeta_perp): independent of the
thread count.
"""

import numba as nb
import numpy as np

from thinfilm.engines._kernels.rng import key, normals_row

__all__ = ["llb_field", "llb_heun", "STREAM_AD", "STREAM_PERP"]

STREAM_AD = 20
STREAM_PERP = 21
_OPT = dict(cache=True, error_model="numpy", boundscheck=False)


@nb.njit(parallel=True, **_OPT)
def llb_field(m, hd, periodic, cex, la, lb, kperp, kscale, bx, by, bz, h):
    """Effective field (T) of every cell into h (ny, nx, 3); hd the dipolar field or zeros."""
    ny, nx, _ = m.shape
    for i in nb.prange(ny):
        for j in range(nx):
            sx = 0.0
            sy = 0.0
            sz = 0.0
            cnt = 0
            for di, dj in ((-1, 0), (1, 0), (0, -1), (0, 1)):
                ii = i + di
                jj = j + dj
                if periodic:
                    ii = ii % ny
                    jj = jj % nx
                elif ii < 0 or ii >= ny or jj < 0 or jj >= nx:
                    continue
                sx += m[ii, jj, 0]
                sy += m[ii, jj, 1]
                sz += m[ii, jj, 2]
                cnt += 1
            mx = m[i, j, 0]
            my = m[i, j, 1]
            mz = m[i, j, 2]
            m2 = mx * mx + my * my + mz * mz
            lon = la + lb * m2
            kp = kperp * kscale[i, j]
            h[i, j, 0] = cex * (sx - cnt * mx) + lon * mx - kp * mx + bx + hd[i, j, 0]
            h[i, j, 1] = cex * (sy - cnt * my) + lon * my - kp * my + by + hd[i, j, 1]
            h[i, j, 2] = cex * (sz - cnt * mz) + lon * mz + bz + hd[i, j, 2]


@nb.njit(inline="always", **_OPT)
def _rate(mx, my, mz, hx, hy, hz, px, py, pz, gamma, a_par, a_perp):
    """dm/dt without the additive noise; (px, py, pz) the transverse noise field."""
    m2 = mx * mx + my * my + mz * mz
    if m2 < 1e-300:
        m2 = 1e-300
    # precession -gamma m x H
    cx = my * hz - mz * hy
    cy = mz * hx - mx * hz
    cz = mx * hy - my * hx
    # transverse relaxation: -m x (m x G) = m^2 G - (m.G) m, G = H + zeta_perp
    gx = hx + px
    gy = hy + py
    gz = hz + pz
    mg = mx * gx + my * gy + mz * gz
    mh = mx * hx + my * hy + mz * hz
    tp = gamma * a_perp / m2
    tl = gamma * a_par * mh / m2
    rx = -gamma * cx + tp * (m2 * gx - mg * mx) + tl * mx
    ry = -gamma * cy + tp * (m2 * gy - mg * my) + tl * my
    rz = -gamma * cz + tp * (m2 * gz - mg * mz) + tl * mz
    return rx, ry, rz


@nb.njit(parallel=True, **_OPT)
def _noise(nx, ny, seed, step, s_ad, s_perp, z_ad, z_perp):
    """Row i of each stream: ``normals_row`` with counters from i * ceil(3 nx / 2), written in
    (ny, nx, 3) order (component c of cell j is normal 3 j + c of the row)."""
    kad = key(seed, STREAM_AD, step)
    kpp = key(seed, STREAM_PERP, step)
    per_row = (3 * nx + 1) // 2
    for i in nb.prange(ny):
        if s_ad > 0.0:
            normals_row(kad, i * per_row, s_ad, z_ad[i].reshape(3 * nx))
        else:
            z_ad[i] = 0.0
        if s_perp > 0.0:
            normals_row(kpp, i * per_row, s_perp, z_perp[i].reshape(3 * nx))
        else:
            z_perp[i] = 0.0


@nb.njit(parallel=True, **_OPT)
def _predict(m, h, z_ad, z_perp, dt, gamma, a_par, a_perp, fix_len, mp, d1):
    ny, nx, _ = m.shape
    for i in nb.prange(ny):
        for j in range(nx):
            rx, ry, rz = _rate(m[i, j, 0], m[i, j, 1], m[i, j, 2], h[i, j, 0], h[i, j, 1],
                               h[i, j, 2], z_perp[i, j, 0], z_perp[i, j, 1], z_perp[i, j, 2],
                               gamma, a_par, a_perp)
            d1[i, j, 0] = rx * dt + z_ad[i, j, 0]
            d1[i, j, 1] = ry * dt + z_ad[i, j, 1]
            d1[i, j, 2] = rz * dt + z_ad[i, j, 2]
            x = m[i, j, 0] + d1[i, j, 0]
            y = m[i, j, 1] + d1[i, j, 1]
            z = m[i, j, 2] + d1[i, j, 2]
            if fix_len > 0.0:
                s = fix_len / np.sqrt(x * x + y * y + z * z)
                x *= s
                y *= s
                z *= s
            mp[i, j, 0] = x
            mp[i, j, 1] = y
            mp[i, j, 2] = z


@nb.njit(parallel=True, **_OPT)
def _correct(m, mp, h, z_ad, z_perp, dt, gamma, a_par, a_perp, fix_len, d1):
    ny, nx, _ = m.shape
    for i in nb.prange(ny):
        for j in range(nx):
            rx, ry, rz = _rate(mp[i, j, 0], mp[i, j, 1], mp[i, j, 2], h[i, j, 0], h[i, j, 1],
                               h[i, j, 2], z_perp[i, j, 0], z_perp[i, j, 1], z_perp[i, j, 2],
                               gamma, a_par, a_perp)
            x = m[i, j, 0] + 0.5 * (d1[i, j, 0] + rx * dt + z_ad[i, j, 0])
            y = m[i, j, 1] + 0.5 * (d1[i, j, 1] + ry * dt + z_ad[i, j, 1])
            z = m[i, j, 2] + 0.5 * (d1[i, j, 2] + rz * dt + z_ad[i, j, 2])
            if fix_len > 0.0:
                s = fix_len / np.sqrt(x * x + y * y + z * z)
                x *= s
                y *= s
                z *= s
            m[i, j, 0] = x
            m[i, j, 1] = y
            m[i, j, 2] = z


def llb_heun(m, dipolar, periodic, coef, kscale, field_T, dt, gamma, a_par, a_perp, s_ad,
             s_perp, seed, step0, n_steps, work, fix_len=0.0):
    """Advance m in place by n_steps Heun steps; returns the next step index.

    coef = (cex, la, lb, kperp) in tesla; dipolar: callable (m, out) writing the field (T)
    into out (ny, nx, 3), or None;
    s_ad: standard deviation of zeta_ad dt per step (dimensionless); s_perp: of zeta_perp (T);
    fix_len > 0 keeps |m| = fix_len (T = 0: the LLG limit). work: 6 arrays (ny, nx, 3).
    """
    h, hd, mp, d1, z_ad, z_perp = work
    ny, nx, _ = m.shape
    cex, la, lb, kperp = coef
    bx, by, bz = (float(v) for v in field_T)
    step = step0
    for _ in range(n_steps):
        _noise(nx, ny, seed, step, s_ad, s_perp, z_ad, z_perp)  # a zero sigma writes zeros
        if dipolar is not None:
            dipolar(m, hd)
        llb_field(m, hd, periodic, cex, la, lb, kperp, kscale, bx, by, bz, h)
        _predict(m, h, z_ad, z_perp, dt, gamma, a_par, a_perp, fix_len, mp, d1)
        if dipolar is not None:
            dipolar(mp, hd)
        llb_field(mp, hd, periodic, cex, la, lb, kperp, kscale, bx, by, bz, h)
        _correct(m, mp, h, z_ad, z_perp, dt, gamma, a_par, a_perp, fix_len, d1)
        step += 1
    return step
