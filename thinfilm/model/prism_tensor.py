"""Interaction tensor of uniformly magnetised prisms: square-lattice sites of size a x a x t.

A site of a film with thickness t on the square lattice of spacing a is the prism
|x| < a/2, |y| < a/2, |z| < t/2 (the prisms tile the film without gaps), uniformly magnetised
with the site moment mu_s (M = mu_s / V, V = a^2 t). The field averaged over prism i is

    B_i = (mu0 mu_s / 4 pi) sum_j P(r_i - r_j) S_j,   P = -(4 pi / V) N_ij,

with N_ij the prism-prism demagnetising tensor (Newell, Williams and Dunlop, J. Geophys. Res.
98, 9551 (1993)); P is in the units of the point-dipole tensor
:func:`thinfilm.model.dipolar_tensor.hessian` (nm^-3) and tends to it far away. Equivalently
P(r) = <H(r + u)> averaged over the "tent" density prod_c (w_c - |u_c|) / w_c^2 of the
displacement between two points of the two prisms (w = a, a, t), H the point-dipole tensor.

How P is evaluated, with the errors measured against Newell's formulas in 50-digit arithmetic
(tests/test_prism_tensor.py), relative to the largest component of P at that offset, and in units
of the self-term scale 4 pi / V (i.e. of mu0 Ms in the field):

* self term (r = 0): the prism's demagnetising factors in closed form (Aharoni, J. Appl. Phys.
  83, 3432 (1998)), N_xx + N_yy + N_zz = 1; round-off 1e-16 (cube) to 3e-13 (t/a = 1e-3, 100);
* the eight touching neighbours (|dx|, |dy| <= a): Newell's f and g functions, 27-point second
  differences in double precision: 1e-14 relative for 0.1 <= t/a <= 30, at worst 3e-9 relative
  at t/a = 1e-3 (where that element is 1e-3 of 4 pi / V) and 2e-12 at t/a = 100; below 3e-13
  of 4 pi / V throughout;
* 2 a <= |r| < 28 a: the z average in closed form (a "needle" of length t, below) and the
  in-plane tent by Gauss-Legendre on its four linear pieces (12, 8 or 6 nodes by distance):
  6e-16 relative;
* |r| >= 28 a: the needle kernel plus its in-plane multipole corrections up to (a/r)^8
  (J = 4 .. 1 by distance): 1e-14 relative.

Newell's formulas are not used beyond the touching neighbours: their 27 terms of size r^3 cancel
to V^2 / r^3, losing (r / a)^6 of the precision (1e-8 at r = 20 a in double precision).

The needle kernel: averaging H over z along two segments of length t (tent t - |w|) gives
in-plane derivatives of the radial function F(rho) = t^-2 int (t - |w|) / sqrt(rho^2 + w^2) dw,
P_ab = d_a d_b F, P_zz = -(d_x^2 + d_y^2) F, exactly for every t (as t -> 0 it is H at z = 0).
Its radial derivatives D_n = ((1/rho) d/drho)^n F are closed forms (``_needle_D``), evaluated
without cancellation for t << rho as for t >> rho.

Periodic edges: :mod:`thinfilm.model.prism_periodic`.

For t/a outside [1e-3, 100] the tensor is refused (ValueError): thinner cells are sheets whose
touching neighbours diverge like ln(a/t) (so prisms never tend to point dipoles as t -> 0);
thicker ones make the periodic direct sum (about (32 t/a)^2 offsets, 6 s at t/a = 100) slow.
"""

import math
from functools import lru_cache

import numpy as np

__all__ = ["demag_factors", "newell_tensor", "prism_tensor", "prism_tensor_quadrant",
           "unfold_quadrant", "fold_quadrant", "self_trace", "field_norm_sum", "check_aspect",
           "ASPECT_RANGE", "NEAR_GAUSS", "MULTIPOLE_ZONES"]

ASPECT_RANGE = (1e-3, 100.0)  # allowed t / a
NEAR_GAUSS = 28.0  # |r| / a below which the in-plane tent is integrated by Gauss-Legendre
# (|r| / a from, J): needle multipole order by distance (error < 1e-14 of |P|)
MULTIPOLE_ZONES = ((28.0, 4), (56.0, 3), (190.0, 2), (2300.0, 1))


