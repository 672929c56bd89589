"""Wolff single-cluster moves of the embedded Ising variables, on the banded spins of the
Metropolis kernel, and steps that combine them with Metropolis sweeps.

Move (Wolff, Phys. Rev. Lett. 62, 361 (1989), embedded-spin form for vector spins): pick a unit
direction r and a seed site uniformly; with sigma_i = S_i.r, grow a cluster through the flat
neighbour table, adding a neighbour j of a cluster site i with probability

    p_ij = 1 - exp(min(0, -2 beta jt sigma_i sigma_j))          (each table entry one bond)

(beta jt = J/(kB T)); then flip the cluster, S -> S - 2 (S.r) r. The reflection keeps
-K (S.n)^2 when r = n or r is perpendicular to n (any r if K = 0: the caller chooses r
accordingly). The Zeeman energy change of the flip, dE = 2 mu_s (B.r) sum_C sigma_i, is
accepted by Metropolis, min(1, exp(-dE/kBT)): with the cluster proposal this gives detailed
balance for the whole energy (B = 0: always accepted).

Directions (mode): 0 r = n; 1 r uniform in the plane perpendicular to n (frame rows 1, 2);
2 r uniform on the sphere.

Spins are read and written in the banded array T through a flat view Tf: component c of site
f = i nx + j is Tf[addr[f] + c LP], and its ghost copy in the neighbouring band (band-edge rows
only) at Tf[gaddr[f] + c LP] (gaddr -1: none); both are written, so Metropolis sweeps and row
sums see the flipped spins.

Random numbers: step t (the sweep index of the Metropolis sweep before it) uses the key
hash64(key(seed, stream, t), CLUSTER_COUNTER) and counters 0, 1, 2, ... in the order the
serial algorithm draws them, so runs are reproducible from the seed.

stats (float64, 4): clusters made, sum of cluster sizes, flips accepted, and the sum over
clusters of w^2/|C| with w = sum_C abs(sigma_i): N times its mean estimates <(r.M)^2>/N at
B.r = 0 (improved estimator), M the total spin.
"""

import math

import numba as nb
import numpy as np

from thinfilm.engines._kernels.banded import _row_sums_par, _row_sums_serial, row_totals
from thinfilm.engines._kernels.metropolis import _sweeps_t, _sweeps_t_serial
from thinfilm.engines._kernels.rng import hash64, key, uniform01

__all__ = ["banded_addresses", "make_cluster_work", "wolff_clusters", "mixed_sweeps",
           "mixed_samples", "CLUSTER_COUNTER", "N_STATS"]

_OPT = dict(cache=True, error_model="numpy", boundscheck=False)
CLUSTER_COUNTER = np.uint64(0xC105_7E40_0000_0000)  # far above any Metropolis counter
N_STATS = 4
_TWO_PI = 2.0 * math.pi


@nb.njit(cache=True)
def banded_addresses(ny, nx, bands, LP, periodic):
    """Flat addresses (addr, gaddr), int64 (ny nx,), of component 0 of each site in T.ravel()
    and of its ghost copy (-1: none); T has shape (n_bands, nx, 3, LP)."""
    nbands = bands.shape[0] - 1
    addr = np.empty(ny * nx, dtype=np.int64)
    gaddr = -np.ones(ny * nx, dtype=np.int64)
    band_stride = nx * 3 * LP
    for b in range(nbands):
        lo = bands[b]
        hi = bands[b + 1]
        bp = (b - 1) % nbands
        bn = (b + 1) % nbands
        lp = bands[bp + 1] - bands[bp]
        for i in range(lo, hi):
            P = i - lo + 1
            for j in range(nx):
                f = i * nx + j
                addr[f] = b * band_stride + j * 3 * LP + P
                if i == lo and (periodic or b > 0):  # ghost P = lp + 1 of the previous band
                    gaddr[f] = bp * band_stride + j * 3 * LP + lp + 1
                elif i == hi - 1 and (periodic or b < nbands - 1):  # ghost P = 0 of the next
                    gaddr[f] = bn * band_stride + j * 3 * LP
    return addr, gaddr


