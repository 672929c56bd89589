"""Heun steps with a field array added in each stage (the dipolar field), stage by stage.

``heun_predict_stage`` and ``heun_correct_stage`` are the two passes of ``llg.heun_run_twopass``
with three changes: the thermal-field row handed to the local field is the noise plus the added
field of that stage (read from a sublattice-planes array, see :mod:`.dipolar`); the noise (same
keys and counters) comes from the float32 Box-Muller of :mod:`.rng32` (2.4 times faster than
the float64 one, and kept in float32 between the stages); the predictor keeps w = S + d1/2
instead of S and d1, so the corrector computes S' = normalised (w + d2/2). The two passes then
move 216 bytes per site through memory instead of 264, which bounds them at 1024^2. With no
noise (T = 0) the step equals that of ``heun_run_twopass`` to round-off.
``heun_run_added`` drives them: it evaluates the added field at the start-of-step spins for the
predictor and at the predictor for the corrector.

Each stage also writes the spins it produces (the predictor, then the new spins) into the
planes array ``gin`` that the next field evaluation transforms, so no separate gather pass
over the grid runs between the stages and the FFTs.
"""

import math

import numba as nb
import numpy as np

from thinfilm.engines._kernels.dipolar import gather_planes
from thinfilm.engines._kernels.field import field_soa, load_row, neighbour_rows, row_pad
from thinfilm.engines._kernels.llg import _predict
from thinfilm.engines._kernels.rng import key
from thinfilm.engines._kernels.rng32 import normals_row32

__all__ = ["heun_predict_stage", "heun_correct_stage", "heun_run_added", "added_work",
           "noise_field32"]

_OPT = dict(cache=True, error_model="numpy", boundscheck=False)
_CHUNKS = 32


