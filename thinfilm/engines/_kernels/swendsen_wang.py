"""Swendsen-Wang multi-cluster moves of the embedded Ising variables, labelled in parallel.

Move (Swendsen and Wang, Phys. Rev. Lett. 58, 86 (1987); embedded-spin form for vector spins as
in Wolff, Phys. Rev. Lett. 62, 361 (1989)): draw a reflection direction r as the Wolff moves of
:mod:`.wolff` do (mode 0 the axis n, 1 uniform in the plane perpendicular to n, 2 uniform on the
sphere); with sigma_i = S_i.r activate every bond (each entry of the neighbour table with j > i)
with probability

    p_ij = 1 - exp(min(0, -2 beta jt sigma_i sigma_j)),

split the lattice into the clusters of active bonds and reflect each cluster, S -> S - 2 (S.r) r,
independently with the heat-bath probability 1 / (1 + exp(beta dE)), dE = 2 mu_s (B.r) sum_C
sigma_i its Zeeman change (1/2 at B.r = 0, the plain Swendsen-Wang move). Given the bonds, each
cluster's two states are sampled in proportion to their Boltzmann weights, so the move keeps
exp(-E/kBT) for the same reflections (and anisotropy conditions) as the Wolff moves.

Labelling, parallel and exact: the rows are split into a fixed number of chunks (independent of
the thread count). Each chunk draws its bonds and joins its internal ones in a union-find of its
own sites; bonds to a neighbouring chunk (the neighbour table only links rows i and i +- 1) are
kept as flags and joined afterwards, serially, along the chunk edges. Unions follow Rem's
algorithm with splicing, in which every link points to a smaller index, so a cluster's root is
its smallest site index whatever the order of the unions. Every random number is a function
of (seed, stream, sweep, site, slot): bond (i, q) uses counter i z + q of one key, the flip of
a cluster the counter of its label of another. Results are therefore bitwise the same on any
number of threads.

Spins are read and written in the banded layout as in :mod:`.wolff` (flat view Tf, addresses
addr and ghost addresses gaddr).

stats (float64, 4), as for the Wolff moves: clusters made, sum of cluster sizes, clusters
flipped and an improved estimator: the increment c sum_C w_C^2 / N (c clusters, w_C = sum_C
abs(sigma_i)), so that stats[3] / stats[0] / N estimates <(r.m)^2> at B.r = 0, m = M/N
(sum_C w_C^2 is the Swendsen-Wang improved estimator of (r.M)^2).
"""

import math

import numba as nb
import numpy as np

from thinfilm.engines._kernels.banded import _row_sums_par, _row_sums_serial, row_totals
from thinfilm.engines._kernels.metropolis import _sweeps_t, _sweeps_t_serial
from thinfilm.engines._kernels.rng import hash64, key, uniform01
from thinfilm.engines._kernels.wolff import banded_addresses, reflect_site

__all__ = ["make_sw_work", "sw_move", "sw_mixed_sweeps", "sw_mixed_samples", "SW_COUNTER",
           "SW_CHUNKS"]

_OPT = dict(cache=True, error_model="numpy", boundscheck=False)
SW_COUNTER = np.uint64(0x5B3D_0000_0000_0000)  # apart from the Wolff and Metropolis counters
SW_CHUNKS = 16  # row chunks of the labelling (fixed: results do not depend on threads)
_TWO_PI = 2.0 * math.pi


