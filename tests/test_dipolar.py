"""Dipolar field and energy: direct and image sums, Ewald split, lattice sums, continuum limit."""

import math

import numpy as np
import pytest
import reference
from scipy import fft as sfft
from scipy import special

from thinfilm.engines.dipolar import DipolarField, cache_clear, dipolar_constant_T
from thinfilm.input.units import MU0, MU_B_J_PER_T
from thinfilm.model.dipolar_tensor import SublatticeGrid, hessian, tensor_spectrum
from thinfilm.model.lattice import Lattice

MU = 2.0 * MU_B_J_PER_T
SHAPES = ("square", "triangular", "honeycomb")


def direct_field(lat, spins, images=0):
    """O(N^2) field (T): B_i = mu0 mu_s/(4 pi) sum_j [3 r (r.S_j)/r^5 - S_j/r^3] over the
    (2 images + 1)^2 nearest torus images (images = 0: open edges), self term left out."""
    pos = lat.positions_nm.reshape(-1, 2)
    s = spins.reshape(-1, 3)
    lx, ly = lat.box_nm
    n = np.arange(-images, images + 1)
    b = np.zeros_like(s)
    for m in n:
        shift = np.stack([n * lx, np.full(n.size, m * ly)], -1)
        d = pos[:, None, None, :] - pos[None, :, None, :] + shift[None, None]
        xx, yy, xy, zz = (h.sum(2) for h in hessian(d[..., 0], d[..., 1]))
        b[:, 0] += xx @ s[:, 0] + xy @ s[:, 1]
        b[:, 1] += xy @ s[:, 0] + yy @ s[:, 1]
        b[:, 2] += zz @ s[:, 2]
    return (b * MU0 / (4 * np.pi) * MU * 1e27).reshape(spins.shape)


def image_tail(wx, wy):
    """(xx, yy) of the integral of the tensor outside the rectangle |x| < wx, |y| < wy (nm^-1):
    int dtheta (3 cos^2 - 1) / rho_b(theta) with rho_b the rectangle's boundary; xy = 0 and
    zz = -(xx + yy) by symmetry and trace."""
    d = math.hypot(wx, wy)
    s, c = wy / d, wx / d
    return (4 * ((2 * s - s**3) / wx + (c**3 - c) / wy),
            4 * ((2 * c - c**3) / wy + (s**3 - s) / wx))


def image_sum(lat, spins, m):
    """Direct sum over (2m + 1)^2 images plus the continuum integral of the far images."""
    b = direct_field(lat, spins, m)
    lx, ly = lat.box_nm
    tx, ty = image_tail((m + 0.5) * lx, (m + 0.5) * ly)
    tot = spins.reshape(-1, 3).sum(0) * MU0 / (4 * np.pi) * MU * 1e27 / (lx * ly)
    return b + np.array([tx * tot[0], ty * tot[1], -(tx + ty) * tot[2]])


def extrapolated_image_sum(lat, spins):
    """image_sum at m = 16 and 32, Richardson-extrapolated in m^-3 (error ~1e-10 relative)."""
    w1, w2 = 16.5**3, 32.5**3
    return (w2 * image_sum(lat, spins, 32) - w1 * image_sum(lat, spins, 16)) / (w2 - w1)


def _field(lat, spins, **kw):
    return DipolarField(lat, MU, **kw).field(spins)


OPEN = [(sh, nx, ny) for sh in SHAPES for nx, ny in ((1, 4), (2, 2), (5, 7), (6, 4), (3, 1))]


@pytest.mark.parametrize("shape,nx,ny", OPEN)
def test_open_field_equals_direct_sum(rng, shape, nx, ny):
    # exact: the zero-padded convolution is the free-space sum itself (round-off only)
    lat = Lattice(shape, nx, ny, 0.3, False)
    s = reference.random_spins(rng, ny, nx)
    ref = direct_field(lat, s)
    np.testing.assert_allclose(_field(lat, s), ref, rtol=0, atol=1e-13 * np.abs(ref).max())


PERIODIC = [(sh, nx, ny) for sh in SHAPES for nx, ny in ((2, 2), (4, 6), (6, 4))]
PERIODIC += [("square", 5, 3), ("triangular", 3, 4)]


@pytest.mark.parametrize("shape,nx,ny", PERIODIC)
def test_periodic_field_equals_image_sum(rng, shape, nx, ny):
    # the 2D dipolar sum converges absolutely; truncating the images at a rectangle and
    # adding the continuum integral beyond it leaves an error ~ m^-3 (seen: 8x per doubling),
    # removed by Richardson extrapolation from m = 16, 32. Remaining difference: ~1e-10.
    lat = Lattice(shape, nx, ny, 0.3, True)
    s = reference.random_spins(rng, ny, nx)
    ref = extrapolated_image_sum(lat, s)
    np.testing.assert_allclose(_field(lat, s), ref, rtol=0, atol=1e-8 * np.abs(ref).max())


