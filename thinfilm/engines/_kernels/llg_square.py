"""Square-lattice Heun row stages with the field computed in the same loop.

``_predict_sq`` and ``_correct_sq`` are ``field_soa`` (square lattice, code 0) fused with
the predictor and corrector row stages of :mod:`.llg`: the same expressions in the same
order, so the result is bitwise that of the separate stages, without a stored field row.
"""

import math

import numba as nb

from thinfilm.engines._kernels.field import set_ghosts

__all__ = ["_predict_sq", "_correct_sq"]

_OPT = dict(cache=True, error_model="numpy", boundscheck=False)


@nb.njit(**_OPT)
def _predict_sq(dn, cur, up, jt, kt, ax, ay, az, bx, by, bz, nz, gdt, alpha, nx, periodic, d1,
                sp):
    """``field_soa`` (square, code 0) and ``_predict`` in one loop: the same expressions in
    the same order (bitwise the same result), without storing the field row."""
    sx_ = cur[0]
    sy_ = cur[1]
    sz_ = cur[2]
    ux = up[0]
    uy = up[1]
    uz = up[2]
    vx = dn[0]
    vy = dn[1]
    vz = dn[2]
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
        sn = kt * (sx * ax + sy * ay + sz * az)
        hx = jt * (sx_[t + 1] + sx_[t - 1] + ux[t] + vx[t]) + sn * ax + bx + nz[j]
        hy = jt * (sy_[t + 1] + sy_[t - 1] + uy[t] + vy[t]) + sn * ay + by + nz[nx + j]
        hz = jt * (sz_[t + 1] + sz_[t - 1] + uz[t] + vz[t]) + sn * az + bz + nz[2 * nx + j]
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
def _correct_sq(dn, pcur, up, jt, kt, ax, ay, az, bx, by, bz, nz, old, d1, gdt, alpha, nx,
                out):
    """``field_soa`` (square, code 0) and ``_correct`` in one loop (bitwise the same)."""
    sx_ = pcur[0]
    sy_ = pcur[1]
    sz_ = pcur[2]
    ux = up[0]
    uy = up[1]
    uz = up[2]
    vx = dn[0]
    vy = dn[1]
    vz = dn[2]
    ox_ = old[0]
    oy_ = old[1]
    oz_ = old[2]
    dx_ = d1[0]
    dy_ = d1[1]
    dz_ = d1[2]
    f = out.reshape(3 * nx)
    for j in range(nx):
        t = j + 1
        sx = sx_[t]
        sy = sy_[t]
        sz = sz_[t]
        sn = kt * (sx * ax + sy * ay + sz * az)
        hx = jt * (sx_[t + 1] + sx_[t - 1] + ux[t] + vx[t]) + sn * ax + bx + nz[j]
        hy = jt * (sy_[t + 1] + sy_[t - 1] + uy[t] + vy[t]) + sn * ay + by + nz[nx + j]
        hz = jt * (sz_[t + 1] + sz_[t - 1] + uz[t] + vz[t]) + sn * az + bz + nz[2 * nx + j]
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