def make_cluster_work(T, bands, periodic, neighbours, axis, mode):
    """Cluster work tuple (Tf, addr, gaddr, nbr, frame, mode, queue, sig, mark) for the banded
    spins T (n_bands, nx, 3, LP): the flat view and addresses, the neighbour table (n_sites, z),
    the frame (n, e1, e2) of the unit axis n and the scratch arrays (see wolff_clusters)."""
    nx = T.shape[1]
    ny = int(bands[-1])
    addr, gaddr = banded_addresses(ny, nx, bands, T.shape[3], periodic)
    n = np.asarray(axis, dtype=np.float64)
    e1 = np.cross(n, [1.0, 0.0, 0.0] if abs(n[0]) < 0.9 else [0.0, 1.0, 0.0])
    e1 /= np.linalg.norm(e1)
    frame = np.ascontiguousarray([n, e1, np.cross(n, e1)], dtype=np.float64)
    n_sites = ny * nx
    return (T.reshape(-1), addr, gaddr, np.ascontiguousarray(neighbours, dtype=np.int64), frame,
            int(mode), np.empty(n_sites, dtype=np.int64), np.empty(n_sites),
            np.zeros(n_sites, dtype=np.uint8))


@nb.njit(inline="always", **_OPT)
def reflect_site(Tf, addr, gaddr, f, LP, w, rx, ry, rz):
    """Reflect site f (and its ghost copy, if any) by S -= w r, with w = 2 (S.r)."""
    a = addr[f]
    Tf[a] -= w * rx
    Tf[a + LP] -= w * ry
    Tf[a + 2 * LP] -= w * rz
    a = gaddr[f]
    if a >= 0:
        Tf[a] -= w * rx
        Tf[a + LP] -= w * ry
        Tf[a + 2 * LP] -= w * rz


@nb.njit(inline="always", **_OPT)
def _proj(Tf, a, LP, rx, ry, rz):
    return Tf[a] * rx + Tf[a + LP] * ry + Tf[a + 2 * LP] * rz


@nb.njit(**_OPT)
def wolff_clusters(Tf, addr, gaddr, LP, nbr, beta, jt, b, frame, mode, seed, stream, sweep,
                   n_clusters, queue, sig, mark, stats):
    """Make n_clusters Wolff cluster moves, random numbers keyed by (seed, stream, sweep)
    (see module doc).

    queue (N,) int64, sig (N,) float64, mark (N,) uint8 scratch (mark all zero on entry and
    on return). frame (3, 3): rows n, e1, e2 (orthonormal). b (3,) field (T); beta mu_s/(kB T)
    (1/T); jt J/mu_s (T).
    """
    n = addr.shape[0]
    z = nbr.shape[1]
    kk = 2.0 * beta * jt
    k = hash64(key(seed, stream, sweep), CLUSTER_COUNTER)
    ctr = 0
    for _ in range(n_clusters):
        if mode == 0:
            rx = frame[0, 0]
            ry = frame[0, 1]
            rz = frame[0, 2]
        elif mode == 1:
            phi = _TWO_PI * uniform01(k, ctr)
            ctr += 1
            c = math.cos(phi)
            s = math.sin(phi)
            rx = c * frame[1, 0] + s * frame[2, 0]
            ry = c * frame[1, 1] + s * frame[2, 1]
            rz = c * frame[1, 2] + s * frame[2, 2]
        else:
            ct = 2.0 * uniform01(k, ctr) - 1.0
            phi = _TWO_PI * uniform01(k, ctr + 1)
            ctr += 2
            st = math.sqrt(max(0.0, 1.0 - ct * ct))
            rx = st * math.cos(phi)
            ry = st * math.sin(phi)
            rz = ct
        f0 = min(int(uniform01(k, ctr) * n), n - 1)
        ctr += 1
        queue[0] = f0
        sig[0] = _proj(Tf, addr[f0], LP, rx, ry, rz)
        mark[f0] = 1
        size = 1
        head = 0
        ssum = 0.0
        wsum = 0.0
        while head < size:
            f = queue[head]
            si = sig[head]
            head += 1
            ssum += si
            wsum += abs(si)
            for q in range(z):
                g = nbr[f, q]
                if g < 0 or mark[g] != 0:
                    continue
                sj = _proj(Tf, addr[g], LP, rx, ry, rz)
                x = kk * si * sj
                if x > 0.0:
                    u = uniform01(k, ctr)
                    ctr += 1
                    if u < -math.expm1(-x):  # p = 1 - exp(-x)
                        mark[g] = 1
                        queue[size] = g
                        sig[size] = sj
                        size += 1
        de = 2.0 * (b[0] * rx + b[1] * ry + b[2] * rz) * ssum  # Zeeman change (mu_s T)
        acc = True
        if de > 0.0:
            acc = uniform01(k, ctr) < math.exp(-beta * de)
            ctr += 1
        for m in range(size):
            f = queue[m]
            mark[f] = 0
            if acc:
                reflect_site(Tf, addr, gaddr, f, LP, 2.0 * sig[m], rx, ry, rz)
        stats[0] += 1.0
        stats[1] += size
        stats[2] += 1.0 if acc else 0.0
        stats[3] += wsum * wsum / size