@pytest.mark.parametrize("shape", SHAPES)
def test_ewald_split_does_not_matter(shape):
    # an Ewald sum is independent of its splitting parameter: any wrong k-space or self term
    # would show up as a dependence on eta. Compared in real space, in units of 1/a^3.
    lat = Lattice(shape, 6, 8, 0.3, True)
    grid = SublatticeGrid(lat)
    base = tensor_spectrum(lat, zz=True)
    eta0 = math.pi / (2 * 6.0 * max(grid.cell))
    for f in (0.3, 0.5, 2.0, 3.0):
        diff = tensor_spectrum(lat, zz=True, eta=f * eta0) - base
        real = sfft.irfftn(diff, s=(grid.my, grid.mx), axes=(2, 3))
        assert np.abs(real).max() * 0.3**3 < 1e-13


@pytest.mark.parametrize("periodic", [True, False])
@pytest.mark.parametrize("shape", SHAPES)
def test_tensor_is_trace_free(shape, periodic):
    # H is the Hessian of 1/r away from r = 0, so H_xx + H_yy + H_zz = 0 for every pair;
    # the zz part is computed on its own here (real-space and k-space terms) and compared
    lat = Lattice(shape, 6, 4, 0.3, periodic)
    spec = tensor_spectrum(lat, zz=True)
    tr = spec[:, 0] + spec[:, 1] + spec[:, 3]
    assert np.abs(tr).max() < 1e-12 * np.abs(spec).max()


def _dirichlet_beta(s):
    """beta(s) = sum_n (-1)^n (2n+1)^-s = 4^-s [zeta(s, 1/4) - zeta(s, 3/4)] (Hurwitz zeta)."""
    return 4.0**-s * (special.zeta(s, 0.25) - special.zeta(s, 0.75))


def test_square_lattice_sum():
    # sum' (m^2 + n^2)^(-3/2) = 4 zeta(3/2) beta(3/2) = 9.0336 (Glasser and Zucker, lattice-sum
    # tables, in Theoretical Chemistry: Advances and Perspectives 5 (1980); digits from memory).
    # A uniform perpendicular state on the torus feels B_z = -(mu0 mu_s / 4 pi a^3) * that sum.
    exact = 4 * special.zeta(1.5) * _dirichlet_beta(1.5)
    # the alternating series for beta, averaged over two consecutive partial sums
    n = np.arange(200000)
    terms = (-1.0) ** n * (2 * n + 1.0) ** -1.5
    assert abs(_dirichlet_beta(1.5) - (terms.sum() - 0.5 * terms[-1])) < 1e-10
    assert round(exact, 4) == 9.0336
    for n_side in (2, 16, 64):
        lat = Lattice("square", n_side, n_side, 0.25, True)
        s = np.zeros((n_side, n_side, 3))
        s[..., 2] = 1.0
        bz = _field(lat, s)[..., 2] / dipolar_constant_T(MU, 0.25)
        np.testing.assert_allclose(bz, -exact, rtol=1e-12)


@pytest.mark.parametrize("shape", SHAPES)
def test_inplane_versus_perpendicular_energy(shape):
    # uniform monolayer: E_perp/N = +(c mu_s / 2) S, E_inplane/N = -(c mu_s / 4) S with
    # S = sum' a^3/r^3, because sum' x^2/r^5 = S/2 on lattices with 3- or 4-fold symmetry
    # (in-plane isotropy), so E_perp - E_in = (3/4) c mu_s S per site (e.g. Draaisma and
    # de Jonge, J. Appl. Phys. 64, 3610 (1988), from memory). Square: S = 4 zeta(3/2) beta(3/2).
    lat = Lattice(shape, 8, 8, 0.3, True)
    d = DipolarField(lat, MU)
    c = dipolar_constant_T(MU, 0.3)
    up = np.zeros((8, 8, 3))
    up[..., 2] = 1.0
    s_sum = -d.field(up)[0, 0, 2] / c
    if shape == "square":
        assert s_sum == pytest.approx(4 * special.zeta(1.5) * _dirichlet_beta(1.5), rel=1e-12)
    e_perp = d.energy(up) / lat.n_sites
    assert e_perp == pytest.approx(0.5 * c * MU * s_sum, rel=1e-12)
    for phi in (0.0, 0.5, np.pi / 2):
        inplane = np.zeros((8, 8, 3))
        inplane[..., 0], inplane[..., 1] = np.cos(phi), np.sin(phi)
        e_in = d.energy(inplane) / lat.n_sites
        assert e_perp - e_in == pytest.approx(0.75 * c * MU * s_sum, rel=1e-12)


