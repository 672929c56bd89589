"""Metropolis sweeps (Gaussian step, axis reflection, over-relaxation) on site colour classes.

Site colouring. On all three lattices a site couples only to sites in its own row and in rows
i - 1 and i + 1 (see :mod:`thinfilm.lattice`). :func:`site_colouring` splits the sites into
classes with no bond inside a class, each class made of *blocks*: one row i, the columns
j0, j0 + m, ..., (count sites, stride m). The sites of one class are updated independently
(in parallel over blocks, vectorised inside a block); classes are swept one after the other,
so every site is visited once per sweep in a fixed order.

* square and honeycomb (bipartite; open edges, or periodic with nx and ny even): checkerboard,
  class p holds the sites with (i + j) % 2 == p, stride 2. On the honeycomb brick wall every
  site of one block then has its vertical bond on the same side.
* triangular (open edges, or periodic with nx % 3 == 0): 3 classes,
  c = (j - i - floor(i/2)) mod 3, stride 3. The six neighbour offsets change c by +-1 or +-2,
  and a shift by ny rows (ny even) changes it by -3 ny/2 = 0 mod 3.
* otherwise (periodic square with an odd side, periodic triangular with nx % 3 != 0): the row
  classes of :func:`row_colouring` times column classes (even columns, odd columns, and for
  odd nx the last column alone, which the wrap bonds to column 0), stride 2.

Moves at every visited site, all with symmetric proposals accepted by the Metropolis rule
min(1, exp(-dE/kBT)), tested as log(u) <= -dE/kBT with u uniform in (0, 1]:

1. Gaussian step S' = (S + sigma g)/abs(S + sigma g), g a 3D standard normal vector.
2. Axis reflection S' = S - 2 (S.n) n (optional): flips the component along the anisotropy axis
   with the anisotropy energy unchanged, i.e. the S -> -S move of the Ising limit.
3. Over-relaxation, n_or times: reflection of S about the local exchange + Zeeman field f,
   S' = 2 (S.f) f/abs(f)^2 - S. It keeps the exchange + Zeeman energy; the anisotropy change
   is accepted by Metropolis.

Inside a block the kernel gathers the spins and local fields of its sites into contiguous
buffers and makes each move as one branch-free loop (candidate, energy change and acceptance
computed for every site, the outcome selected), so the loops compile to SIMD code. The spins
live in padded structure-of-arrays rows with ghost columns during the sweeps (see
:mod:`.field`).

Random numbers: counter-based, keyed by (seed, stream, sweep) (``rng.key``). With N sites and
v the visit index of a site (its rank in the colouring order, blocks numbered in class order),
a block of `count` sites starting at visit index v0 takes its 3 count Gaussian numbers from
``normals_row`` at counters 2 v0 + p (component c of its q-th site is normal c count + q), and
the uniform of move slot u (0 Gaussian, 1 reflection, 2 + r over-relaxation r) of a site from
counter (2 + u) N + v. Results are therefore bitwise independent of the thread count, of the
chunking of blocks and of the order of blocks inside a class.

Energies: the local energy of S at a site with neighbour-spin sum h is, in units of mu_s * T,
e(S) = -(jt h + b).S - (kt/2) (S.n)^2 with jt = J/mu_s and kt = 2K/mu_s (tesla). The kernels
take beta = mu_s/(kB T) in 1/T, so beta * de is the energy change in units of kB T.
"""

import math

import numba as nb
import numpy as np

from .field import load_row, neighbour_rows, row_pad
from .rng import _bits_f64, fast_log, hash64, key, normals_row

__all__ = [
    "row_colouring",
    "site_colouring",
    "colour_table",
    "neighbour_sum",
    "site_energy_change",
    "metropolis_sweeps",
    "metropolis_sweeps_serial",
    "row_sums",
    "row_sums_serial",
    "metropolis_samples",
]

N_COUNTS = 3  # accepted: gaussian, reflection, over-relaxation
_OPT = dict(cache=True, error_model="numpy", boundscheck=False)
_CHUNKS = 32  # blocks of one class are split into at most this many chunks (scratch sets)
_ONE_BITS = np.uint64(0x3FF0000000000000)
_S12 = np.uint64(12)
# block table columns
B_ROW, B_J0, B_STRIDE, B_COUNT, B_VISIT = 0, 1, 2, 3, 4


