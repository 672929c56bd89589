"""Metropolis sweeps (Gaussian step, axis reflection, over-relaxation) over row classes,
vectorised across the rows of a class.

Row colouring. On all three lattices a site couples only to sites in its own row and in rows
i - 1 and i + 1 (see :mod:`thinfilm.model.neighbours`), so two rows may be updated at the same time
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

Layout, moves and measurements live in ``metropolis_layout``, ``metropolis_moves`` and
``metropolis_measure``; this module holds the sweeps and re-exports the layout names.
"""

import numba as nb
from llvmlite import ir
from numba import types
from numba.core import cgutils
from numba.extending import intrinsic

from thinfilm.engines._kernels.metropolis_layout import (  # noqa: F401 (re-exported)
    BAND_ROWS,
    W,
    _convert,
    _convert_par,
    _from_t,
    _get,
    _put,
    _to_t,
    _work,
    band_table,
    chunk_table,
    make_work,
    row_colouring,
)
from thinfilm.engines._kernels.metropolis_moves import _moves
from thinfilm.engines._kernels.rng import key

__all__ = [
    "row_colouring",
    "chunk_table",
    "make_work",
    "metropolis_sweeps",
    "metropolis_sweeps_serial",
    "sweeps_with_work",
    "N_COUNTS",
]

N_COUNTS = 3  # accepted: gaussian, reflection, over-relaxation
_OPT = dict(cache=True, error_model="numpy", boundscheck=False)
PREFETCH = 2  # columns prefetched ahead


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
