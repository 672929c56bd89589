"""Metropolis sweeps (Gaussian step, axis reflection, over-relaxation) parallel over row classes.

Row colouring. On all three lattices a site couples only to sites in its own row and in rows
i - 1 and i + 1 (see :mod:`thinfilm.lattice`). Each row is swept sequentially inside one thread,
which handles the bonds within a row, so two rows may be updated at the same time whenever they
are not adjacent. :func:`row_colouring` puts the rows in classes:

* class 0: even rows, class 1: odd rows;
* periodic edges with an odd number of rows: the last row (even) is adjacent to row 0 (even)
  through the wrap, so it forms a class 2 of its own.

Classes are swept one after the other; the rows of one class run in parallel (``prange``).

Moves at every visited site, all with symmetric proposals accepted by the Metropolis rule
min(1, exp(-dE/kBT)):

1. Gaussian step S' = (S + sigma g)/abs(S + sigma g), g a 3D standard normal vector.
2. Axis reflection S' = S - 2 (S.n) n (optional): flips the component along the anisotropy axis
   with the anisotropy energy unchanged, i.e. the S -> -S move of the Ising limit.
3. Over-relaxation, n_or times: reflection of S about the local exchange + Zeeman field f,
   S' = 2 (S.f) f/abs(f)^2 - S. It keeps the exchange + Zeeman energy; the anisotropy change
   is accepted by Metropolis.

Random numbers come from the counter-based generator keyed by (seed, stream, sweep) and
counter site * (4 + n_or) + slot, so results are bitwise independent of the thread count and
of the order of rows inside a class.

Energies: the local energy of S at a site with neighbour-spin sum h is, in units of mu_s * T,
e(S) = -(jt h + b).S - (kt/2) (S.n)^2 with jt = J/mu_s and kt = 2K/mu_s (tesla). The kernels
take beta = mu_s/(kB T) in 1/T, so beta * de is the energy change in units of kB T.
"""

import math

import numba as nb
import numpy as np

from .field import neighbour_rows
from .rng import key, normal_pair, uniform01

__all__ = [
    "row_colouring",
    "neighbour_sum",
    "site_energy_change",
    "metropolis_sweeps",
    "metropolis_sweeps_serial",
    "row_sums",
    "row_sums_serial",
    "metropolis_samples",
]

N_COUNTS = 3  # accepted: gaussian, reflection, over-relaxation


def row_colouring(ny, periodic):
    """Row classes for parallel sweeps.

    Parameters
    ----------
    ny : int
        Number of rows.
    periodic : bool
        Periodic edges.

    Returns
    -------
    order : ndarray of int64, shape (ny,)
        Rows sorted by class (within a class in increasing order).
    bounds : ndarray of int64, shape (n_classes + 1,)
        order[bounds[c]:bounds[c + 1]] are the rows of class c.
    """
    classes = [list(range(0, ny, 2)), list(range(1, ny, 2))]
    if periodic and ny % 2 == 1 and ny > 1:
        classes[0].remove(ny - 1)
        classes.append([ny - 1])
    classes = [c for c in classes if c]
    order = np.array([r for c in classes for r in c], dtype=np.int64)
    bounds = np.cumsum([0] + [len(c) for c in classes]).astype(np.int64)
    return order, bounds


@nb.njit(inline="always", cache=True)
def neighbour_sum(s, i, j, dn, up, has_dn, has_up, code, periodic):
    """Sum of the neighbour spins of site (i, j) (same neighbour rules as ``row_field``)."""
    nx = s.shape[1]
    hx = 0.0
    hy = 0.0
    hz = 0.0
    jl = j - 1
    jr = j + 1
    if jl < 0:
        jl = nx - 1 if periodic else -1
    if jr >= nx:
        jr = 0 if periodic else -1
    if jl >= 0:
        hx += s[i, jl, 0]
        hy += s[i, jl, 1]
        hz += s[i, jl, 2]
    if jr >= 0:
        hx += s[i, jr, 0]
        hy += s[i, jr, 1]
        hz += s[i, jr, 2]
    if code == 2:
        if (i + j) % 2 == 0:
            if has_up:
                hx += s[up, j, 0]
                hy += s[up, j, 1]
                hz += s[up, j, 2]
        elif has_dn:
            hx += s[dn, j, 0]
            hy += s[dn, j, 1]
            hz += s[dn, j, 2]
    else:
        if has_up:
            hx += s[up, j, 0]
            hy += s[up, j, 1]
            hz += s[up, j, 2]
        if has_dn:
            hx += s[dn, j, 0]
            hy += s[dn, j, 1]
            hz += s[dn, j, 2]
        if code == 1:
            js = j + (-1 if i % 2 == 0 else 1)
            ok = True
            if js < 0 or js >= nx:
                if periodic:
                    js = js % nx
                else:
                    ok = False
            if ok:
                if has_up:
                    hx += s[up, js, 0]
                    hy += s[up, js, 1]
                    hz += s[up, js, 2]
                if has_dn:
                    hx += s[dn, js, 0]
                    hy += s[dn, js, 1]
                    hz += s[dn, js, 2]
    return hx, hy, hz


