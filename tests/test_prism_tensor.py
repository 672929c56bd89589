"""The prism-prism tensor of a x a x t sites: self term, Newell, independent integrals, far field.

P = -(4 pi / V) N (nm^-3) is compared with sources that share none of its code: demagnetising
factors that must sum to 1, the point-dipole sum over a fine subdivision of both prisms
(converging), scipy's adaptive cubature of the point-dipole tensor over the two volumes, and
Newell's own formulas evaluated in 50-digit arithmetic (mpmath) at every evaluation zone.
"""

import math
import warnings

import numpy as np
import pytest
from scipy import integrate

from thinfilm.model.dipolar_tensor import hessian
from thinfilm.model.prism_periodic import _dz_phi
from thinfilm.model.prism_tensor import (
    ASPECT_RANGE,
    MULTIPOLE_ZONES,
    NEAR_GAUSS,
    demag_factors,
    newell_tensor,
    prism_tensor,
)


def h3(x, y, z):
    """(xx, yy, xy, zz) of the point-dipole tensor (3 r r - r^2) / r^5 at 3D offsets."""
    r2 = x * x + y * y + z * z
    i5 = r2**-2.5
    return (3 * x * x - r2) * i5, (3 * y * y - r2) * i5, 3 * x * y * i5, (3 * z * z - r2) * i5


def as_array(p):
    return np.array([float(v) for v in p])


# --- (d) self term -------------------------------------------------------------------------

@pytest.mark.parametrize("sides", [(1, 1, 1), (1, 1, 0.01), (1, 1, 100), (1, 2, 3), (0.3, 1, 7),
                                   (2, 2, 2)])
def test_demag_factors_sum_to_one(sides):
    # N_xx + N_yy + N_zz = 1 for any uniformly magnetised body (trace of the demagnetising
    # tensor: the divergence theorem; Aharoni, Introduction to the Theory of Ferromagnetism,
    # Oxford 1996, ch. 6)
    # (the closed form's round-off reaches 3e-13 at aspect ratios 1e-3 and 100)
    n = demag_factors(*sides)
    assert sum(n) == pytest.approx(1.0, abs=1e-12)
    assert all(0 < v < 1 for v in n)
    # the shortest side has the largest factor
    assert np.argmax(n) == np.argmin(sides)


def test_cube_has_one_third_each():
    # exact by cubic symmetry and the sum rule (here to a few units of round-off)
    for v in demag_factors(0.4, 0.4, 0.4):
        assert v == pytest.approx(1 / 3, abs=1e-15)


def test_plate_and_needle_limits():
    # an infinite plate has N_zz = 1, an infinite needle N_zz = 0 (Aharoni 1996); a square
    # plate of aspect t/a approaches them like (t/a) ln(a/t) (slowly)
    assert demag_factors(1, 1, 1e-4)[2] > 0.999
    assert demag_factors(1, 1, 1e4)[2] < 1e-3


@pytest.mark.parametrize("t", [1e-3, 0.1, 1.0, 3.0, 100.0])
def test_newell_self_term_equals_aharoni(t):
    # two independent closed forms (Newell et al. 1993 at r = 0, Aharoni 1998)
    xx, yy, xy, zz = newell_tensor(0.0, 0.0, 1.0, t)
    n = np.array([xx, yy, zz]) * -(t / (4 * math.pi))
    np.testing.assert_allclose(n, demag_factors(1.0, 1.0, t), rtol=0, atol=1e-11)
    assert abs(xy) < 1e-15 * abs(xx)


# --- Newell in 50 digits at every zone --------------------------------------------------------