def row_colouring(ny, periodic):
    """Row classes: no two rows of one class are adjacent.

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

    Class 0: even rows, class 1: odd rows; with periodic edges and an odd number of rows the
    last row (even) is adjacent to row 0 through the wrap and forms a class 2 of its own.
    """
    classes = [list(range(0, ny, 2)), list(range(1, ny, 2))]
    if periodic and ny % 2 == 1 and ny > 1:
        classes[0].remove(ny - 1)
        classes.append([ny - 1])
    classes = [c for c in classes if c]
    order = np.array([r for c in classes for r in c], dtype=np.int64)
    bounds = np.cumsum([0] + [len(c) for c in classes]).astype(np.int64)
    return order, bounds


@nb.njit(cache=True)
def colour_table(code, nx, ny, periodic, order, bounds):
    """Block table of the site colouring (see the module docstring).

    order, bounds : row classes from :func:`row_colouring` (used by the fallback colouring).

    Returns
    -------
    cbounds : int64 (n_classes + 1,)
        Blocks blocks[cbounds[c]:cbounds[c + 1]] form class c.
    blocks : int64 (n_blocks, 5)
        Per block: row, first column j0, stride, count (>= 1), visit index of its first site.
    """
    mode = 2  # 0 checkerboard, 1 three colours, 2 rows x columns
    if code != 1 and (not periodic or (nx % 2 == 0 and ny % 2 == 0)):
        mode = 0
    elif code == 1 and (not periodic or nx % 3 == 0):
        mode = 1
    if mode == 0:
        n_cls = 2
    elif mode == 1:
        n_cls = 3
    else:
        n_cls = (bounds.shape[0] - 1) * (3 if nx % 2 == 1 and periodic else 2)
    blocks = np.zeros((n_cls * ny, 5), dtype=np.int64)
    cbounds = np.zeros(n_cls + 1, dtype=np.int64)
    nb_ = 0
    n_out = 0
    visit = 0
    for c in range(n_cls):
        if mode == 0 or mode == 1:
            m = 2 if mode == 0 else 3
            for i in range(ny):
                if mode == 0:
                    j0 = (i + c) % 2
                else:
                    j0 = (c + i + i // 2) % 3
                cnt = (nx - j0 + m - 1) // m
                if cnt > 0:
                    blocks[nb_, 0] = i
                    blocks[nb_, 1] = j0
                    blocks[nb_, 2] = m
                    blocks[nb_, 3] = cnt
                    blocks[nb_, 4] = visit
                    visit += cnt
                    nb_ += 1
        else:
            n_col = 3 if nx % 2 == 1 and periodic else 2
            rc = c // n_col
            cc = c % n_col
            for r in range(bounds[rc], bounds[rc + 1]):
                i = order[r]
                if cc == 2:
                    j0 = nx - 1
                    m = 1
                    cnt = 1
                else:
                    j0 = cc
                    m = 2
                    jend = nx - 1 if n_col == 3 else nx
                    cnt = (jend - j0 + 1) // 2
                if cnt > 0:
                    blocks[nb_, 0] = i
                    blocks[nb_, 1] = j0
                    blocks[nb_, 2] = m
                    blocks[nb_, 3] = cnt
                    blocks[nb_, 4] = visit
                    visit += cnt
                    nb_ += 1
        if nb_ > cbounds[n_out]:  # drop empty classes (tiny lattices)
            n_out += 1
            cbounds[n_out] = nb_
    return cbounds[:n_out + 1], blocks[:nb_]


def site_colouring(code, nx, ny, periodic):
    """(cbounds, blocks) of :func:`colour_table` for a lattice code and size."""
    order, bounds = row_colouring(ny, periodic)
    return colour_table(code, nx, ny, periodic, order, bounds)


def site_classes(code, nx, ny, periodic):
    """Class of every site as an (ny, nx) int array (for tests and pictures)."""
    cb, bl = site_colouring(code, nx, ny, periodic)
    cls = -np.ones((ny, nx), dtype=np.int64)
    for c in range(len(cb) - 1):
        for i, j0, m, cnt, _ in bl[cb[c]:cb[c + 1]]:
            cls[i, j0:j0 + m * cnt:m] = c
    return cls


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


# ---------------------------------------------------------------- block update

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


@nb.njit(inline="always", **_OPT)
def _gather(code, m, t0, cna, sh, cur, rd, ru, jt, bx, by, bz, buf):
    """Spins and local fields f = jt h + b of the sites t0 + m q (q < cna) into buf[0:6]."""
    cx = cur[0]
    cy = cur[1]
    cz = cur[2]
    ux = ru[0]
    uy = ru[1]
    uz = ru[2]
    dx = rd[0]
    dy = rd[1]
    dz = rd[2]
    sx = buf[0]
    sy = buf[1]
    sz = buf[2]
    fx = buf[3]
    fy = buf[4]
    fz = buf[5]
    if code == 0:
        for q in range(cna):
            t = t0 + m * q
            sx[q] = cx[t]
            sy[q] = cy[t]
            sz[q] = cz[t]
            fx[q] = jt * (cx[t - 1] + cx[t + 1] + ux[t] + dx[t]) + bx
            fy[q] = jt * (cy[t - 1] + cy[t + 1] + uy[t] + dy[t]) + by
            fz[q] = jt * (cz[t - 1] + cz[t + 1] + uz[t] + dz[t]) + bz
    elif code == 1:
        for q in range(cna):
            t = t0 + m * q
            u = t + sh
            sx[q] = cx[t]
            sy[q] = cy[t]
            sz[q] = cz[t]
            fx[q] = jt * (cx[t - 1] + cx[t + 1] + ux[t] + dx[t] + ux[u] + dx[u]) + bx
            fy[q] = jt * (cy[t - 1] + cy[t + 1] + uy[t] + dy[t] + uy[u] + dy[u]) + by
            fz[q] = jt * (cz[t - 1] + cz[t + 1] + uz[t] + dz[t] + uz[u] + dz[u]) + bz
    else:  # honeycomb: ru is the one vertical neighbour row of the whole block
        for q in range(cna):
            t = t0 + m * q
            sx[q] = cx[t]
            sy[q] = cy[t]
            sz[q] = cz[t]
            fx[q] = jt * (cx[t - 1] + cx[t + 1] + ux[t]) + bx
            fy[q] = jt * (cy[t - 1] + cy[t + 1] + uy[t]) + by
            fz[q] = jt * (cz[t - 1] + cz[t + 1] + uz[t]) + bz


@nb.njit(inline="always", **_OPT)
def _scatter(m, t0, cna, cur, buf):
    cx = cur[0]
    cy = cur[1]
    cz = cur[2]
    sx = buf[0]
    sy = buf[1]
    sz = buf[2]
    for q in range(cna):
        t = t0 + m * q
        cx[t] = sx[q]
        cy[t] = sy[q]
        cz[t] = sz[q]


@nb.njit(**_OPT)
def _moves(na, k, v0, nsites, ax, ay, az, half_kt, beta, sigma, reflect, n_or, buf, g):
    """The three moves for the na sites in buf (rows 0-2 spin, 3-5 local field); returns the
    accepted counts (gaussian, reflection, over-relaxation)."""
    sx_ = buf[0]
    sy_ = buf[1]
    sz_ = buf[2]
    fx_ = buf[3]
    fy_ = buf[4]
    fz_ = buf[5]
    gv = g[:3 * na]
    normals_row(k, 2 * v0, sigma, gv)
    # 1. Gaussian step
    c0 = np.uint64(2 * nsites + v0)
    n_gauss = 0
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
        n_gauss += 1 if acc else 0
    # 2. reflection through the plane normal to the axis (anisotropy unchanged)
    n_refl = 0
    if reflect:
        c0 = np.uint64(3 * nsites + v0)
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
            n_refl += 1 if acc else 0
    # 3. over-relaxation about the exchange + Zeeman field
    n_over = 0
    for r in range(n_or):
        c0 = np.uint64((4 + r) * nsites + v0)
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
            n_over += 1 if acc else 0
    return n_gauss, n_refl, n_over


@nb.njit(inline="always", **_OPT)
def _block_rows(S, zero, i, j0, code, periodic):
    """(row, row below, row above, triangular shift) buffers of a block of row i; a missing
    row is the zero buffer; on the honeycomb the "above" buffer is the block's one vertical
    neighbour row."""
    dn, up, has_dn, has_up = neighbour_rows(i, S.shape[0], periodic)
    rd = S[dn] if has_dn else zero
    ru = S[up] if has_up else zero
    sh = 0
    if code == 1:
        sh = -1 if i % 2 == 0 else 1
    elif code == 2 and (i + j0) % 2 == 1:
        ru = rd  # (i + j) odd on the whole block: the vertical bond goes down
    return S[i], rd, ru, sh


@nb.njit(**_OPT)
def _block(S, zero, i, j0, m, cnt, v0, nsites, nx, code, periodic, jt, kt, ax, ay, az, bx, by,
           bz, beta, sigma, k, reflect, n_or, counts, buf, g):
    """Update the cnt sites (i, j0 + m q) of one block in the SoA spins S (ny, 3, L)."""
    cur, rd, ru, sh = _block_rows(S, zero, i, j0, code, periodic)
    t0 = j0 + 1
    if m == 2:
        _gather(code, 2, t0, cnt, sh, cur, rd, ru, jt, bx, by, bz, buf)
    elif m == 3:
        _gather(code, 3, t0, cnt, sh, cur, rd, ru, jt, bx, by, bz, buf)
    else:
        _gather(code, m, t0, cnt, sh, cur, rd, ru, jt, bx, by, bz, buf)
    n1, n2, n3 = _moves(cnt, k, v0, nsites, ax, ay, az, 0.5 * kt, beta, sigma, reflect, n_or,
                        buf, g)
    if m == 2:
        _scatter(2, t0, cnt, cur, buf)
    elif m == 3:
        _scatter(3, t0, cnt, cur, buf)
    else:
        _scatter(m, t0, cnt, cur, buf)
    if periodic:  # refresh the ghost copies of updated edge sites
        if j0 == 0:
            for c in range(3):
                cur[c, nx + 1] = cur[c, 1]
        if j0 + m * (cnt - 1) == nx - 1:
            for c in range(3):
                cur[c, 0] = cur[c, nx]
    counts[i, 0] += n1
    counts[i, 1] += n2
    counts[i, 2] += n3





@nb.njit(**_OPT)
def kernel_energy_changes(s, order, bounds, code, periodic, jt, kt, axis, b, new):
    """Energy change (mu_s T) of every site (i, j) of s changing alone to new[i, j], computed
    through the sweep kernel's own path (SoA rows, ghosts, block gather, move energy); s is not
    modified. For tests against a full reference energy."""
    ny, nx = s.shape[0], s.shape[1]
    cbounds, blocks = colour_table(code, nx, ny, periodic, order, bounds)
    S, zero, buf, g = _work(s, blocks)
    _convert(s, S, periodic, True, False)
    out = np.empty((ny, nx))
    bb = buf[0]
    for e in range(blocks.shape[0]):
        i, j0, m, cnt = blocks[e, 0], blocks[e, 1], blocks[e, 2], blocks[e, 3]
        cur, rd, ru, sh = _block_rows(S, zero, i, j0, code, periodic)
        _gather(code, m, j0 + 1, cnt, sh, cur, rd, ru, jt, b[0], b[1], b[2], bb)
        for q in range(cnt):
            j = j0 + m * q
            out[i, j] = _de(bb[0, q], bb[1, q], bb[2, q], new[i, j, 0], new[i, j, 1],
                            new[i, j, 2], bb[3, q], bb[4, q], bb[5, q], axis[0], axis[1],
                            axis[2], 0.5 * kt)
    return out


@nb.njit(**_OPT)
def _to_soa(s, S, periodic, lo, hi):
    for i in range(lo, hi):
        load_row(s[i], S[i], periodic)


@nb.njit(**_OPT)
def _from_soa(S, s, lo, hi):
    nx = s.shape[1]
    for i in range(lo, hi):
        f = s[i].reshape(3 * nx)
        bx = S[i, 0]
        by = S[i, 1]
        bz = S[i, 2]
        for j in range(nx):
            f[3 * j] = bx[j + 1]
            f[3 * j + 1] = by[j + 1]
            f[3 * j + 2] = bz[j + 1]


@nb.njit(**_OPT)
def _work(s, blocks):
    """SoA spins (ny, 3, L), a zero row (3, L) and per-chunk scratch (buf, g)."""
    ny, nx = s.shape[0], s.shape[1]
    L = row_pad(nx)
    w = 1
    for b in range(blocks.shape[0]):
        w = max(w, blocks[b, B_COUNT])
    w = (w + 7) // 8 * 8
    return (np.empty((ny, 3, L)), np.zeros((3, L)), np.empty((_CHUNKS, 6, w)),
            np.empty((_CHUNKS, 3 * w + 8)))


@nb.njit(inline="always", **_OPT)
def _chunk(S, zero, cbounds, blocks, c, ch, nch, nsites, nx, code, periodic, jt, kt, ax, ay,
           az, bx, by, bz, beta, sigma, k, reflect, n_or, counts, buf, g):
    a = cbounds[c]
    n = cbounds[c + 1] - a
    for e in range(a + ch * n // nch, a + (ch + 1) * n // nch):
        _block(S, zero, blocks[e, 0], blocks[e, 1], blocks[e, 2], blocks[e, 3], blocks[e, 4],
               nsites, nx, code, periodic, jt, kt, ax, ay, az, bx, by, bz, beta, sigma, k,
               reflect, n_or, counts, buf[ch], g[ch])


@nb.njit(parallel=True, **_OPT)
def _sweeps_soa(S, zero, cbounds, blocks, nx, code, periodic, jt, kt, axis, b, beta, sigma,
                seed, stream, sweep0, n_sweeps, reflect, n_or, counts, buf, g):
    """n_sweeps sweeps of the SoA spins; the blocks of one class run in parallel chunks."""
    nsites = S.shape[0] * nx
    ax, ay, az = axis[0], axis[1], axis[2]
    bx, by, bz = b[0], b[1], b[2]
    for t in range(n_sweeps):
        k = key(seed, stream, sweep0 + t)
        for c in range(cbounds.shape[0] - 1):
            nch = min(_CHUNKS, cbounds[c + 1] - cbounds[c])
            for ch in nb.prange(nch):
                _chunk(S, zero, cbounds, blocks, c, ch, nch, nsites, nx, code, periodic, jt, kt,
                       ax, ay, az, bx, by, bz, beta, sigma, k, reflect, n_or, counts, buf, g)


@nb.njit(**_OPT)
def _sweeps_soa_serial(S, zero, cbounds, blocks, nx, code, periodic, jt, kt, axis, b, beta,
                       sigma, seed, stream, sweep0, n_sweeps, reflect, n_or, counts, buf, g):
    """Single-thread twin of :func:`_sweeps_soa` (same chunks, same results bit for bit)."""
    nsites = S.shape[0] * nx
    ax, ay, az = axis[0], axis[1], axis[2]
    bx, by, bz = b[0], b[1], b[2]
    for t in range(n_sweeps):
        k = key(seed, stream, sweep0 + t)
        for c in range(cbounds.shape[0] - 1):
            nch = min(_CHUNKS, cbounds[c + 1] - cbounds[c])
            for ch in range(nch):
                _chunk(S, zero, cbounds, blocks, c, ch, nch, nsites, nx, code, periodic, jt, kt,
                       ax, ay, az, bx, by, bz, beta, sigma, k, reflect, n_or, counts, buf, g)


@nb.njit(parallel=True, **_OPT)
def _convert_par(s, S, periodic, to_soa):
    ny = s.shape[0]
    nch = min(_CHUNKS, ny)
    for ch in nb.prange(nch):
        if to_soa:
            _to_soa(s, S, periodic, ch * ny // nch, (ch + 1) * ny // nch)
        else:
            _from_soa(S, s, ch * ny // nch, (ch + 1) * ny // nch)


@nb.njit(**_OPT)
def _convert(s, S, periodic, to_soa, parallel):
    if parallel:
        _convert_par(s, S, periodic, to_soa)
    elif to_soa:
        _to_soa(s, S, periodic, 0, s.shape[0])
    else:
        _from_soa(S, s, 0, s.shape[0])


@nb.njit(**_OPT)
def _sweeps(s, order, bounds, code, periodic, jt, kt, axis, b, beta, sigma, seed, stream,
            sweep0, n_sweeps, reflect, n_or, counts, parallel):
    ny, nx = s.shape[0], s.shape[1]
    cbounds, blocks = colour_table(code, nx, ny, periodic, order, bounds)
    S, zero, buf, g = _work(s, blocks)
    _convert(s, S, periodic, True, parallel)
    if parallel:
        _sweeps_soa(S, zero, cbounds, blocks, nx, code, periodic, jt, kt, axis, b, beta, sigma,
                    seed, stream, sweep0, n_sweeps, reflect, n_or, counts, buf, g)
    else:
        _sweeps_soa_serial(S, zero, cbounds, blocks, nx, code, periodic, jt, kt, axis, b, beta,
                           sigma, seed, stream, sweep0, n_sweeps, reflect, n_or, counts, buf, g)
    _convert(s, S, periodic, False, parallel)


@nb.njit(**_OPT)
def metropolis_sweeps(s, order, bounds, code, periodic, jt, kt, axis, b, beta, sigma, seed,
                      stream, sweep0, n_sweeps, reflect, n_or, counts):
    """Advance s (ny, nx, 3) in place by n_sweeps Metropolis sweeps (threaded).

    Parameters
    ----------
    order, bounds : int64 row classes from :func:`row_colouring` (used when the lattice size
        does not allow the checkerboard or three-colour classes; see :func:`colour_table`).
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
    _sweeps(s, order, bounds, code, periodic, jt, kt, axis, b, beta, sigma, seed, stream,
            sweep0, n_sweeps, reflect, n_or, counts, True)


@nb.njit(**_OPT)
def metropolis_sweeps_serial(s, order, bounds, code, periodic, jt, kt, axis, b, beta, sigma,
                             seed, stream, sweep0, n_sweeps, reflect, n_or, counts):
    """Single-thread twin of :func:`metropolis_sweeps` (same results bit for bit).

    Cheaper for small lattices, where waking threads several times per sweep costs more than
    the work.
    """
    _sweeps(s, order, bounds, code, periodic, jt, kt, axis, b, beta, sigma, seed, stream,
            sweep0, n_sweeps, reflect, n_or, counts, False)


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


@nb.njit(**_OPT)
def metropolis_samples(s, order, bounds, code, periodic, jt, kt, axis, b, beta, sigma, seed,
                       stream, sweep0, n_samples, sample_every, reflect, n_or, counts, rows,
                       out, parallel):
    """n_samples times: sample_every sweeps, then the totals (mx, my, mz, energy) into out.

    out : (n_samples, 4) float64; energy in units of mu_s * T (multiply by mu_s for J).
    rows : (ny, 4) scratch. parallel : use the threaded sweep and sums (same results).
    Other arguments as :func:`metropolis_sweeps`. The SoA work arrays are made once.
    """
    ny, nx = s.shape[0], s.shape[1]
    cbounds, blocks = colour_table(code, nx, ny, periodic, order, bounds)
    S, zero, buf, g = _work(s, blocks)
    _convert(s, S, periodic, True, parallel)
    for k in range(n_samples):
        sw = sweep0 + k * sample_every
        if parallel:
            _sweeps_soa(S, zero, cbounds, blocks, nx, code, periodic, jt, kt, axis, b, beta,
                        sigma, seed, stream, sw, sample_every, reflect, n_or, counts, buf, g)
        else:
            _sweeps_soa_serial(S, zero, cbounds, blocks, nx, code, periodic, jt, kt, axis, b,
                               beta, sigma, seed, stream, sw, sample_every, reflect, n_or,
                               counts, buf, g)
        _convert(s, S, periodic, False, parallel)
        if parallel:
            row_sums(s, code, periodic, jt, kt, axis, b, rows)
        else:
            row_sums_serial(s, code, periodic, jt, kt, axis, b, rows)
        for c in range(4):
            acc = 0.0
            for i in range(ny):
                acc += rows[i, c]
            out[k, c] = acc