@nb.njit(inline="always", **_OPT)
def _with_added(nzi, hd, i, p, q, nx, tot):
    """tot (3 nx, component blocks, float64) = noise row nzi (float32) + row i of the planes
    array hd."""
    big = i // p
    base = (i % p) * q
    for c in range(3):
        o = c * nx
        for b in range(q):
            src = hd[c, base + b, big]
            for jj in range((nx - b + q - 1) // q):
                j = o + jj * q + b
                tot[j] = np.float64(nzi[j]) + src[jj]


@nb.njit(inline="always", **_OPT)
def _put_row(row, gin, i, p, q, nx):
    """Row i of the planes array gin (3, n_sub, my, L') <- padded row buffer row (3, L)
    (site j at column j + 1)."""
    big = i // p
    base = (i % p) * q
    for c in range(3):
        for b in range(q):
            dst = gin[c, base + b, big]
            for jj in range((nx - b + q - 1) // q):
                dst[jj] = row[c, jj * q + b + 1]


def noise_field32(ny, nx, seed, step, sigma, out):
    """The thermal field (T) the dipolar Heun stages use at one step, into out (ny, nx, 3)."""
    k = np.uint64(key(seed, 0, step))
    row = np.empty(3 * nx, np.float32)
    for i in range(ny):
        normals_row32(k, i * ((3 * nx + 1) // 2), sigma, row)
        out[i] = row.reshape(3, nx).T


def added_work(ny, nx):
    """Work arrays (sp, w, nz) of ``heun_run_added``: predictor spins and w = S + d1/2
    (float64), thermal field (float32), each (ny, nx, 3)."""
    return (np.zeros((ny, nx, 3)), np.zeros((ny, nx, 3)), np.zeros((ny, nx, 3), np.float32))


@nb.njit(inline="always", **_OPT)
def _preload(a, ring, i0, ny, periodic):
    """Rows i0 - 1 and i0 of a (ny, nx, 3) into the ring of three padded rows (row r at r % 3);
    the loop then loads row i + 1 only."""
    dn, _, _, _ = neighbour_rows(i0, ny, periodic)
    load_row(a[dn], ring[(i0 + 2) % 3], periodic)
    load_row(a[i0], ring[i0 % 3], periodic)


@nb.njit(parallel=True, **_OPT)
def heun_predict_stage(s, step, seed, code, periodic, jt, kt, axis, bx, by, bz, sigma, gdt,
                       alpha, hd, p, q, sp, w, nz, gin):
    """Predictor of one step: sp = normalised s + d1, field = local + noise + hd (T).

    step keys the noise (keys and counters as ``heun_run_twopass`` step ``step``, normals from
    ``rng32.normals_row32``, float32; both stages use the same values); hd planes
    (3, n_sub, my, L) of the added field at s; sp (ny, nx, 3); w = s + d1/2 and nz (float32)
    hold each row as flat component blocks, kept for the corrector. sp is also written into the
    planes array gin (any float type; sites outside the grid untouched).
    """
    ny, nx = s.shape[0], s.shape[1]
    L = row_pad(nx)
    nch = min(_CHUNKS, ny)
    k = key(seed, 0, step)
    for ch in nb.prange(nch):
        buf = np.zeros((6, 3, L))
        ring = np.zeros((3, 3, L))
        zero = np.zeros((3, L))
        tot = np.empty(3 * nx)
        i0 = ch * ny // nch
        _preload(s, ring, i0, ny, periodic)
        for i in range(i0, (ch + 1) * ny // nch):
            dn, up, has_dn, has_up = neighbour_rows(i, ny, periodic)
            load_row(s[up], ring[(i + 1) % 3], periodic)
            cur = ring[i % 3]
            below = ring[(i + 2) % 3] if has_dn else zero
            above = ring[(i + 1) % 3] if has_up else zero
            nz32 = nz[i].reshape(3 * nx)
            if sigma > 0.0:
                normals_row32(k, i * ((3 * nx + 1) // 2), sigma, nz32)
            else:
                nz32[:] = 0.0
            _with_added(nz32, hd, i, p, q, nx, tot)
            field_soa(code, i, below, cur, above, jt, kt, axis[0], axis[1], axis[2], bx, by, bz,
                      tot, nx, buf[3])
            _predict(cur, buf[3], gdt, alpha, nx, periodic, buf[4], buf[5])
            _put_row(buf[5], gin, i, p, q, nx)
            wi = w[i].reshape(3 * nx)
            for j in range(nx):
                wi[j] = cur[0, j + 1] + 0.5 * buf[4, 0, j]
                wi[nx + j] = cur[1, j + 1] + 0.5 * buf[4, 1, j]
                wi[2 * nx + j] = cur[2, j + 1] + 0.5 * buf[4, 2, j]
                sp[i, j, 0] = buf[5, 0, j + 1]
                sp[i, j, 1] = buf[5, 1, j + 1]
                sp[i, j, 2] = buf[5, 2, j + 1]


@nb.njit(inline="always", **_OPT)
def _finish(pcur, h, wi, gdt, alpha, nx, out):
    """out (nx, 3) = normalised w + d2/2, d2 the increment at the predictor pcur (3, L)."""
    f = out.reshape(3 * nx)
    hg = -0.5 * gdt
    for j in range(nx):
        t = j + 1
        sx = pcur[0, t]
        sy = pcur[1, t]
        sz = pcur[2, t]
        hx = h[0, j]
        hy = h[1, j]
        hz = h[2, j]
        cx = sy * hz - sz * hy
        cy = sz * hx - sx * hz
        cz = sx * hy - sy * hx
        nx_ = wi[j] + hg * (cx + alpha * (sy * cz - sz * cy))
        ny_ = wi[nx + j] + hg * (cy + alpha * (sz * cx - sx * cz))
        nz_ = wi[2 * nx + j] + hg * (cz + alpha * (sx * cy - sy * cx))
        inv = 1.0 / math.sqrt(nx_ * nx_ + ny_ * ny_ + nz_ * nz_)
        f[3 * j] = nx_ * inv
        f[3 * j + 1] = ny_ * inv
        f[3 * j + 2] = nz_ * inv


@nb.njit(parallel=True, **_OPT)
def heun_correct_stage(s, code, periodic, jt, kt, axis, bx, by, bz, gdt, alpha, hd, p, q, sp,
                       w, nz, gin):
    """Corrector of one step into s = normalised w + d2/2, field at the predictor sp = local +
    noise + hd (T); the new s also into the planes array gin."""
    ny, nx = s.shape[0], s.shape[1]
    L = row_pad(nx)
    nch = min(_CHUNKS, ny)
    for ch in nb.prange(nch):
        buf = np.zeros((6, 3, L))
        ring = np.zeros((3, 3, L))
        zero = np.zeros((3, L))
        tot = np.empty(3 * nx)
        i0 = ch * ny // nch
        _preload(sp, ring, i0, ny, periodic)
        for i in range(i0, (ch + 1) * ny // nch):
            dn, up, has_dn, has_up = neighbour_rows(i, ny, periodic)
            load_row(sp[up], ring[(i + 1) % 3], periodic)
            cur = ring[i % 3]
            _with_added(nz[i].reshape(3 * nx), hd, i, p, q, nx, tot)
            field_soa(code, i, ring[(i + 2) % 3] if has_dn else zero, cur,
                      ring[(i + 1) % 3] if has_up else zero, jt, kt, axis[0], axis[1], axis[2],
                      bx, by, bz, tot, nx, buf[3])
            _finish(cur, buf[3], w[i].reshape(3 * nx), gdt, alpha, nx, s[i])
            load_row(s[i], buf[5], periodic)
            _put_row(buf[5], gin, i, p, q, nx)


def heun_run_added(s, n_steps, step0, seed, code, periodic, jt, kt, axis, b0, db, temp0, dtemp,
                   sigma_coef, gdt, alpha, added, gin, p, q, sp, w, nz):
    """Advance s in place by n_steps Heun steps with an added field in both stages.

    Arguments as ``llg.heun_run_twopass``; ``gin`` is a planes array (3, p q, my, L'), L' >=
    ceil(nx / q), with cell period (p, q), and ``added()`` returns the added field (T), in
    planes layout (3, p q, my, L), of the spins that gin holds (e.g. ``DipolarField.gather_buffer``
    and ``DipolarField.transform_gathered``). gin is filled from s here and then by the stages;
    its entries outside the grid are left as they are (zero for an open-edge convolution).
    sp, w, nz from :func:`added_work`. T and B change linearly per step as in ``heun_run``.
    """
    if n_steps > 0:
        gather_planes(s, p, q, gin[:, :, : -(-s.shape[0] // p), : -(-s.shape[1] // q)])
    for n in range(int(n_steps)):
        temp = max(temp0 + dtemp * n, 0.0)
        sigma = sigma_coef * math.sqrt(temp)
        bx = b0[0] + db[0] * n
        by = b0[1] + db[1] * n
        bz = b0[2] + db[2] * n
        heun_predict_stage(s, step0 + n, seed, code, periodic, jt, kt, axis, bx, by, bz, sigma,
                           gdt, alpha, added(), p, q, sp, w, nz, gin)
        heun_correct_stage(s, code, periodic, jt, kt, axis, bx, by, bz, gdt, alpha, added(),
                           p, q, sp, w, nz, gin)