@nb.njit(cache=True)
def site_energy_change(s, i, j, new, code, periodic, jt, kt, axis, b):
    """Energy change (units of mu_s * T) when site (i, j) of s changes to the unit vector new.

    Uses the same neighbour sum and local energy as the sweep; s is not modified.
    """
    dn, up, has_dn, has_up = neighbour_rows(i, s.shape[0], periodic)
    hx, hy, hz = neighbour_sum(s, i, j, dn, up, has_dn, has_up, code, periodic)
    fx = jt * hx + b[0]
    fy = jt * hy + b[1]
    fz = jt * hz + b[2]
    dx = new[0] - s[i, j, 0]
    dy = new[1] - s[i, j, 1]
    dz = new[2] - s[i, j, 2]
    sn = s[i, j, 0] * axis[0] + s[i, j, 1] * axis[1] + s[i, j, 2] * axis[2]
    pn = new[0] * axis[0] + new[1] * axis[1] + new[2] * axis[2]
    return -(fx * dx + fy * dy + fz * dz) - 0.5 * kt * (pn * pn - sn * sn)


@nb.njit(cache=True)
def _sweep_row(s, i, code, periodic, jt, kt, ax, ay, az, bx, by, bz, beta, sigma, k,
               reflect, n_or, counts):
    ny, nx = s.shape[0], s.shape[1]
    dn, up, has_dn, has_up = neighbour_rows(i, ny, periodic)
    slots = 4 + n_or
    half_kt = 0.5 * kt
    n_gauss = 0
    n_refl = 0
    n_over = 0
    for j in range(nx):
        hx, hy, hz = neighbour_sum(s, i, j, dn, up, has_dn, has_up, code, periodic)
        fx = jt * hx + bx
        fy = jt * hy + by
        fz = jt * hz + bz
        sx = s[i, j, 0]
        sy = s[i, j, 1]
        sz = s[i, j, 2]
        sn = sx * ax + sy * ay + sz * az
        base = (i * nx + j) * slots
        # 1. Gaussian step
        g1, g2 = normal_pair(k, base)
        g3, _ = normal_pair(k, base + 1)
        px = sx + sigma * g1
        py = sy + sigma * g2
        pz = sz + sigma * g3
        inv = 1.0 / math.sqrt(px * px + py * py + pz * pz)
        px *= inv
        py *= inv
        pz *= inv
        pn = px * ax + py * ay + pz * az
        de = -(fx * (px - sx) + fy * (py - sy) + fz * (pz - sz)) - half_kt * (pn * pn - sn * sn)
        if de <= 0.0 or uniform01(k, base + 2) < math.exp(-beta * de):
            sx = px
            sy = py
            sz = pz
            sn = pn
            n_gauss += 1
        # 2. reflection through the plane normal to the axis (anisotropy unchanged)
        if reflect:
            de = 2.0 * sn * (fx * ax + fy * ay + fz * az)
            if de <= 0.0 or uniform01(k, base + 3) < math.exp(-beta * de):
                sx -= 2.0 * sn * ax
                sy -= 2.0 * sn * ay
                sz -= 2.0 * sn * az
                sn = -sn
                n_refl += 1
        # 3. over-relaxation about the exchange + Zeeman field
        f2 = fx * fx + fy * fy + fz * fz
        if f2 > 0.0:
            for r in range(n_or):
                c = 2.0 * (sx * fx + sy * fy + sz * fz) / f2
                px = c * fx - sx
                py = c * fy - sy
                pz = c * fz - sz
                pn = px * ax + py * ay + pz * az
                de = -half_kt * (pn * pn - sn * sn)
                if de <= 0.0 or uniform01(k, base + 4 + r) < math.exp(-beta * de):
                    sx = px
                    sy = py
                    sz = pz
                    sn = pn
                    n_over += 1
        s[i, j, 0] = sx
        s[i, j, 1] = sy
        s[i, j, 2] = sz
    counts[i, 0] += n_gauss
    counts[i, 1] += n_refl
    counts[i, 2] += n_over