@nb.njit(**_OPT)
def _mixed_serial(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta,
                  sigma, seed, stream, sweep0, n_steps, reflect, n_or, counts, buf, g, cnt, Tf,
                  addr, gaddr, nbr, frame, mode, n_clusters, queue, sig, mark, stats):
    LP = T.shape[3]
    for t in range(n_steps):
        _sweeps_t_serial(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b,
                         beta, sigma, seed, stream, sweep0 + t, 1, reflect, n_or, counts, buf, g,
                         cnt)
        wolff_clusters(Tf, addr, gaddr, LP, nbr, beta, jt, b, frame, mode, seed, stream,
                       sweep0 + t, n_clusters, queue, sig, mark, stats)


def mixed_sweeps(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta,
                 sigma, seed, stream, sweep0, n_steps, reflect, n_or, counts, buf, g, cnt,
                 parallel, Tf, addr, gaddr, nbr, frame, mode, n_clusters, queue, sig, mark,
                 stats):
    """n_steps steps of: one Metropolis sweep (index sweep0 + t, arguments as
    :func:`thinfilm._kernels.banded.banded_sweeps`), then n_clusters Wolff clusters (serial).
    The threaded path loops in Python (see :mod:`thinfilm._kernels.banded`, Dispatch)."""
    head = (T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta, sigma,
            seed, stream)
    if not parallel:
        _mixed_serial(*head, sweep0, n_steps, reflect, n_or, counts, buf, g, cnt, Tf, addr,
                      gaddr, nbr, frame, mode, n_clusters, queue, sig, mark, stats)
        return
    LP = T.shape[3]
    for t in range(n_steps):
        _sweeps_t(*head, sweep0 + t, 1, reflect, n_or, counts, buf, g, cnt)
        wolff_clusters(Tf, addr, gaddr, LP, nbr, beta, jt, b, frame, mode, seed, stream,
                       sweep0 + t, n_clusters, queue, sig, mark, stats)


@nb.njit(**_OPT)
def _mixed_samples_serial(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b,
                          beta, sigma, seed, stream, sweep0, n_samples, sample_every, reflect,
                          n_or, counts, buf, g, cnt, rows, out, Tf, addr, gaddr, nbr, frame,
                          mode, n_clusters, queue, sig, mark, stats):
    for s in range(n_samples):
        _mixed_serial(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta,
                      sigma, seed, stream, sweep0 + s * sample_every, sample_every, reflect,
                      n_or, counts, buf, g, cnt, Tf, addr, gaddr, nbr, frame, mode, n_clusters,
                      queue, sig, mark, stats)
        _row_sums_serial(T, zc, bands, code, periodic, jt, kt, axis, b, rows)
        row_totals(rows, out, s)


def mixed_samples(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta,
                  sigma, seed, stream, sweep0, n_samples, sample_every, reflect, n_or, counts,
                  buf, g, cnt, rows, out, parallel, Tf, addr, gaddr, nbr, frame, mode,
                  n_clusters, queue, sig, mark, stats):
    """n_samples times: sample_every steps of :func:`mixed_sweeps`, then the totals (mx, my,
    mz, energy in mu_s T) into out (n_samples, 4)."""
    head = (T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta, sigma,
            seed, stream)
    tail = (Tf, addr, gaddr, nbr, frame, mode, n_clusters, queue, sig, mark, stats)
    if not parallel:
        _mixed_samples_serial(*head, sweep0, n_samples, sample_every, reflect, n_or, counts, buf,
                              g, cnt, rows, out, *tail)
        return
    for s in range(n_samples):
        mixed_sweeps(*head, sweep0 + s * sample_every, sample_every, reflect, n_or, counts, buf,
                     g, cnt, True, *tail)
        _row_sums_par(T, zc, bands, code, periodic, jt, kt, axis, b, rows)
        row_totals(rows, out, s)
