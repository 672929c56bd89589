"""Metropolis sweeps with the dipolar field: sequential single-site moves against the current
field, the field updated after every accepted move (exact; serial).

Every site is visited in turn (rows top to bottom, each left to right); the moves and random
numbers are those of :mod:`.site_metropolis` (Gaussian step, optional reflection through the
plane normal to the site's axis, over-relaxation), with the field of the other sites
g_q = f_q + B^dip_q - rel_q W_qq S_q, where f_q is the local pair + Zeeman field
(:mod:`.site_field`), B^dip_q the dipolar field at q (T, all sites including q's own
self-interaction), and W_qq the dipolar self tensor (the field at q of its own unit moment
mu_ref: prism self-demagnetisation, periodic images). g_q does not depend on S_q, so the
energy change of S -> P at q is exact:

    dE / mu_q = -(P - S).g_q - (kt_q / 2)[(P.n)^2 - (S.n)^2] - (rel_q / 2)(P.W_qq P - S.W_qq S)

and the over-relaxation about g_q is an involution (a symmetric proposal). After the moves at
q the dipolar field of every site p is updated, B^dip_p += W_pq rel_q (S_new - S_old), with the
response kernel ``resp[sub, ri, rj]`` of the source's sublattice (3 x 3, field component x
source component): O(N) per changed site, O(N^2) per sweep.
"""

import math

import numba as nb

from thinfilm.engines._kernels.rng import key, uniform01
from thinfilm.engines._kernels.site_field import site_pair_field, site_totals, site_zeeman
from thinfilm.engines._kernels.site_metropolis import gaussian_trial, over_relaxed

__all__ = ["dipolar_mc_run"]

_OPT = dict(cache=True, error_model="numpy", boundscheck=False)


@nb.njit(inline="always", **_OPT)
def _quad(w, x, y, z):
    return (x * (w[0, 0] * x + w[0, 1] * y + w[0, 2] * z)
            + y * (w[1, 0] * x + w[1, 1] * y + w[1, 2] * z)
            + z * (w[2, 0] * x + w[2, 1] * y + w[2, 2] * z))


@nb.njit(inline="always", **_OPT)
def _de(sx, sy, sz, px, py, pz, gx, gy, gz, ax, ay, az, hk, hr, w):
    sn = sx * ax + sy * ay + sz * az
    pn = px * ax + py * ay + pz * az
    return (-(gx * (px - sx) + gy * (py - sy) + gz * (pz - sz)) - hk * (pn * pn - sn * sn)
            - hr * (_quad(w, px, py, pz) - _quad(w, sx, sy, sz)))


@nb.njit(inline="always", **_OPT)
def _accept(k, counter, beta, de):
    return math.log(1.0 - uniform01(k, counter)) <= -beta * de


@nb.njit(**_OPT)
def _update(hd, qi, qj, nx, resp, ci, cj, sub, rel, dx, dy, dz, periodic):
    """hd[p] += W_pq rel (dx, dy, dz) for every site p."""
    n = hd.shape[0]
    ny = n // nx
    r = resp[sub]
    for pi in range(ny):
        ri = pi - qi + ci
        if periodic:
            ri %= ny
        for pj in range(nx):
            rj = pj - qj + cj
            if periodic:
                rj %= nx
            w = r[ri, rj]
            p = pi * nx + pj
            hd[p, 0] += rel * (w[0, 0] * dx + w[0, 1] * dy + w[0, 2] * dz)
            hd[p, 1] += rel * (w[1, 0] * dx + w[1, 1] * dy + w[1, 2] * dz)
            hd[p, 2] += rel * (w[2, 0] * dx + w[2, 1] * dy + w[2, 2] * dz)