@pytest.mark.parametrize("shape", SHAPES)
def test_continuum_limit_of_monolayer(shape):
    # thin-sheet magnetostatics: a modulation S = e cos(q x) of a monolayer with moment
    # density mu_s/A feels sum_j H_ij S_j = [H(0) + dH(q)] S_i with dH_zz = +2 pi q / A,
    # dH_xx = -2 pi q / A (longitudinal in-plane: magnetic charges), dH_yy = O(q^2), as
    # q -> 0 (2D Fourier transform of 1/r^3: int (1 - J0(u))/u^2 du = 1). The slope of the
    # lattice response against q is fitted with q^2, q^3 terms and compared.
    lat = Lattice(shape, 256, 8, 1.0, True)
    d = DipolarField(lat, MU)
    c = dipolar_constant_T(MU, 1.0)
    x = lat.positions_nm[..., 0]
    qs = 2 * np.pi * np.arange(9) / lat.box_nm[0]
    expected = {2: 1.0, 0: -1.0, 1: 0.0}
    for comp, slope in expected.items():
        resp = []
        for q in qs:
            s = np.zeros((8, 256, 3))
            s[..., comp] = np.cos(q * x)
            b = d.field(s)[..., comp] / c
            resp.append((b * s[..., comp]).sum() / (s[..., comp] ** 2).sum())
        dk = np.array(resp[1:]) - resp[0]
        fit = np.linalg.lstsq(np.stack([qs[1:], qs[1:] ** 2, qs[1:] ** 3], 1), dk, rcond=None)[0]
        assert fit[0] * lat.site_area_nm2 / (2 * np.pi) == pytest.approx(slope, abs=1e-4)


@pytest.mark.parametrize("periodic", [True, False])
@pytest.mark.parametrize("shape", SHAPES)
def test_energy_counts_each_pair_once(rng, shape, periodic):
    # E = (mu0/4pi) mu_s^2 sum_{i<j} [S_i.S_j - 3 (S_i.r)(S_j.r)/r^2] / r^3 (textbook pair
    # energy); on the torus the pair sum runs over the images as well, which equals
    # -(mu_s/2) sum_i S_i.B_i with B from the image sum
    lat = Lattice(shape, 4, 6, 0.3, periodic)
    s = reference.random_spins(rng, 6, 4)
    e = DipolarField(lat, MU).energy(s)
    if periodic:
        ref = -0.5 * MU * np.sum(s * extrapolated_image_sum(lat, s))
        assert abs(e - ref) < 1e-8 * MU * dipolar_constant_T(MU, 0.3) * lat.n_sites
        return
    pos = lat.positions_nm.reshape(-1, 2)
    sf = s.reshape(-1, 3)
    ref = 0.0
    for i in range(len(pos)):
        for j in range(i + 1, len(pos)):
            r = np.append(pos[i] - pos[j], 0.0) * 1e-9
            rn = np.linalg.norm(r)
            ref += (sf[i] @ sf[j] - 3 * (sf[i] @ r) * (sf[j] @ r) / rn**2) / rn**3
    ref *= MU0 / (4 * np.pi) * MU**2
    assert e == pytest.approx(ref, rel=1e-12)


@pytest.mark.parametrize("periodic", [True, False])
def test_single_precision_close_to_double(rng, periodic):
    lat = Lattice("honeycomb", 16, 12, 0.3, periodic)
    s = reference.random_spins(rng, 12, 16)
    ref = _field(lat, s)
    single = _field(lat, s, precision="single")
    assert np.abs(single - ref).max() < 1e-5 * np.abs(ref).max()
    assert np.abs(single - ref).max() > 0  # really computed in single precision


def test_tensor_cache_and_memory():
    cache_clear()
    lat = Lattice("triangular", 16, 16, 0.3, True)
    a = DipolarField(lat, MU)
    b = DipolarField(lat, MU)
    assert a.tensor is b.tensor
    assert DipolarField(lat, 2 * MU).tensor is not a.tensor
    # 3 components x 3 pairs x (8 x 9) points x 16 bytes / 256 sites
    assert a.bytes_per_site == 3 * 3 * 8 * 9 * 16 / 256


def test_rejects_wrong_shape():
    d = DipolarField(Lattice("square", 4, 4, 0.3, True), MU)
    with pytest.raises(ValueError, match="shape"):
        d.field(np.zeros((4, 5, 3)))
