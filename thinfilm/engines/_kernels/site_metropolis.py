"""Metropolis sweeps with per-site parameters over a row colouring (flat site arrays).

Colouring: every site couples only to sites of its own row and of rows i +- 1 (all three
lattices, :mod:`thinfilm.model.neighbours`), so rows of one class (even rows, odd rows, and
with periodic edges and odd ny the last row alone) are updated in parallel; inside a row sites
are visited left to right. Vacancies (occ = 0) are skipped and keep S = 0.

Moves at each occupied site, all symmetric proposals accepted with min(1, exp(-beta_i dE_i)),
tested as log(1 - u) <= -beta_i dE_i with u uniform in [0, 1):

1. Gaussian step S' = (S + sigma g)/abs(S + sigma g);
2. optional reflection S' = S - 2 (S.n_i) n_i through the plane normal to the site's own axis
   (the S -> -S move of the Ising limit; anisotropy unchanged);
3. n_or over-relaxation moves S' = 2 (S.f) f/abs(f)^2 - S about the exchange + Zeeman field f.

The local energy of site i in units of mu_i T is e(S) = -f.S - (kt_i/2)(S.n_i)^2 with
f = sum_k (jt_ik S_k + dm_ik x S_k) + B + bs_i (the packed film form of :mod:`.site_field`),
and beta_i = mu_i/(kB T) = beta_ref rel_i.

Random numbers: key(seed, stream, sweep); site q takes normals from counters 2q, 2q + 1 and the
uniform of move slot u (0 Gaussian, 1 reflection, 2 + r over-relaxation r) from counter
(2 + u) n + q: a pure function of (seed, stream, sweep, site), independent of threads.
"""

import math

import numba as nb

from thinfilm.engines._kernels.metropolis_layout import row_colouring
from thinfilm.engines._kernels.metropolis_moves import _de
from thinfilm.engines._kernels.rng import key, normal_pair, uniform01
from thinfilm.engines._kernels.site_field import site_pair_field, site_totals, site_zeeman

__all__ = ["row_classes", "site_mc_run", "gaussian_trial", "over_relaxed"]

_OPT = dict(cache=True, error_model="numpy", boundscheck=False)


row_classes = row_colouring  # the same row classes as the uniform Metropolis sweeps


@nb.njit(inline="always", **_OPT)
def _accept(k, counter, beta, de):
    return math.log(1.0 - uniform01(k, counter)) <= -beta * de


@nb.njit(inline="always", **_OPT)
def gaussian_trial(k, q, sx, sy, sz, sigma):
    """The Gaussian trial direction (S + sigma g)/abs(S + sigma g) of site q (normals at
    counters 2q, 2q + 1 of key k)."""
    g0, g1 = normal_pair(k, 2 * q)
    g2, _ = normal_pair(k, 2 * q + 1)
    px = sx + sigma * g0
    py = sy + sigma * g1
    pz = sz + sigma * g2
    inv = 1.0 / math.sqrt(px * px + py * py + pz * pz)
    return px * inv, py * inv, pz * inv


@nb.njit(inline="always", **_OPT)
def over_relaxed(sx, sy, sz, fx, fy, fz, f2):
    """S reflected about the field f (f2 = abs(f)^2 > 0): 2 (S.f) f/f2 - S, normalised."""
    t = 2.0 * (sx * fx + sy * fy + sz * fz) / f2
    px = t * fx - sx
    py = t * fy - sy
    pz = t * fz - sz
    inv = 1.0 / math.sqrt(px * px + py * py + pz * pz)
    return px * inv, py * inv, pz * inv