@nb.njit(**_OPT)
def _sweep(s, nx, k, nbr, jt, dm, kt, axis, bs, occ, rel, b, beta_ref, sigma, reflect, n_or,
           counts, hd, resp, ci, cj, pp, pq, periodic):
    n = s.shape[0]
    for q in range(n):
        if not occ[q]:
            continue
        i = q // nx
        j = q - i * nx
        sub = (i % pp) * pq + j % pq
        w = resp[sub, ci[sub], cj[sub]]
        r = rel[q]
        beta = beta_ref * r
        ax = axis[q, 0]
        ay = axis[q, 1]
        az = axis[q, 2]
        hk = 0.5 * kt[q]
        hr = 0.5 * r
        sx = s[q, 0]
        sy = s[q, 1]
        sz = s[q, 2]
        ox, oy, oz = sx, sy, sz
        fx, fy, fz = site_pair_field(s, q, nbr, jt, dm)
        zx, zy, zz = site_zeeman(q, bs, b[0], b[1], b[2])
        gx = fx + zx + hd[q, 0] - r * (w[0, 0] * sx + w[0, 1] * sy + w[0, 2] * sz)
        gy = fy + zy + hd[q, 1] - r * (w[1, 0] * sx + w[1, 1] * sy + w[1, 2] * sz)
        gz = fz + zz + hd[q, 2] - r * (w[2, 0] * sx + w[2, 1] * sy + w[2, 2] * sz)
        px, py, pz = gaussian_trial(k, q, sx, sy, sz, sigma)
        if _accept(k, 2 * n + q, beta, _de(sx, sy, sz, px, py, pz, gx, gy, gz, ax, ay, az, hk,
                                           hr, w)):
            sx, sy, sz = px, py, pz
            counts[i, 0] += 1
        if reflect:
            sn = sx * ax + sy * ay + sz * az
            px = sx - 2.0 * sn * ax
            py = sy - 2.0 * sn * ay
            pz = sz - 2.0 * sn * az
            if _accept(k, 3 * n + q, beta, _de(sx, sy, sz, px, py, pz, gx, gy, gz, ax, ay, az,
                                               hk, hr, w)):
                sx, sy, sz = px, py, pz
                counts[i, 1] += 1
        g2n = gx * gx + gy * gy + gz * gz
        for rr in range(n_or):
            if g2n == 0.0:
                break
            px, py, pz = over_relaxed(sx, sy, sz, gx, gy, gz, g2n)
            de = _de(sx, sy, sz, px, py, pz, gx, gy, gz, ax, ay, az, hk, hr, w)
            if _accept(k, (4 + rr) * n + q, beta, de):
                sx, sy, sz = px, py, pz
                counts[i, 2] += 1
        if sx != ox or sy != oy or sz != oz:
            s[q, 0] = sx
            s[q, 1] = sy
            s[q, 2] = sz
            _update(hd, i, j, nx, resp, ci[sub], cj[sub], sub, r, sx - ox, sy - oy, sz - oz,
                    periodic)


@nb.njit(**_OPT)
def dipolar_mc_run(s, nx, nbr, jt, dm, kt, axis, bs, occ, rel, b, beta_ref, sigma, seed, stream,
                   sweep0, n_samples, sample_every, reflect, n_or, counts, out, hd, resp, ci, cj,
                   pp, pq, periodic):
    """n_samples x (sample_every sweeps, then totals into out[m]); returns the sweep count.

    out (n_samples, 4): sum of S and the energy in units of mu_ref T, the dipolar part
    -(1/2) sum_i rel_i S_i.B^dip_i from the maintained field hd (n, 3) (T). resp (n_sub, Ry,
    Rx, 3, 3), ci, cj (n_sub,): response kernels and the source position of each sublattice;
    (pp, pq) the lattice period; periodic: wrap the offsets.
    """
    sweep = sweep0
    n = s.shape[0]
    for m in range(n_samples):
        for _ in range(sample_every):
            k = key(seed, stream, sweep)
            _sweep(s, nx, k, nbr, jt, dm, kt, axis, bs, occ, rel, b, beta_ref, sigma, reflect,
                   n_or, counts, hd, resp, ci, cj, pp, pq, periodic)
            sweep += 1
        mx, my, mz, ex, an, ze = site_totals(s, nbr, jt, dm, kt, axis, occ, rel, b, bs)
        ed = 0.0
        for q in range(n):
            ed += rel[q] * (s[q, 0] * hd[q, 0] + s[q, 1] * hd[q, 1] + s[q, 2] * hd[q, 2])
        out[m, 0] = mx
        out[m, 1] = my
        out[m, 2] = mz
        out[m, 3] = ex + an + ze - 0.5 * ed
    return sweep