def _mp_newell(X, Y, a, t):
    """(xx, yy, xy, zz) of P by Newell's f and g in mpmath (50 digits): the reference."""
    mp = pytest.importorskip("mpmath")
    mp.mp.dps = 50

    def f(x, y, z):
        x, y, z = abs(x), abs(y), abs(z)
        r = mp.sqrt(x * x + y * y + z * z)
        out = (2 * x * x - y * y - z * z) * r / 6
        if y and (x or z):
            out += y / 2 * (z * z - x * x) * mp.asinh(y / mp.sqrt(x * x + z * z))
        if z and (x or y):
            out += z / 2 * (y * y - x * x) * mp.asinh(z / mp.sqrt(x * x + y * y))
        if x and y and z:
            out -= x * y * z * mp.atan(y * z / (x * r))
        return out

    def g(x, y, z):
        s = (1 if x >= 0 else -1) * (1 if y >= 0 else -1)
        x, y, z = abs(x), abs(y), abs(z)
        r = mp.sqrt(x * x + y * y + z * z)
        out = -x * y * r / 3
        if z and (x or y):
            out += x * y * z * mp.asinh(z / mp.sqrt(x * x + y * y))
        if x and (y or z):
            out += y / 6 * (3 * z * z - y * y) * mp.asinh(x / mp.sqrt(y * y + z * z))
        if y and (x or z):
            out += x / 6 * (3 * z * z - x * x) * mp.asinh(y / mp.sqrt(x * x + z * z))
        if z:
            out -= z**3 / 6 * mp.atan(x * y / (z * r))
        if y and z:
            out -= z * y * y / 2 * mp.atan(x * z / (y * r))
        if x and z:
            out -= z * x * x / 2 * mp.atan(y * z / (x * r))
        return s * out

    X, Y, a, t = (mp.mpf(v) for v in (X, Y, a, t))
    w = {-1: -1, 0: 2, 1: -1}
    tot = [mp.mpf(0)] * 4
    for i in (-1, 0, 1):
        for j in (-1, 0, 1):
            for k in (-1, 0, 1):
                c = w[i] * w[j] * w[k]
                x, y, z = X + i * a, Y + j * a, k * t
                tot = [tot[0] + c * f(x, y, z), tot[1] + c * f(y, x, z),
                       tot[2] + c * g(x, y, z), tot[3] + c * f(z, y, x)]
    return np.array([float(-v / (a * a * t) ** 2) for v in tot])


ZONE_POINTS = [(0, 0), (1, 0), (1, 1), (2, 0), (2, 1), (4, 1), (4.5, 0), (6, 6), (9, 0),
               (19, 20), (NEAR_GAUSS, 0), (40, 3)] + [(z, 1) for z, _ in MULTIPOLE_ZONES[1:]]


@pytest.mark.parametrize("t", [ASPECT_RANGE[0], 0.1, 1.0, 3.0, 30.0, ASPECT_RANGE[1]])
def test_every_zone_agrees_with_50_digit_newell(t):
    # self (Aharoni), touching (Newell, float), Gauss-Legendre over the in-plane tent, needle
    # multipoles: each against Newell's formulas in 50 digits. Tolerance: 1e-13 of the largest
    # component at that offset, or 1e-12 of the self-term scale 4 pi / V (touching neighbours,
    # where float Newell cancels most at extreme aspect ratios).
    scale_v = 4 * math.pi / t
    for X, Y in ZONE_POINTS:
        ref = _mp_newell(X, Y, 1.0, t)
        got = as_array(prism_tensor(float(X), float(Y), 1.0, t))
        tol = max(1e-13 * np.abs(ref).max(), 1e-12 * scale_v if max(X, Y) <= 1 else 0)
        assert np.abs(got - ref).max() <= tol, (X, Y, got, ref)


def test_far_newell_in_double_precision_is_not_used():
    # the reason for the zones: Newell's 27 terms cancel like (r/a)^6 (double precision)
    far = (60.0, 7.0)
    ref = _mp_newell(*far, 1.0, 1.0)
    naive = as_array(newell_tensor(*far, 1.0, 1.0))
    assert np.abs(naive - ref).max() > 1e-6 * np.abs(ref).max()
    np.testing.assert_allclose(as_array(prism_tensor(*far, 1.0, 1.0)), ref, rtol=1e-13,
                               atol=1e-13 * np.abs(ref).max())