@nb.njit(**_OPT)
def _row(s, i, nx, k, nbr, jt, dm, kt, axis, bs, occ, rel, b, beta_ref, sigma, reflect, n_or,
         cnt):
    """Visit the sites of row i left to right; accepted moves are added to cnt (3,)."""
    n = s.shape[0]
    for j in range(nx):
        q = i * nx + j
        if not occ[q]:
            continue
        beta = beta_ref * rel[q]
        ax = axis[q, 0]
        ay = axis[q, 1]
        az = axis[q, 2]
        hk = 0.5 * kt[q]
        fx, fy, fz = site_pair_field(s, q, nbr, jt, dm)
        zx, zy, zz = site_zeeman(q, bs, b[0], b[1], b[2])
        fx += zx
        fy += zy
        fz += zz
        sx = s[q, 0]
        sy = s[q, 1]
        sz = s[q, 2]
        px, py, pz = gaussian_trial(k, q, sx, sy, sz, sigma)
        if _accept(k, 2 * n + q, beta, _de(sx, sy, sz, px, py, pz, fx, fy, fz, ax, ay, az, hk)):
            sx, sy, sz = px, py, pz
            cnt[0] += 1
        if reflect:
            sn = sx * ax + sy * ay + sz * az
            de = 2.0 * sn * (fx * ax + fy * ay + fz * az)
            if _accept(k, 3 * n + q, beta, de):
                sx -= 2.0 * sn * ax
                sy -= 2.0 * sn * ay
                sz -= 2.0 * sn * az
                cnt[1] += 1
        f2 = fx * fx + fy * fy + fz * fz
        for r in range(n_or):
            if f2 == 0.0:
                break
            px, py, pz = over_relaxed(sx, sy, sz, fx, fy, fz, f2)
            de = _de(sx, sy, sz, px, py, pz, fx, fy, fz, ax, ay, az, hk)
            if _accept(k, (4 + r) * n + q, beta, de):
                sx, sy, sz = px, py, pz
                cnt[2] += 1
        s[q, 0] = sx
        s[q, 1] = sy
        s[q, 2] = sz


@nb.njit(parallel=True, **_OPT)
def _sweep_parallel(s, nx, k, order, bounds, nbr, jt, dm, kt, axis, bs, occ, rel, b, beta_ref,
                    sigma, reflect, n_or, counts):
    for c in range(bounds.size - 1):
        for r in nb.prange(bounds[c], bounds[c + 1]):
            i = order[r]
            _row(s, i, nx, k, nbr, jt, dm, kt, axis, bs, occ, rel, b, beta_ref, sigma, reflect,
                 n_or, counts[i])


@nb.njit(**_OPT)
def _sweep_serial(s, nx, k, order, bounds, nbr, jt, dm, kt, axis, bs, occ, rel, b, beta_ref,
                  sigma, reflect, n_or, counts):
    for r in range(order.size):
        i = order[r]
        _row(s, i, nx, k, nbr, jt, dm, kt, axis, bs, occ, rel, b, beta_ref, sigma, reflect, n_or,
             counts[i])


@nb.njit(**_OPT)
def site_mc_run(s, nx, order, bounds, nbr, jt, dm, kt, axis, bs, occ, rel, b, beta_ref, sigma,
                seed, stream, sweep0, n_samples, sample_every, reflect, n_or, counts, out,
                parallel):
    """n_samples x (sample_every sweeps, then totals into out[m]) on the flat spins s (n, 3).

    out (n_samples, 4): sum of S (3) and the energy in units of mu_ref T (see
    :func:`.site_field.site_totals`); pass n_samples = 1 and an out of shape (1, 4) to just
    sweep. counts (ny, 3) accumulates accepted moves per row. beta_ref = mu_ref/(kB T) (1/T).
    """
    sweep = sweep0
    for m in range(n_samples):
        for _ in range(sample_every):
            k = key(seed, stream, sweep)
            if parallel:
                _sweep_parallel(s, nx, k, order, bounds, nbr, jt, dm, kt, axis, bs, occ, rel, b,
                                beta_ref, sigma, reflect, n_or, counts)
            else:
                _sweep_serial(s, nx, k, order, bounds, nbr, jt, dm, kt, axis, bs, occ, rel, b,
                              beta_ref, sigma, reflect, n_or, counts)
            sweep += 1
        mx, my, mz, ex, an, ze = site_totals(s, nbr, jt, dm, kt, axis, occ, rel, b, bs)
        out[m, 0] = mx
        out[m, 1] = my
        out[m, 2] = mz
        out[m, 3] = ex + an + ze
    return sweep