def check_aspect(a, t):
    """Raise ValueError unless ASPECT_RANGE[0] <= t / a <= ASPECT_RANGE[1]."""
    lo, hi = ASPECT_RANGE
    if not (a > 0 and t > 0 and lo <= t / a <= hi):
        raise ValueError(f"prism sites need {lo:g} <= thickness / spacing <= {hi:g}; got "
                         f"thickness {t:g} nm, spacing {a:g} nm")


def self_trace(a, t):
    """Trace of P at r = 0: -(4 pi / V) (N_xx + N_yy + N_zz = 1), nm^-3."""
    return -4.0 * math.pi / (a * a * t)


# ---------------------------------------------------------------------------------------------
# self term: Aharoni's demagnetising factors of a rectangular prism

def _aharoni_axis(a, b, c):
    """Demagnetising factor along the c axis of the prism |x| < a, |y| < b, |z| < c (half
    sides): Aharoni, J. Appl. Phys. 83, 3432 (1998), eq. (1)."""
    r = math.sqrt(a * a + b * b + c * c)
    ab, bc, ac = math.hypot(a, b), math.hypot(b, c), math.hypot(a, c)
    # the logarithms of Aharoni's eq. (1) with the differences r - a = (b^2 + c^2) / (r + a),
    # ab - a = b^2 / (ab + a), ... written out: no cancellation for extreme aspect ratios
    log_ra = math.log((b * b + c * c) / (r + a) ** 2)  # ln((r - a) / (r + a))
    log_rb = math.log((a * a + c * c) / (r + b) ** 2)  # ln((r - b) / (r + b))
    s = ((b * b - c * c) / (2 * b * c) * log_ra + (a * a - c * c) / (2 * a * c) * log_rb
         + b / c * math.log((ab + a) / b) + a / c * math.log((ab + b) / a)
         + c / a * math.log(c / (bc + b)) + c / b * math.log(c / (ac + a))
         + 2 * math.atan(a * b / (c * r)) + (a**3 + b**3 - 2 * c**3) / (3 * a * b * c)
         + (a * a + b * b - 2 * c * c) / (3 * a * b * c) * r + c / (a * b) * (ac + bc)
         - (ab**3 + bc**3 + ac**3) / (3 * a * b * c))
    return s / math.pi


def demag_factors(lx, ly, lz):
    """(N_xx, N_yy, N_zz) of a uniformly magnetised rectangular prism of sides lx, ly, lz
    (Aharoni 1998; any length unit). They sum to 1; a cube gives 1/3 each."""
    a, b, c = lx / 2, ly / 2, lz / 2
    return _aharoni_axis(b, c, a), _aharoni_axis(c, a, b), _aharoni_axis(a, b, c)


# ---------------------------------------------------------------------------------------------
# touching neighbours: Newell, Williams and Dunlop (1993)

def _newell_f(x, y, z):
    """Newell's f(x, y, z) (even in each argument), arrays."""
    x, y, z = np.abs(x), np.abs(y), np.abs(z)
    x2, y2, z2 = x * x, y * y, z * z
    r = np.sqrt(x2 + y2 + z2)
    xz, xy = x2 + z2, x2 + y2
    out = (2 * x2 - y2 - z2) * r / 6
    out += np.where(xz > 0, y / 2 * (z2 - x2) * np.arcsinh(y / np.sqrt(np.where(xz > 0, xz, 1.0))),
                    0.0)
    out += np.where(xy > 0, z / 2 * (y2 - x2) * np.arcsinh(z / np.sqrt(np.where(xy > 0, xy, 1.0))),
                    0.0)
    ok = x > 0
    out -= np.where(ok, x * y * z * np.arctan(y * z / np.where(ok, x * r, 1.0)), 0.0)
    return out


def _newell_g(x, y, z):
    """Newell's g(x, y, z) (odd in x and in y, even in z), arrays."""
    sign = np.sign(x) * np.sign(y)
    x, y, z = np.abs(x), np.abs(y), np.abs(z)
    x2, y2, z2 = x * x, y * y, z * z
    r = np.sqrt(x2 + y2 + z2)
    xy, yz, xz = x2 + y2, y2 + z2, x2 + z2

    def safe(v):
        return np.where(v > 0, v, 1.0)

    out = -x * y * r / 3
    out += np.where(xy > 0, x * y * z * np.arcsinh(z / np.sqrt(safe(xy))), 0.0)
    out += np.where(yz > 0, y / 6 * (3 * z2 - y2) * np.arcsinh(x / np.sqrt(safe(yz))), 0.0)
    out += np.where(xz > 0, x / 6 * (3 * z2 - x2) * np.arcsinh(y / np.sqrt(safe(xz))), 0.0)
    out -= np.where(z > 0, z2 * z / 6 * np.arctan(x * y / safe(z * r)), 0.0)
    out -= np.where(y > 0, z * y2 / 2 * np.arctan(x * z / safe(y * r)), 0.0)
    out -= np.where(x > 0, z * x2 / 2 * np.arctan(y * z / safe(x * r)), 0.0)
    return sign * out


