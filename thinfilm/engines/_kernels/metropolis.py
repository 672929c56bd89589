"""Metropolis sweeps (Gaussian step, axis reflection, over-relaxation) over row classes,
vectorised across the rows of a class.

Row colouring. On all three lattices a site couples only to sites in its own row and in rows
i - 1 and i + 1 (see :mod:`thinfilm.lattice`), so two rows may be updated at the same time
whenever they are not adjacent. :func:`row_colouring` puts the rows in classes:

* class 0: even rows, class 1: odd rows;
* periodic edges with an odd number of rows: the last row (even) is adjacent to row 0 (even)
  through the wrap, so it forms a class 2 of its own.

Visiting order: classes one after the other; inside a class every row is swept left to right
(j = 0 .. nx - 1), each site seeing its already updated left neighbour. The rows of a class are
independent, so the kernel updates column j of all rows of a chunk of the class at once: the
spins are held transposed during the sweeps, in row bands of about BAND_ROWS rows with their
own memory: T[b, j, c, P] (band b, column j, component c, local padded row P, one ghost row on
each side holding the neighbouring band's edge row, or the wrapped row, or zeros at open
edges). One column step is a stride-2 gather of spins and local fields into contiguous buffers
followed by branch-free loops over the rows (candidate, energy change and acceptance computed
for every row, the outcome selected), which compile to SIMD code. The chunks of a class (its
rows in one band; the split depends only on ny, not on the thread count) run in parallel.

Moves at every visited site, all with symmetric proposals accepted by the Metropolis rule
min(1, exp(-dE/kBT)), tested as log(u) <= -dE/kBT with u uniform in (0, 1]:

1. Gaussian step S' = (S + sigma g)/abs(S + sigma g), g a 3D standard normal vector.
2. Axis reflection S' = S - 2 (S.n) n (optional): flips the component along the anisotropy axis
   with the anisotropy energy unchanged, i.e. the S -> -S move of the Ising limit.
3. Over-relaxation, n_or times: reflection of S about the local exchange + Zeeman field f,
   S' = 2 (S.f) f/abs(f)^2 - S. It keeps the exchange + Zeeman energy; the anisotropy change
   is accepted by Metropolis.

Random numbers: counter-based, keyed by (seed, stream, sweep) (``rng.key``). Sites are numbered
in visiting order: a chunk of n rows whose first row has rank r0 in ``order`` takes, at column
j, the visit indices v0 + q with v0 = r0 nx + j n (q < n, row r0 + q of the order). Component c
of its Gaussian numbers comes from ``normals_row`` at counters 4 v0 + c ceil(n/2) + p (row q is
normal q), the uniform of move slot u (0 Gaussian, 1 reflection, 2 + r over-relaxation r) of a
site from counter (4 + u) N + v (N sites). Results are therefore bitwise independent of the
thread count and of the order of the chunks in a class.

Energies: the local energy of S at a site with neighbour-spin sum h is, in units of mu_s * T,
e(S) = -(jt h + b).S - (kt/2) (S.n)^2 with jt = J/mu_s and kt = 2K/mu_s (tesla). The kernels
take beta = mu_s/(kB T) in 1/T, so beta * de is the energy change in units of kB T.
"""

import math

import numba as nb
import numpy as np
from llvmlite import ir
from numba import types
from numba.core import cgutils
from numba.extending import intrinsic

from thinfilm.engines._kernels.field import neighbour_rows, row_pad
from thinfilm.engines._kernels.neighbours import site_neighbour_sum
from thinfilm.engines._kernels.rng import _bits_f64, fast_log, hash64, key, normals_row

__all__ = [
    "row_colouring",
    "chunk_table",
    "neighbour_sum",
    "site_energy_change",
    "kernel_energy_changes",
    "metropolis_sweeps",
    "metropolis_sweeps_serial",
    "row_sums",
    "row_sums_serial",
    "metropolis_samples",
    "make_work",
    "sweeps_with_work",
    "samples_with_work",
]

N_COUNTS = 3  # accepted: gaussian, reflection, over-relaxation
_OPT = dict(cache=True, error_model="numpy", boundscheck=False)
BAND_ROWS = 128  # rows per band (at least): chunks of 64 rows of one class, long column loops
PREFETCH = 2  # columns prefetched ahead
W = 128  # scratch row length: the most rows of one class in a band (bands <= 2 W rows)
_ONE_BITS = np.uint64(0x3FF0000000000000)
_S12 = np.uint64(12)


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