@nb.njit(parallel=True, cache=True)
def metropolis_sweeps(s, order, bounds, code, periodic, jt, kt, axis, b, beta, sigma, seed,
                      stream, sweep0, n_sweeps, reflect, n_or, counts):
    """Advance s (ny, nx, 3) in place by n_sweeps Metropolis sweeps.

    Parameters
    ----------
    order, bounds : int64 arrays from :func:`row_colouring`.
    code, periodic : lattice code (0 square, 1 triangular, 2 honeycomb) and edges.
    jt, kt : J/mu_s and 2K/mu_s (T). axis (3,) unit anisotropy axis; b (3,) field (T).
    beta : mu_s/(kB T) (1/T).
    sigma : Gaussian step width (dimensionless, on the unit sphere).
    seed, stream : generator seed and stream (stream >= 1 for Monte Carlo).
    sweep0 : global index of the first sweep (keys the random numbers).
    reflect : do the axis-reflection move. n_or : over-relaxation moves per site per sweep.
    counts : int64 (ny, 3), accepted moves (gaussian, reflection, over-relaxation) per row,
        incremented in place.
    """
    n_classes = bounds.shape[0] - 1
    ax = axis[0]
    ay = axis[1]
    az = axis[2]
    for t in range(n_sweeps):
        k = key(seed, stream, sweep0 + t)
        for c in range(n_classes):
            a = bounds[c]
            n_rows = bounds[c + 1] - a
            for r in nb.prange(n_rows):
                _sweep_row(s, order[a + r], code, periodic, jt, kt, ax, ay, az, b[0], b[1],
                           b[2], beta, sigma, k, reflect, n_or, counts)


@nb.njit(cache=True)
def metropolis_sweeps_serial(s, order, bounds, code, periodic, jt, kt, axis, b, beta, sigma,
                             seed, stream, sweep0, n_sweeps, reflect, n_or, counts):
    """Single-thread twin of :func:`metropolis_sweeps` (same results bit for bit).

    Cheaper for small lattices, where waking threads twice per sweep costs more than the work.
    """
    for t in range(n_sweeps):
        k = key(seed, stream, sweep0 + t)
        for r in range(order.shape[0]):
            _sweep_row(s, order[r], code, periodic, jt, kt, axis[0], axis[1], axis[2], b[0],
                       b[1], b[2], beta, sigma, k, reflect, n_or, counts)


@nb.njit(cache=True)
def _row_sum(s, i, code, periodic, jt, kt, axis, b, rows):
    ny, nx = s.shape[0], s.shape[1]
    dn, up, has_dn, has_up = neighbour_rows(i, ny, periodic)
    rx = 0.0
    ry = 0.0
    rz = 0.0
    re = 0.0
    for j in range(nx):
        hx, hy, hz = neighbour_sum(s, i, j, dn, up, has_dn, has_up, code, periodic)
        sx = s[i, j, 0]
        sy = s[i, j, 1]
        sz = s[i, j, 2]
        sn = sx * axis[0] + sy * axis[1] + sz * axis[2]
        rx += sx
        ry += sy
        rz += sz
        re += (-0.5 * jt * (sx * hx + sy * hy + sz * hz) - 0.5 * kt * sn * sn
               - (sx * b[0] + sy * b[1] + sz * b[2]))
    rows[i, 0] = rx
    rows[i, 1] = ry
    rows[i, 2] = rz
    rows[i, 3] = re


@nb.njit(parallel=True, cache=True)
def row_sums(s, code, periodic, jt, kt, axis, b, rows):
    """Per-row sums into rows (ny, 4): mx, my, mz and the energy (units of mu_s * T).

    Energy of a row: -(jt/2) sum S.h - (kt/2) sum (S.n)^2 - sum b.S, h the neighbour sum, so
    the row energies add up to the total with every bond once. Summing rows in a fixed order
    afterwards keeps totals independent of the thread count.
    """
    for i in nb.prange(s.shape[0]):
        _row_sum(s, i, code, periodic, jt, kt, axis, b, rows)


@nb.njit(cache=True)
def row_sums_serial(s, code, periodic, jt, kt, axis, b, rows):
    """Single-thread twin of :func:`row_sums`."""
    for i in range(s.shape[0]):
        _row_sum(s, i, code, periodic, jt, kt, axis, b, rows)


@nb.njit(cache=True)
def metropolis_samples(s, order, bounds, code, periodic, jt, kt, axis, b, beta, sigma, seed,
                       stream, sweep0, n_samples, sample_every, reflect, n_or, counts, rows,
                       out, parallel):
    """n_samples times: sample_every sweeps, then the totals (mx, my, mz, energy) into out.

    out : (n_samples, 4) float64; energy in units of mu_s * T (multiply by mu_s for J).
    rows : (ny, 4) scratch. parallel : use the threaded sweep and sums (same results).
    Other arguments as :func:`metropolis_sweeps`.
    """
    ny = s.shape[0]
    for k in range(n_samples):
        sw = sweep0 + k * sample_every
        if parallel:
            metropolis_sweeps(s, order, bounds, code, periodic, jt, kt, axis, b, beta, sigma,
                              seed, stream, sw, sample_every, reflect, n_or, counts)
            row_sums(s, code, periodic, jt, kt, axis, b, rows)
        else:
            metropolis_sweeps_serial(s, order, bounds, code, periodic, jt, kt, axis, b, beta,
                                     sigma, seed, stream, sw, sample_every, reflect, n_or,
                                     counts)
            row_sums_serial(s, code, periodic, jt, kt, axis, b, rows)
        for c in range(4):
            acc = 0.0
            for i in range(ny):
                acc += rows[i, c]
            out[k, c] = acc