def newell_tensor(dx, dy, a, t):
    """(xx, yy, xy, zz) of P = -(4 pi / V) N for two a x a x t prisms at in-plane offset (dx, dy)
    (nm), by Newell's formulas: 27-point second differences of f and g. Accurate near (within a
    few a); far away the terms cancel (see the module docstring)."""
    dx, dy = np.asarray(dx, dtype=float), np.asarray(dy, dtype=float)
    xx, yy, zz, xy = (np.zeros(np.broadcast(dx, dy).shape) for _ in range(4))
    w = (-1.0, 2.0, -1.0)
    for i, ex in enumerate((-1, 0, 1)):
        for j, ey in enumerate((-1, 0, 1)):
            for k, ez in enumerate((-1, 0, 1)):
                c = w[i] * w[j] * w[k]
                x, y, z = dx + ex * a, dy + ey * a, np.full_like(dx, ez * t)
                xx += c * _newell_f(x, y, z)
                yy += c * _newell_f(y, x, z)
                zz += c * _newell_f(z, y, x)
                xy += c * _newell_g(x, y, z)
    s = -1.0 / (a * a * t) ** 2  # P = -(4 pi / V) N, N = sum / (4 pi V)
    return xx * s, yy * s, xy * s, zz * s


# ---------------------------------------------------------------------------------------------
# the needle kernel (z average in closed form) and its in-plane derivatives

def _double_factorial_odd(n):
    """(2n - 1)!! (1 for n = 0)."""
    out = 1.0
    for k in range(1, 2 * n, 2):
        out *= k
    return out


def _needle_D(rho, t, nmax):
    """[D_0 .. D_nmax] of F(rho) = t^-2 int_{-t}^{t} (t - |w|) (rho^2 + w^2)^-1/2 dw, with
    D_n = ((1/rho) d/drho)^n F = t^-2 int (t - |w|) (-1)^n (2n-1)!! (rho^2 + w^2)^-(n+1/2) dw
    = 2 t^-2 (-1)^n (2n-1)!! (t I_n - J_n), I_n = int_0^t (rho^2+w^2)^-(n+1/2) dw (recursion with
    positive terms), J_n = int_0^t w (rho^2+w^2)^-(n+1/2) dw (expm1/log1p form): no cancellation
    for t << rho or t >> rho. rho > 0."""
    r2 = rho * rho
    big = np.sqrt(r2 + t * t)
    log1p_s = np.log1p(t * t / r2)
    inv_t2 = 1.0 / (t * t)
    out = [2 * inv_t2 * (t * np.arcsinh(t / rho) - t * t / (big + rho))]
    inv_r2 = 1.0 / r2
    big_pow = big  # big^(2n - 1)
    rho_pow = 1.0 / rho  # rho^(1 - 2n)
    i_n = None
    for n in range(1, nmax + 1):
        if n > 1:
            big_pow = big_pow * (big * big)
            rho_pow = rho_pow * inv_r2
        first = t * inv_r2 / ((2 * n - 1) * big_pow)
        i_n = first if n == 1 else first + (2 * n - 2) / (2 * n - 1) * inv_r2 * i_n
        j_n = rho_pow * -np.expm1(-(2 * n - 1) / 2 * log1p_s) / (2 * n - 1)
        out.append(2 * inv_t2 * (-1) ** n * _double_factorial_odd(n) * (t * i_n - j_n))
    return out


def _pair_count(m, k):
    """Ways to choose k disjoint pairs among m equal indices: m! / (k! (m-2k)! 2^k)."""
    return math.factorial(m) // (math.factorial(k) * math.factorial(m - 2 * k) * 2**k)