@nb.njit(inline="always", cache=True)
def neighbour_sum(s, i, j, dn, up, has_dn, has_up, code, periodic):
    """Sum of the neighbour spins of site (i, j) (the neighbour table's order; dn, up unused)."""
    return site_neighbour_sum(s, i, j, code, periodic)


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


# ---------------------------------------------------------------- moves

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


@nb.njit(cache=True)
def band_table(ny):
    """Row bands [bands[b], bands[b + 1]): contiguous, even starts, about BAND_ROWS rows and at
    most 2 W rows each. They depend only on ny (not on the thread count)."""
    nb_ = max(ny // BAND_ROWS, (ny + 2 * W - 1) // (2 * W), 1)
    bands = np.empty(nb_ + 1, dtype=np.int64)
    for b in range(nb_):
        bands[b] = 2 * ((b * ny // nb_) // 2)
    bands[nb_] = ny
    return bands


@nb.njit(cache=True)
def chunk_table(order, bounds):
    """Chunks of the row classes: cbounds (n_classes + 1,), chunks (n_chunks, 4), bands.

    chunks[cbounds[c]:cbounds[c + 1]] split class c by band (see :func:`band_table`); a chunk
    is (band, first row, n rows, rank of its first row in order); its rows are first row + 2 q
    (q < n).
    """
    ny = order.shape[0]
    bands = band_table(ny)
    n_cls = bounds.shape[0] - 1
    band_of = np.empty(ny, dtype=np.int64)
    for b in range(bands.shape[0] - 1):
        band_of[bands[b]:bands[b + 1]] = b
    chunks = np.zeros((ny, 4), dtype=np.int64)
    cbounds = np.zeros(n_cls + 1, dtype=np.int64)
    e = -1
    for c in range(n_cls):
        prev = -1
        for r in range(bounds[c], bounds[c + 1]):
            i = order[r]
            if band_of[i] != prev:
                e += 1
                prev = band_of[i]
                chunks[e, 0] = prev
                chunks[e, 1] = i
                chunks[e, 2] = 0
                chunks[e, 3] = r
            chunks[e, 2] += 1
        cbounds[c + 1] = e + 1
    return cbounds, chunks[:e + 1], bands


@nb.njit(inline="always", **_OPT)
def _columns(T, zc, j, i0, code, periodic):
    """(own, left, right, shifted) column buffers (3, LP) of column j for rows of parity
    i0 % 2; a missing column is the zero buffer zc. shifted: the column j + s of the
    triangular diagonal bonds (s = -1 from even rows, +1 from odd rows)."""
    nx = T.shape[0]
    if j > 0:
        lft = T[j - 1]
    else:
        lft = T[nx - 1] if periodic else zc
    if j < nx - 1:
        rgt = T[j + 1]
    else:
        rgt = T[0] if periodic else zc
    dia = zc
    if code == 1:
        js = j - 1 if i0 % 2 == 0 else j + 1
        if js >= 0 and js < nx:
            dia = T[js]
        elif periodic:
            dia = T[js % nx]
    return T[j], lft, rgt, dia


@nb.njit(inline="always", **_OPT)
def _gather(code, vo, t0, n, cur, lft, rgt, dia, jt, bx, by, bz, buf):
    """Spins and local fields f = jt h + b of rows t0 + 2 q (buffer index, q < n) into buf.

    vo : honeycomb vertical offset (+1 bond up, -1 bond down) of these rows in this column.
    """
    cx = cur[0]
    cy = cur[1]
    cz = cur[2]
    lx = lft[0]
    ly = lft[1]
    lz = lft[2]
    rx = rgt[0]
    ry = rgt[1]
    rz = rgt[2]
    sx = buf[0]
    sy = buf[1]
    sz = buf[2]
    fx = buf[3]
    fy = buf[4]
    fz = buf[5]
    if code == 0:
        for q in range(n):
            t = t0 + 2 * q
            sx[q] = cx[t]
            sy[q] = cy[t]
            sz[q] = cz[t]
            fx[q] = jt * (lx[t] + rx[t] + cx[t - 1] + cx[t + 1]) + bx
            fy[q] = jt * (ly[t] + ry[t] + cy[t - 1] + cy[t + 1]) + by
            fz[q] = jt * (lz[t] + rz[t] + cz[t - 1] + cz[t + 1]) + bz
    elif code == 1:
        dx = dia[0]
        dy = dia[1]
        dz = dia[2]
        for q in range(n):
            t = t0 + 2 * q
            sx[q] = cx[t]
            sy[q] = cy[t]
            sz[q] = cz[t]
            fx[q] = jt * (lx[t] + rx[t] + cx[t - 1] + cx[t + 1] + dx[t - 1] + dx[t + 1]) + bx
            fy[q] = jt * (ly[t] + ry[t] + cy[t - 1] + cy[t + 1] + dy[t - 1] + dy[t + 1]) + by
            fz[q] = jt * (lz[t] + rz[t] + cz[t - 1] + cz[t + 1] + dz[t - 1] + dz[t + 1]) + bz
    else:
        for q in range(n):
            t = t0 + 2 * q
            u = t + vo
            sx[q] = cx[t]
            sy[q] = cy[t]
            sz[q] = cz[t]
            fx[q] = jt * (lx[t] + rx[t] + cx[u]) + bx
            fy[q] = jt * (ly[t] + ry[t] + cy[u]) + by
            fz[q] = jt * (lz[t] + rz[t] + cz[u]) + bz


@nb.njit(inline="always", **_OPT)
def _scatter(t0, n, cur, buf):
    cx = cur[0]
    cy = cur[1]
    cz = cur[2]
    sx = buf[0]
    sy = buf[1]
    sz = buf[2]
    for q in range(n):
        t = t0 + 2 * q
        cx[t] = sx[q]
        cy[t] = sy[q]
        cz[t] = sz[q]


@intrinsic
def _prefetch(typingctx, arr, idx):
    """Software prefetch (read, keep in all levels) of element idx of a 1D array."""
    def codegen(context, builder, sig, args):
        aryty = sig.args[0]
        ary = context.make_array(aryty)(context, builder, args[0])
        ptr = cgutils.get_item_pointer(context, builder, aryty, ary, [args[1]])
        i8p = ir.IntType(8).as_pointer()
        i32 = ir.IntType(32)
        fnty = ir.FunctionType(ir.VoidType(), [i8p, i32, i32, i32])
        fn = cgutils.get_or_insert_function(builder.module, fnty, "llvm.prefetch.p0i8")
        builder.call(fn, [builder.bitcast(ptr, i8p), ir.Constant(i32, 0), ir.Constant(i32, 3),
                          ir.Constant(i32, 1)])
        return context.get_dummy_value()

    return types.void(arr, types.intp), codegen


@nb.njit(inline="always", **_OPT)
def _put(col, P, v):
    col[P] = v


@nb.njit(inline="always", **_OPT)
def _get(col, P):
    return col[P]


@nb.njit(**_OPT)
def _chunk_sweep(T, zc, bands, bnd, i0, n, r0, ny, code, periodic, jt, kt, ax, ay, az, bx, by,
                 bz, beta, sigma, k, reflect, n_or, counts, buf, g, cnt):
    """Sweep the n rows i0 + 2 q of one chunk (in band bnd), column by column, left to
    right; refresh the ghost copies of its band-edge rows in the neighbouring bands."""
    nx = T.shape[1]
    nbands = bands.shape[0] - 1
    nsites = nx * ny
    a = bands[bnd]
    ln = bands[bnd + 1] - a
    il = i0 - a  # local row (bands start on even rows: same parity)
    last = il + 2 * (n - 1)
    bp = (bnd - 1) % nbands
    bn = (bnd + 1) % nbands
    to_prev = il == 0 and (periodic or bnd > 0)
    to_next = last == ln - 1 and (periodic or bnd < nbands - 1)
    lp = bands[bp + 1] - bands[bp]
    tb = T[bnd]
    cnt[:, :n] = 0
    csz = tb.shape[1] * tb.shape[2]  # doubles per column
    for j in range(nx):
        if j + PREFETCH < nx:  # columns are streamed from L3 on big lattices
            f = tb[j + PREFETCH].reshape(csz)
            for x in range(0, csz, 8):
                _prefetch(f, x)
        cur, lft, rgt, dia = _columns(tb, zc, j, i0, code, periodic)
        vo = 1 if (i0 + j) % 2 == 0 else -1  # honeycomb: (i + j) even bonds up
        _gather(code, vo, il + 1, n, cur, lft, rgt, dia, jt, bx, by, bz, buf)
        _moves(n, k, r0 * nx + j * n, nsites, ax, ay, az, 0.5 * kt, beta, sigma, reflect, n_or,
               buf, g, cnt)
        _scatter(il + 1, n, cur, buf)
        if to_prev:  # row a is the ghost P = lp + 1 of the previous band
            for c in range(3):
                _put(T[bp, j, c], lp + 1, _get(cur[c], 1))
        if to_next:  # row a + ln - 1 is the ghost P = 0 of the next band
            for c in range(3):
                _put(T[bn, j, c], 0, _get(cur[c], ln))
    for q in range(n):
        for c in range(3):
            counts[i0 + 2 * q, c] += cnt[c, q]


@nb.njit(**_OPT)
def _work(s, chunks, bands):
    """Transposed spins T (n_bands, nx, 3, LP), a zero column (3, LP) and per-chunk scratch
    buf (n_chunks, 6, W) (spins, local fields), g (n_chunks, 3 W + 8) (Gaussian numbers) and
    cnt (n_chunks, 3, W) (accepted moves). Band b, column j, component c, local padded row
    P = i - bands[b] + 1 (ghost rows P = 0 and P = band length + 1: the rows next to the band)
    at T[b, j, c, P]. Each band has its own memory, so threads share no cache lines inside a
    class."""
    nx = s.shape[1]
    lmax = 1
    for b in range(bands.shape[0] - 1):
        lmax = max(lmax, bands[b + 1] - bands[b])
    LP = row_pad(lmax)
    nch = max(1, chunks.shape[0])
    return (np.zeros((bands.shape[0] - 1, nx, 3, LP)), np.zeros((3, LP)),
            np.empty((nch, 6, W)), np.empty((nch, 3 * W + 8)),
            np.empty((nch, 3, W), dtype=np.int64))


_TILE = 16  # rows per tile of the transposes (16 cache lines stay in L1 across columns)


@nb.njit(**_OPT)
def _to_t(s, T, bands, b, periodic):
    """Band b of s (ny, nx, 3) into T[b] with its ghost rows (neighbour rows or zeros)."""
    ny, nx = s.shape[0], s.shape[1]
    lo = bands[b]
    hi = bands[b + 1]
    tb = T[b]
    for a in range(lo, hi, _TILE):
        e = min(a + _TILE, hi)
        for j in range(nx):
            for c in range(3):
                col = tb[j, c]
                for i in range(a, e):
                    _put(col, i - lo + 1, s[i, j, c])
    below = lo - 1 if lo > 0 else (ny - 1 if periodic else -1)
    above = hi if hi < ny else (0 if periodic else -1)
    for j in range(nx):
        for c in range(3):
            _put(tb[j, c], 0, s[below, j, c] if below >= 0 else 0.0)
            _put(tb[j, c], hi - lo + 1, s[above, j, c] if above >= 0 else 0.0)


@nb.njit(**_OPT)
def _from_t(T, s, bands, b):
    nx = s.shape[1]
    lo = bands[b]
    hi = bands[b + 1]
    tb = T[b]
    for a in range(lo, hi, _TILE):
        e = min(a + _TILE, hi)
        for j in range(nx):
            for c in range(3):
                col = tb[j, c]
                for i in range(a, e):
                    s[i, j, c] = _get(col, i - lo + 1)


@nb.njit(parallel=True, **_OPT)
def _convert_par(s, T, bands, periodic, to_t):
    for b in nb.prange(bands.shape[0] - 1):
        if to_t:
            _to_t(s, T, bands, b, periodic)
        else:
            _from_t(T, s, bands, b)


@nb.njit(**_OPT)
def _convert(s, T, bands, periodic, to_t, parallel):
    if parallel:
        _convert_par(s, T, bands, periodic, to_t)
    else:
        for b in range(bands.shape[0] - 1):
            if to_t:
                _to_t(s, T, bands, b, periodic)
            else:
                _from_t(T, s, bands, b)


@nb.njit(inline="always", **_OPT)
def _do_chunk(T, zc, chunks, bands, e, ny, code, periodic, jt, kt, axis, b, beta, sigma, k,
              reflect, n_or, counts, buf, g, cnt):
    _chunk_sweep(T, zc, bands, chunks[e, 0], chunks[e, 1], chunks[e, 2], chunks[e, 3], ny, code,
                 periodic, jt, kt, axis[0], axis[1], axis[2], b[0], b[1], b[2], beta, sigma, k,
                 reflect, n_or, counts, buf[e], g[e], cnt[e])


@nb.njit(parallel=True, **_OPT)
def _sweeps_t(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta, sigma, seed,
              stream, sweep0, n_sweeps, reflect, n_or, counts, buf, g, cnt):
    """n_sweeps sweeps of the transposed spins; the chunks of one class run in parallel."""
    for t in range(n_sweeps):
        k = key(seed, stream, sweep0 + t)
        for c in range(cbounds.shape[0] - 1):
            a = cbounds[c]
            for e in nb.prange(cbounds[c + 1] - a):
                _do_chunk(T, zc, chunks, bands, a + e, ny, code, periodic, jt, kt, axis, b,
                          beta, sigma, k, reflect, n_or, counts, buf, g, cnt)


@nb.njit(**_OPT)
def _sweeps_t_serial(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta,
                     sigma, seed, stream, sweep0, n_sweeps, reflect, n_or, counts, buf, g, cnt):
    """Single-thread twin of :func:`_sweeps_t` (same chunks, same results bit for bit)."""
    for t in range(n_sweeps):
        k = key(seed, stream, sweep0 + t)
        for c in range(cbounds.shape[0] - 1):
            for e in range(cbounds[c], cbounds[c + 1]):
                _do_chunk(T, zc, chunks, bands, e, ny, code, periodic, jt, kt, axis, b, beta,
                          sigma, k, reflect, n_or, counts, buf, g, cnt)


@nb.njit(**_OPT)
def _run_sweeps(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta, sigma,
                seed, stream, sweep0, n_sweeps, reflect, n_or, counts, buf, g, cnt, parallel):
    if parallel:
        _sweeps_t(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta, sigma,
                  seed, stream, sweep0, n_sweeps, reflect, n_or, counts, buf, g, cnt)
    else:
        _sweeps_t_serial(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta,
                         sigma, seed, stream, sweep0, n_sweeps, reflect, n_or, counts, buf, g, cnt)


def make_work(s, order, bounds):
    """Work tuple (cbounds, chunks, bands, T, zc, buf, g, cnt) for spins shaped like s (ny, nx,
    3) and row classes (order, bounds); reusable across calls of :func:`sweeps_with_work` and
    :func:`samples_with_work` (about the size of the spin array)."""
    cbounds, chunks, bands = chunk_table(order, bounds)
    return (cbounds, chunks, bands) + tuple(_work(s, chunks, bands))


@nb.njit(**_OPT)
def sweeps_with_work(s, cbounds, chunks, bands, T, zc, buf, g, cnt, code, periodic, jt, kt, axis,
                     b, beta, sigma, seed, stream, sweep0, n_sweeps, reflect, n_or, counts,
                     parallel):
    """:func:`metropolis_sweeps` with preallocated work arrays (see :func:`make_work`)."""
    _convert(s, T, bands, periodic, True, parallel)
    _run_sweeps(T, zc, cbounds, chunks, bands, s.shape[0], code, periodic, jt, kt, axis, b, beta,
                sigma, seed, stream, sweep0, n_sweeps, reflect, n_or, counts, buf, g, cnt,
                parallel)
    _convert(s, T, bands, periodic, False, parallel)


@nb.njit(**_OPT)
def _sweeps(s, order, bounds, code, periodic, jt, kt, axis, b, beta, sigma, seed, stream,
            sweep0, n_sweeps, reflect, n_or, counts, parallel):
    cbounds, chunks, bands = chunk_table(order, bounds)
    T, zc, buf, g, cnt = _work(s, chunks, bands)
    sweeps_with_work(s, cbounds, chunks, bands, T, zc, buf, g, cnt, code, periodic, jt, kt, axis,
                     b, beta, sigma, seed, stream, sweep0, n_sweeps, reflect, n_or, counts,
                     parallel)


@nb.njit(**_OPT)
def metropolis_sweeps(s, order, bounds, code, periodic, jt, kt, axis, b, beta, sigma, seed,
                      stream, sweep0, n_sweeps, reflect, n_or, counts):
    """Advance s (ny, nx, 3) in place by n_sweeps Metropolis sweeps (threaded).

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
    _sweeps(s, order, bounds, code, periodic, jt, kt, axis, b, beta, sigma, seed, stream,
            sweep0, n_sweeps, reflect, n_or, counts, True)


@nb.njit(**_OPT)
def metropolis_sweeps_serial(s, order, bounds, code, periodic, jt, kt, axis, b, beta, sigma,
                             seed, stream, sweep0, n_sweeps, reflect, n_or, counts):
    """Single-thread twin of :func:`metropolis_sweeps` (same results bit for bit).

    Cheaper for small lattices, where waking threads twice per sweep costs more than the work.
    """
    _sweeps(s, order, bounds, code, periodic, jt, kt, axis, b, beta, sigma, seed, stream,
            sweep0, n_sweeps, reflect, n_or, counts, False)


@nb.njit(**_OPT)
def kernel_energy_changes(s, order, bounds, code, periodic, jt, kt, axis, b, new):
    """Energy change (mu_s T) of every site (i, j) of s changing alone to new[i, j], computed
    through the sweep kernel's own path (transposed columns, ghost rows, gather, move energy);
    s is not modified. For tests against a full reference energy."""
    ny, nx = s.shape[0], s.shape[1]
    cbounds, chunks, bands = chunk_table(order, bounds)
    T, zc, buf, g, cnt = _work(s, chunks, bands)
    _convert(s, T, bands, periodic, True, False)
    out = np.empty((ny, nx))
    bb = buf[0]
    for e in range(chunks.shape[0]):
        bnd, i0, n = chunks[e, 0], chunks[e, 1], chunks[e, 2]
        for j in range(nx):
            cur, lft, rgt, dia = _columns(T[bnd], zc, j, i0, code, periodic)
            vo = 1 if (i0 + j) % 2 == 0 else -1
            _gather(code, vo, i0 - bands[bnd] + 1, n, cur, lft, rgt, dia, jt, b[0], b[1], b[2],
                    bb)
            for q in range(n):
                i = i0 + 2 * q
                out[i, j] = _de(bb[0, q], bb[1, q], bb[2, q], new[i, j, 0], new[i, j, 1],
                                new[i, j, 2], bb[3, q], bb[4, q], bb[5, q], axis[0], axis[1],
                                axis[2], 0.5 * kt)
    return out


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
def samples_with_work(s, cbounds, chunks, bands, T, zc, buf, g, cnt, code, periodic, jt, kt,
                      axis, b, beta, sigma, seed, stream, sweep0, n_samples, sample_every, reflect,
                      n_or, counts, rows, out, parallel):
    """:func:`metropolis_samples` with preallocated work arrays (see :func:`make_work`)."""
    ny = s.shape[0]
    _convert(s, T, bands, periodic, True, parallel)
    for k in range(n_samples):
        _run_sweeps(T, zc, cbounds, chunks, bands, ny, code, periodic, jt, kt, axis, b, beta,
                    sigma, seed, stream, sweep0 + k * sample_every, sample_every, reflect, n_or,
                    counts, buf, g, cnt, parallel)
        _convert(s, T, bands, periodic, False, parallel)
        if parallel:
            row_sums(s, code, periodic, jt, kt, axis, b, rows)
        else:
            row_sums_serial(s, code, periodic, jt, kt, axis, b, rows)
        for c in range(4):
            acc = 0.0
            for i in range(ny):
                acc += rows[i, c]
            out[k, c] = acc


@nb.njit(**_OPT)
def metropolis_samples(s, order, bounds, code, periodic, jt, kt, axis, b, beta, sigma, seed,
                       stream, sweep0, n_samples, sample_every, reflect, n_or, counts, rows,
                       out, parallel):
    """n_samples times: sample_every sweeps, then the totals (mx, my, mz, energy) into out.

    out : (n_samples, 4) float64; energy in units of mu_s * T (multiply by mu_s for J).
    rows : (ny, 4) scratch. parallel : use the threaded sweep and sums (same results).
    Other arguments as :func:`metropolis_sweeps`. The work arrays are made once per call.
    """
    cbounds, chunks, bands = chunk_table(order, bounds)
    T, zc, buf, g, cnt = _work(s, chunks, bands)
    samples_with_work(s, cbounds, chunks, bands, T, zc, buf, g, cnt, code, periodic, jt, kt,
                      axis, b, beta, sigma, seed, stream, sweep0, n_samples, sample_every,
                      reflect, n_or, counts, rows, out, parallel)
