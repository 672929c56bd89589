"""The Metropolis moves at one column of a chunk: Gaussian step, axis reflection and
over-relaxation, branch-free over the rows (see :mod:`thinfilm.engines._kernels.metropolis`)."""

import math

import numba as nb
import numpy as np

from thinfilm.engines._kernels.rng import _bits_f64, fast_log, hash64, normals_row

_OPT = dict(cache=True, error_model="numpy", boundscheck=False)


_ONE_BITS = np.uint64(0x3FF0000000000000)

_S12 = np.uint64(12)

@nb.njit(inline="always", **_OPT)
def _log_u(k, counter):
    """log(u), u uniform in (0, 1] on a grid of 2^-52 (52 random bits), branch-free."""
    x = _bits_f64((hash64(k, counter) >> _S12) | _ONE_BITS)  # [1, 2)
    return fast_log(2.0 - x)

@nb.njit(inline="always", **_OPT)
def _de(sx, sy, sz, px, py, pz, fx, fy, fz, ax, ay, az, half_kt):
    """Energy change (mu_s T) of S -> P at a site with local exchange + Zeeman field f."""
    sn = sx * ax + sy * ay + sz * az
    pn = px * ax + py * ay + pz * az
    return -(fx * (px - sx) + fy * (py - sy) + fz * (pz - sz)) - half_kt * (pn * pn - sn * sn)

@nb.njit(**_OPT)
def _moves(na, k, v0, nsites, ax, ay, az, half_kt, beta, sigma, reflect, n_or, buf, g, cnt):
    """The three moves for the na sites in buf (rows 0-2 spin, 3-5 local field); accepted
    moves (gaussian, reflection, over-relaxation) of site q are added to cnt[:, q]."""
    sx_ = buf[0]
    sy_ = buf[1]
    sz_ = buf[2]
    fx_ = buf[3]
    fy_ = buf[4]
    fz_ = buf[5]
    gv = g[:3 * na]
    h = (na + 1) // 2
    for c in range(3):  # component c: counters 4 v0 + c h + p
        normals_row(k, 4 * v0 + c * h, sigma, gv[c * na:(c + 1) * na])
    # 1. Gaussian step
    c0 = np.uint64(4 * nsites + v0)
    for q in range(na):
        sx = sx_[q]
        sy = sy_[q]
        sz = sz_[q]
        fx = fx_[q]
        fy = fy_[q]
        fz = fz_[q]
        px = sx + gv[q]
        py = sy + gv[na + q]
        pz = sz + gv[2 * na + q]
        inv = 1.0 / math.sqrt(px * px + py * py + pz * pz)
        px *= inv
        py *= inv
        pz *= inv
        de = _de(sx, sy, sz, px, py, pz, fx, fy, fz, ax, ay, az, half_kt)
        acc = _log_u(k, c0 + np.uint64(q)) <= -beta * de
        sx_[q] = px if acc else sx
        sy_[q] = py if acc else sy
        sz_[q] = pz if acc else sz
        cnt[0, q] += 1 if acc else 0
    # 2. reflection through the plane normal to the axis (anisotropy unchanged)
    if reflect:
        c0 = np.uint64(5 * nsites + v0)
        for q in range(na):
            sx = sx_[q]
            sy = sy_[q]
            sz = sz_[q]
            sn = sx * ax + sy * ay + sz * az
            de = 2.0 * sn * (fx_[q] * ax + fy_[q] * ay + fz_[q] * az)
            acc = _log_u(k, c0 + np.uint64(q)) <= -beta * de
            w = 2.0 * sn if acc else 0.0
            sx_[q] = sx - w * ax
            sy_[q] = sy - w * ay
            sz_[q] = sz - w * az
            cnt[1, q] += 1 if acc else 0
    # 3. over-relaxation about the exchange + Zeeman field
    for r in range(n_or):
        c0 = np.uint64((6 + r) * nsites + v0)
        for q in range(na):
            sx = sx_[q]
            sy = sy_[q]
            sz = sz_[q]
            fx = fx_[q]
            fy = fy_[q]
            fz = fz_[q]
            f2 = fx * fx + fy * fy + fz * fz
            ok = f2 > 0.0
            c = 2.0 * (sx * fx + sy * fy + sz * fz) / (f2 if ok else 1.0)
            px = c * fx - sx
            py = c * fy - sy
            pz = c * fz - sz
            sn = sx * ax + sy * ay + sz * az
            pn = px * ax + py * ay + pz * az
            de = -half_kt * (pn * pn - sn * sn)
            acc = ok and _log_u(k, c0 + np.uint64(q)) <= -beta * de
            sx_[q] = px if acc else sx
            sy_[q] = py if acc else sy
            sz_[q] = pz if acc else sz
            cnt[2, q] += 1 if acc else 0