# --- (b) independent integrations -----------------------------------------------------------

def _subdivided(X, Y, t, n, nz):
    """Point-dipole sum between two prisms cut into n x n x nz equal cubes each: the pair
    sum over displacements k h with multiplicity prod (n_c - |k_c|), normalised."""
    k, kz = np.arange(-(n - 1), n), np.arange(-(nz - 1), nz)
    w, wz = n - np.abs(k), nz - np.abs(kz)
    kx, ky, kk = np.meshgrid(k, k, kz, indexing="ij")
    weight = (w[:, None, None] * w[None, :, None] * wz[None, None, :]).astype(float)
    comps = h3(X + kx / n, Y + ky / n, kk * t / nz)
    return np.array([np.sum(weight * c) for c in comps]) / (n**4 * nz**2)


@pytest.mark.parametrize("t,fz", [(0.5, 0.5), (1.0, 1), (2.0, 2), (3.0, 3)])
def test_touching_prisms_against_subdivision_into_point_dipoles(t, fz):
    # Sub-cubes of side 1/n: the sum converges to the prism tensor as 1/n for prisms sharing a
    # face (the contact is singular) and 1/n^2 sharing an edge; Richardson steps for those
    # orders leave 1e-6 (face) and 1e-5 (edge) at n = 8 .. 32.
    ns = (8, 16, 32)
    for (X, Y), orders, tol in (((1, 0), (1, 2), 3e-6), ((1, 1), (2, 3), 3e-5)):
        ref = as_array(prism_tensor(float(X), float(Y), 1.0, t))
        vals = [_subdivided(X, Y, t, n, int(n * fz)) for n in ns]
        raw_err = [np.abs(v - ref).max() / np.abs(ref).max() for v in vals]
        assert raw_err[0] / raw_err[2] > 2 ** (2 * orders[0]) * 0.8  # the expected order
        for p in orders:
            vals = [(2**p * b - a) / (2**p - 1) for a, b in zip(vals[:-1], vals[1:], strict=True)]
        assert np.abs(vals[0] - ref).max() < tol * np.abs(ref).max()


@pytest.mark.parametrize("t", [0.2, 3.0])
@pytest.mark.parametrize("offset", [(2, 0), (2, 1), (3, 3)])
def test_separated_prisms_against_adaptive_cubature(t, offset):
    # P = <H(r + u)> over the displacement density (1 - |ux|)(1 - |uy|)(t - |uz|) / t^2 of two
    # points of the two prisms (a = 1): scipy.integrate.nquad over u (even in uz), QUADPACK
    X, Y = offset
    ref = as_array(prism_tensor(float(X), float(Y), 1.0, t))
    got = []
    for comp in range(4):
        def f(uz, uy, ux, comp=comp):
            return (1 - abs(ux)) * (1 - abs(uy)) * (t - uz) * h3(X + ux, Y + uy, uz)[comp]

        with warnings.catch_warnings():
            warnings.simplefilter("ignore", integrate.IntegrationWarning)
            val, _ = integrate.nquad(f, [[0, t], [-1, 1], [-1, 1]],
                                     opts=[{"epsabs": 0, "epsrel": 1e-11, "points": [0]}] * 3)
        got.append(2 * val / t**2)
    np.testing.assert_allclose(got, ref, rtol=0, atol=1e-11 * np.abs(ref).max())


# --- (c) far field ---------------------------------------------------------------------------