def _plan(terms):
    """Derivatives of a radial function phi at z = 0 as {n: {(px, py): c}}:
    sum_terms c d_x^bx d_y^by d_z^bz phi = sum_n D_n sum c' x^px y^py, D_n = ((1/r) d/dr)^n phi.

    The sum runs over the partial pairings of the derivative indices (a pair of equal indices
    gives a Kronecker delta, an unpaired index its coordinate; z = 0, so every z index is
    paired). ``terms``: iterable of (c, bx, by, bz), bz even; also valid for a 2D radial
    function with bz = 0.
    """
    plan = {}
    for c, bx, by, bz in terms:
        kz = bz // 2
        cz = _pair_count(bz, kz)
        for kx in range(bx // 2 + 1):
            cx = _pair_count(bx, kx)
            for ky in range(by // 2 + 1):
                n = bx + by + bz - kx - ky - kz
                key = (bx - 2 * kx, by - 2 * ky)
                mono = plan.setdefault(n, {})
                mono[key] = mono.get(key, 0.0) + c * cx * _pair_count(by, ky) * cz
    return plan


def _apply_plan(plan, x, y, D):
    """sum_n D[n] sum c x^px y^py for a plan of :func:`_plan`."""
    top = max((max(px, py) for mono in plan.values() for px, py in mono), default=0)
    xp, yp = [np.ones_like(x)], [np.ones_like(y)]
    for _ in range(top):
        xp.append(xp[-1] * x)
        yp.append(yp[-1] * y)
    total = np.zeros_like(x)
    for n, mono in plan.items():
        poly = 0.0
        for (px, py), c in mono.items():
            if c != 0.0:
                poly = poly + c * xp[px] * yp[py]
        total += poly * D[n]
    return total


def _tent_moment(j, w):
    """mu_j(w) = <u^2j> / (2j)! of the tent (w - |u|) / w^2 on [-w, w]."""
    return 2.0 * w ** (2 * j) / ((2 * j + 1) * (2 * j + 2) * math.factorial(2 * j))


_COMPONENTS = ((2, 0), (0, 2), (1, 1))  # in-plane derivative orders of xx, yy, xy


@lru_cache(maxsize=64)
def _needle_plans(a, order):
    """Plans of (xx, yy, xy) of the needle kernel with in-plane tent moments jx + jy <= order."""
    plans = []
    for ex, ey in _COMPONENTS:
        terms = [(_tent_moment(jx, a) * _tent_moment(jy, a), 2 * jx + ex, 2 * jy + ey, 0)
                 for jx in range(order + 1) for jy in range(order + 1 - jx)]
        plans.append(_plan(terms))
    return plans


def _needle_multipole(dx, dy, a, t, order):
    """(xx, yy, xy, zz) of the needle kernel with the in-plane tent moments up to
    (jx + jy <= order), at |r| >= several a."""
    D = _needle_D(np.hypot(dx, dy), t, 2 + 2 * order)
    xx, yy, xy = (_apply_plan(pl, dx, dy, D) for pl in _needle_plans(a, order))
    return xx, yy, xy, -(xx + yy)


def _gauss_tent(dx, dy, a, t, n):
    """(xx, yy, xy, zz): needle kernel averaged over the in-plane tent by n-point Gauss-Legendre on
    each of the pieces [-a, 0] and [0, a] in x and in y (exact weights for the linear tent)."""
    xg, wg = np.polynomial.legendre.leggauss(n)
    u = a * (1 + xg) / 2
    wt = (a - u) * a / 2 * wg / a**2
    us = np.concatenate([-u, u])
    ws = np.concatenate([wt, wt])
    # every node pair at once: (nodes^2, points)
    ux, uy = (v.ravel()[:, None] for v in np.meshgrid(us, us, indexing="ij"))
    wgt = np.outer(ws, ws).ravel()[:, None]
    x, y = dx[None, :] + ux, dy[None, :] + uy
    D = _needle_D(np.hypot(x, y), t, 2)
    out = [np.sum(wgt * _apply_plan(pl, x, y, D), axis=0) for pl in _needle_plans(a, 0)]
    return out[0], out[1], out[2], -(out[0] + out[1])


def _gauss_nodes(rho_over_a):
    return np.where(rho_over_a < 4.5, 12, np.where(rho_over_a < 9.0, 8, 6))


def prism_tensor(dx, dy, a, t):
    """(xx, yy, xy, zz) of P (nm^-3) between two a x a x t prisms at in-plane offsets (dx, dy) nm.

    r = 0 gives the self term -(4 pi / V) diag(N_xx, N_yy, N_zz). P is trace free for r != 0.
    Accuracy: see the module docstring (1e-14 relative, 1e-12 of mu0 Ms near).
    """
    check_aspect(a, t)
    dx, dy = np.broadcast_arrays(np.asarray(dx, dtype=float), np.asarray(dy, dtype=float))
    shape = dx.shape
    dx, dy = dx.ravel(), dy.ravel()
    out = np.zeros((4, dx.size))
    rho = np.hypot(dx, dy) / a
    tol = 1e-9
    near = (np.abs(dx) <= a * (1 + tol)) & (np.abs(dy) <= a * (1 + tol))
    zero = rho < tol
    touch = near & ~zero
    if touch.any():
        out[:, touch] = newell_tensor(dx[touch], dy[touch], a, t)
    if zero.any():
        nxx, nyy, nzz = demag_factors(a, a, t)
        s = -4.0 * math.pi / (a * a * t)
        out[:, zero] = np.array([nxx * s, nyy * s, 0.0, nzz * s])[:, None]
    mid = ~near & (rho < NEAR_GAUSS)
    nodes = _gauss_nodes(rho)
    for n in (12, 8, 6):
        sel = mid & (nodes == n)
        if sel.any():
            out[:, sel] = _gauss_tent(dx[sel], dy[sel], a, t, n)
    lo = NEAR_GAUSS
    for k, (start, order) in enumerate(MULTIPOLE_ZONES):
        stop = MULTIPOLE_ZONES[k + 1][0] if k + 1 < len(MULTIPOLE_ZONES) else np.inf
        sel = (rho >= max(start, lo)) & (rho < stop)
        if sel.any():
            out[:, sel] = _needle_multipole(dx[sel], dy[sel], a, t, order)
    return tuple(c.reshape(shape) for c in out)


def prism_tensor_quadrant(nyq, nxq, a, t):
    """(4, nyq, nxq) of P at offsets (j a, i a), 0 <= i < nyq, 0 <= j < nxq (the other quadrants
    follow by symmetry: xx, yy, zz even in x and y, xy odd in each)."""
    iy, ix = np.meshgrid(np.arange(nyq), np.arange(nxq), indexing="ij")
    return np.stack(prism_tensor(ix * a, iy * a, a, t))


def fold_quadrant(quad, my, mx):
    """(4, my, mx): the values of a quadrant table (4, n, n) at every signed offset (i, j),
    |i|, |j| < n, summed onto the torus point (i mod my, j mod mx) (xy odd in i and in j)."""
    n = quad.shape[1]
    i, j = np.meshgrid(np.arange(n), np.arange(n), indexing="ij")
    out = np.zeros((4, my * mx))
    for sy in (1, -1):
        for sx in (1, -1):
            sel = ((i > 0) | (sy > 0)) & ((j > 0) | (sx > 0))  # axes once
            flat = ((sy * i[sel]) % my) * mx + (sx * j[sel]) % mx
            for comp in range(4):
                w = quad[comp][sel] * (sy * sx if comp == 2 else 1)
                out[comp] += np.bincount(flat, weights=w, minlength=my * mx)
    return out.reshape(4, my, mx)


def unfold_quadrant(quad, iy, ix):
    """Values of a quadrant table (4, ny, nx) at signed integer offsets (iy, ix) (arrays)."""
    q = quad[:, np.abs(iy), np.abs(ix)]
    q[2] *= np.sign(iy) * np.sign(ix)
    return q


@lru_cache(maxsize=32)
def field_norm_sum(a, t):
    """sum_j ||P(r_j)||_2 over the infinite square lattice, self term included (nm^-3): a bound
    of |sum_j P_ij S_j| for unit spins. Direct sum over |r| < 8 max(a, t) plus the integral of
    the point-dipole norm 2/r^3 beyond (a few per cent high or low: a time-step bound)."""
    w = max(a, t)
    n = int(math.ceil(8 * w / a))
    quad = prism_tensor_quadrant(n + 1, n + 1, a, t)
    xx, yy, xy, zz = quad
    half = 0.5 * (xx + yy)
    inplane = np.abs(half) + np.sqrt(0.25 * (xx - yy) ** 2 + xy * xy)
    norm = np.maximum(inplane, np.abs(zz))
    iy, ix = np.meshgrid(np.arange(n + 1), np.arange(n + 1), indexing="ij")
    inside = (ix * ix + iy * iy) <= n * n
    mult = np.where(ix > 0, 2, 1) * np.where(iy > 0, 2, 1)
    total = float(np.sum(norm * mult * inside))
    return total + 4 * math.pi / (a * a * (n + 0.5) * a)