def make_sw_work(T, bands, periodic, neighbours, axis, mode):
    """Work tuple (Tf, addr, gaddr, nbr, frame, mode, cb, parent, lab, sig, csum, asum, flip,
    act) for the banded spins T (n_bands, nx, 3, LP): as ``wolff.make_cluster_work`` up to mode,
    then the chunk row bounds cb and the scratch arrays of :func:`sw_move`.

    Raises ValueError if a neighbour lies more than one row away (the labelling joins chunks
    only along their edge rows)."""
    nx = T.shape[1]
    ny = int(bands[-1])
    nbr = np.ascontiguousarray(neighbours, dtype=np.int64)
    rows = np.arange(ny * nx) // nx
    d = np.abs(rows[:, None] - np.where(nbr >= 0, nbr, np.arange(ny * nx)[:, None]) // nx)
    if np.any((d > 1) & (d < ny - 1)):
        raise ValueError("Swendsen-Wang moves need neighbours in the same or adjacent rows")
    addr, gaddr = banded_addresses(ny, nx, bands, T.shape[3], periodic)
    n = np.asarray(axis, dtype=np.float64)
    e1 = np.cross(n, [1.0, 0.0, 0.0] if abs(n[0]) < 0.9 else [0.0, 1.0, 0.0])
    e1 /= np.linalg.norm(e1)
    frame = np.ascontiguousarray([n, e1, np.cross(n, e1)], dtype=np.float64)
    nch = min(SW_CHUNKS, ny)
    cb = np.array([c * ny // nch for c in range(nch + 1)], dtype=np.int64)
    N = ny * nx
    return (T.reshape(-1), addr, gaddr, nbr, frame, int(mode), cb, np.empty(N, np.int64),
            np.empty(N, np.int64), np.empty(N), np.empty(N), np.empty(N), np.empty(N, np.uint8),
            np.zeros(nbr.size, np.uint8))


@nb.njit(inline="always", **_OPT)
def _union(parent, a, b):
    """Join the sets of a and b (Rem's algorithm with splicing). Keeps parent[x] <= x, so a
    root is the smallest index of its set whatever the order of the unions."""
    while parent[a] != parent[b]:
        if parent[a] < parent[b]:
            a, b = b, a
        pa = parent[a]
        if pa == a:
            parent[a] = parent[b]
            return
        parent[a] = parent[b]
        a = pa


def _sw_move_py(Tf, addr, gaddr, LP, nbr, beta, jt, b, frame, mode, seed, stream, sweep, nx, cb,
                parent, lab, sig, csum, asum, flip, act, stats):
    """One Swendsen-Wang move (see the module doc); random numbers keyed by (seed, stream,
    sweep). cb: chunk row bounds; parent, lab (N,) int64, sig, csum, asum (N,), flip (N,)
    uint8, act (N z,) uint8 scratch."""
    z = nbr.shape[1]
    n = addr.shape[0]
    nch = cb.shape[0] - 1
    kk = 2.0 * beta * jt
    k = hash64(key(seed, stream, sweep), SW_COUNTER)
    kb = hash64(k, np.uint64(1))
    kf = hash64(k, np.uint64(2))
    if mode == 0:
        rx = frame[0, 0]
        ry = frame[0, 1]
        rz = frame[0, 2]
    elif mode == 1:
        phi = _TWO_PI * uniform01(k, 0)
        c = math.cos(phi)
        s = math.sin(phi)
        rx = c * frame[1, 0] + s * frame[2, 0]
        ry = c * frame[1, 1] + s * frame[2, 1]
        rz = c * frame[1, 2] + s * frame[2, 2]
    else:
        ct = 2.0 * uniform01(k, 0) - 1.0
        phi = _TWO_PI * uniform01(k, 1)
        st = math.sqrt(max(0.0, 1.0 - ct * ct))
        rx = st * math.cos(phi)
        ry = st * math.sin(phi)
        rz = ct
    # 1. projections, bonds, unions inside each chunk; cross-chunk bonds flagged
    for c in nb.prange(nch):
        f0 = cb[c] * nx
        f1 = cb[c + 1] * nx
        for f in range(f0, f1):
            a = addr[f]
            sig[f] = Tf[a] * rx + Tf[a + LP] * ry + Tf[a + 2 * LP] * rz
            parent[f] = f
        for f in range(f0, f1):
            si = sig[f]
            for q in range(z):
                g = nbr[f, q]
                if g <= f:
                    continue
                inside = g < f1
                if inside:
                    sj = sig[g]
                else:
                    a = addr[g]
                    sj = Tf[a] * rx + Tf[a + LP] * ry + Tf[a + 2 * LP] * rz
                x = kk * si * sj
                on = False
                if x > 0.0:
                    # u < 1 - exp(-x); x - x^2/2 < 1 - exp(-x) < x settle most draws
                    u = uniform01(kb, f * z + q)
                    if u < x:
                        on = u < x * (1.0 - 0.5 * x) or u < -math.expm1(-x)
                if inside:
                    if on:
                        _union(parent, f, g)
                else:
                    act[f * z + q] = 1 if on else 0
        for f in range(f0, f1):  # flatten: parent[f] <= f, so its parent is already a root
            parent[f] = parent[parent[f]]
    # 2. join across chunk edges (serial, edge rows only)
    for c in range(nch):
        f0 = cb[c] * nx
        f1 = cb[c + 1] * nx
        for r in range(2):
            lo = f0 if r == 0 else max(f1 - nx, f0 + nx)
            if r == 1 and lo >= f1:
                break
            for f in range(lo, lo + nx):
                for q in range(z):
                    g = nbr[f, q]
                    if g > f and g >= f1 and act[f * z + q] != 0:
                        _union(parent, f, g)
    # 3. labels and cleared sums. parent[f] <= f always (see _union), so in ascending order a
    # parent inside the chunk already has its label; only pointers to earlier chunks are
    # followed (read-only) to the root.
    for c in nb.prange(nch):
        f0 = cb[c] * nx
        for f in range(f0, cb[c + 1] * nx):
            a = parent[f]
            if a >= f0:
                lab[f] = f if a == f else lab[a]
            else:
                while parent[a] != a:
                    a = parent[a]
                lab[f] = a
            csum[f] = 0.0
            asum[f] = 0.0
    # 4. cluster sums (serial, site order) and the flip of each cluster
    for f in range(n):
        r = lab[f]
        csum[r] += sig[f]
        asum[r] += abs(sig[f])
    br = b[0] * rx + b[1] * ry + b[2] * rz
    made = 0
    flipped = 0
    w2 = 0.0
    for f in range(n):
        if lab[f] == f:
            made += 1
            w2 += asum[f] * asum[f]
            de = 2.0 * br * csum[f]  # Zeeman change of the flip (mu_s T)
            p = 0.5 * (1.0 - math.tanh(0.5 * beta * de))  # heat bath: 1 / (1 + exp(beta dE))
            fl = uniform01(kf, f) < p
            flip[f] = 1 if fl else 0
            flipped += 1 if fl else 0
    # 5. reflect the flipped clusters (spins and their ghost copies)
    for c in nb.prange(nch):
        for f in range(cb[c] * nx, cb[c + 1] * nx):
            if flip[lab[f]] != 0:
                reflect_site(Tf, addr, gaddr, f, LP, 2.0 * sig[f], rx, ry, rz)
    stats[0] += made
    stats[1] += n
    stats[2] += flipped
    stats[3] += made * w2 / n


_sw_par = nb.njit(parallel=True, **_OPT)(_sw_move_py)
_sw_ser = nb.njit(**_OPT)(_sw_move_py)


def sw_move(parallel, *args):
    """One move (arguments of ``_sw_move_py``), threaded or not: the same result bit for bit."""
    (_sw_par if parallel else _sw_ser)(*args)


@nb.njit(**_OPT)
def _sw_mixed_serial(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta,
                     sigma, seed, stream, sweep0, n_steps, reflect, n_or, counts, buf, g, cnt, Tf,
                     addr, gaddr, nbr, frame, mode, cb, parent, lab, sig, csum, asum, flip, act,
                     stats):
    LP = T.shape[3]
    nx = T.shape[1]
    for t in range(n_steps):
        _sweeps_t_serial(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b,
                         beta, sigma, seed, stream, sweep0 + t, 1, reflect, n_or, counts, buf, g,
                         cnt)
        _sw_ser(Tf, addr, gaddr, LP, nbr, beta, jt, b, frame, mode, seed, stream, sweep0 + t, nx,
                cb, parent, lab, sig, csum, asum, flip, act, stats)


def sw_mixed_sweeps(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta,
                    sigma, seed, stream, sweep0, n_steps, reflect, n_or, counts, buf, g, cnt,
                    parallel, Tf, addr, gaddr, nbr, frame, mode, n_clusters, cb, parent, lab, sig,
                    csum, asum, flip, act, stats):
    """n_steps steps of: one Metropolis sweep (index sweep0 + t, arguments as
    :func:`thinfilm._kernels.banded.banded_sweeps`), then one Swendsen-Wang move (threaded
    when parallel). Same signature as ``wolff.mixed_sweeps``; n_clusters is not used (one move
    covers every site)."""
    head = (T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta, sigma,
            seed, stream)
    tail = (cb, parent, lab, sig, csum, asum, flip, act, stats)
    if not parallel:
        _sw_mixed_serial(*head, sweep0, n_steps, reflect, n_or, counts, buf, g, cnt, Tf, addr,
                         gaddr, nbr, frame, mode, *tail)
        return
    LP = T.shape[3]
    for t in range(n_steps):
        _sweeps_t(*head, sweep0 + t, 1, reflect, n_or, counts, buf, g, cnt)
        _sw_par(Tf, addr, gaddr, LP, nbr, beta, jt, b, frame, mode, seed, stream, sweep0 + t,
                T.shape[1], *tail)


def sw_mixed_samples(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta,
                     sigma, seed, stream, sweep0, n_samples, sample_every, reflect, n_or, counts,
                     buf, g, cnt, rows, out, parallel, Tf, addr, gaddr, nbr, frame, mode,
                     n_clusters, cb, parent, lab, sig, csum, asum, flip, act, stats):
    """n_samples times: sample_every steps of :func:`sw_mixed_sweeps`, then the totals (mx, my,
    mz, energy in mu_s T) into out (n_samples, 4). Same signature as ``wolff.mixed_samples``."""
    head = (T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta, sigma,
            seed, stream)
    tail = (Tf, addr, gaddr, nbr, frame, mode, n_clusters, cb, parent, lab, sig, csum, asum,
            flip, act, stats)
    for s in range(n_samples):
        sw_mixed_sweeps(*head, sweep0 + s * sample_every, sample_every, reflect, n_or, counts,
                        buf, g, cnt, parallel, *tail)
        if parallel:
            _row_sums_par(T, zc, bands, code, periodic, jt, kt, axis, b, rows)
        else:
            _row_sums_serial(T, zc, bands, code, periodic, jt, kt, axis, b, rows)
        row_totals(rows, out, s)