@pytest.mark.parametrize("t", [0.1, 1.0, 5.0])
def test_far_field_is_the_point_dipole(t):
    # Taylor expansion of <H(r + u)>: P = H + (1/2) sum_c <u_c^2> d_c^2 H + O(w^4/r^4) with
    # <u^2> = w^2/6 per tent, i.e. P - H = ((t^2 - a^2) / 12) d_z^2 H (1/r harmonic), with
    # d_z^2 H at z = 0: (3 delta_ab - 15 x_a x_b / r^2) / r^5 in plane, 9 / r^5 for zz.
    # A cube (t = a) has no r^-5 term at all (isotropic second moments).
    kappa = (t * t - 1.0) / 12
    w = max(1.0, t)
    prev = None
    for r in (8 * w, 32 * w, 128 * w, 512 * w):
        x, y = r * 0.8, r * 0.6
        p = as_array(prism_tensor(x, y, 1.0, t))
        h = np.array(hessian(np.float64(x), np.float64(y)))
        c2 = kappa * np.array([3 / r**5 - 15 * x * x / r**7, 3 / r**5 - 15 * y * y / r**7,
                               -15 * x * y / r**7, 9 / r**5])
        hn = np.abs(h).max()
        first = np.abs(p - h).max() / hn
        second = np.abs(p - h - c2).max() / hn
        assert first <= 0.6 * (w / r) ** 2  # seen: 0.53 (t = 0.1), 0.50 (t = 5)
        assert second <= 0.7 * (w / r) ** 4 + 1e-14  # seen: 0.61, 0.24 (cube), 0.39
        if prev is not None and t != 1.0:
            assert prev / first == pytest.approx(16, rel=0.05)  # (w/r)^2 with r x 4
        prev = first


def test_thin_prisms_do_not_become_point_dipoles():
    # As t -> 0 at fixed moment the prisms become touching squares of moment sheet: the
    # nearest-neighbour coupling grows like ln(a/t) (the edge charges of neighbours coincide),
    # while far neighbours tend to the flat-square values, not to point dipoles (finite a).
    h = hessian(np.float64(1.0), np.float64(0.0))
    ratios = [prism_tensor(1.0, 0.0, 1.0, t)[0] / h[0] for t in (1e-1, 1e-2, 1e-3)]
    steps = np.diff(ratios)
    assert ratios[0] > 2.5 and np.all(steps > 2.0) and np.all(steps < 2.6)  # about ln 10 each
    far = [prism_tensor(20.0, 0.0, 1.0, t)[0] / hessian(np.float64(20), np.float64(0))[0]
           for t in (1e-2, 1e-3)]
    assert far[0] == pytest.approx(far[1], rel=1e-5) and far[0] > 1.0005


def test_dz_phi_against_numerical_derivatives():
    # d^n Phi / dz^n at z = 0, Phi(k, z) = (pi/k)[e^{kz} erfc(k/2eta + eta z)
    # + e^{-kz} erfc(k/2eta - eta z)] (the in-plane transform of erf(eta r)/r, as in
    # 2D Ewald sums), against mpmath's numerical differentiation
    mp = pytest.importorskip("mpmath")
    mp.mp.dps = 40
    for k, eta in ((0.3, 0.5), (1.7, 0.4), (0.05, 1.3)):
        def phi(z, k=k, eta=eta):
            k, e = mp.mpf(k), mp.mpf(eta)
            u = k / (2 * e)
            return mp.pi / k * (mp.e**(k * z) * mp.erfc(u + e * z)
                                + mp.e**(-k * z) * mp.erfc(u - e * z))

        for n in (2, 4, 6, 8):
            ref = float(mp.diff(phi, 0, n))
            assert _dz_phi(n, np.float64(k), eta) == pytest.approx(ref, rel=1e-12)
        assert _dz_phi(0, np.float64(k), eta) / k == pytest.approx(float(phi(0)), rel=1e-14)


def test_aspect_range_is_enforced():
    for t in (ASPECT_RANGE[0] / 2, ASPECT_RANGE[1] * 2):
        with pytest.raises(ValueError, match="thickness / spacing"):
            prism_tensor(1.0, 0.0, 1.0, t)
