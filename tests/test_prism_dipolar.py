"""Prism sites (a x a x t) in the dipolar field: thick-film magnetostatics, FFT against direct
sums, the point-dipole path unchanged, the LLG driver and the time-step bound."""

import math

import numpy as np
import pytest
import reference
from scipy import fft as sfft

from thinfilm.engines.dipolar import DipolarField, dipolar_constant_T
from thinfilm.engines.stochastic_llg import LLGSimulation, stable_time_step
from thinfilm.input.units import MU0, MU_B_J_PER_T
from thinfilm.model.dipolar_tensor import SublatticeGrid, tensor_spectrum
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model
from thinfilm.model.prism_periodic import EWALD_ETA, periodic_correction
from thinfilm.model.prism_tensor import prism_tensor_quadrant, unfold_quadrant

MS = 1.1e6  # A/m
A = 0.3  # nm


def moment(t_nm, a_nm=A):
    return MS * a_nm * a_nm * t_nm * 1e-27


def uniform(n_y, n_x, comp):
    s = np.zeros((n_y, n_x, 3))
    s[..., comp] = 1.0
    return s


# --- (a) thick film: the slab ------------------------------------------------------------------

@pytest.mark.parametrize("ratio", [0.01, 0.3, 1.0, 3.0, 10.0, 30.0])
def test_thick_film_shape_energy_is_the_continuum_value(ratio):
    # An infinite uniformly magnetised slab has N_zz = 1, N_xx = N_yy = 0 (standard
    # magnetostatics, e.g. Aharoni, Introduction to the Theory of Ferromagnetism, Oxford 1996):
    # B = -mu0 Ms out of plane, 0 in plane, and (E_perp - E_inplane) / V = mu0 Ms^2 / 2. The
    # prisms tile the film, so the periodic lattice must give exactly that; the tolerance is the
    # accuracy of the lattice sums (1e-12 relative, seen 6e-13 at t/a = 30). Point dipoles of
    # the same moment give (3 S / 8 pi)(t/a) = 1.078 t/a times the slab value instead.
    t = ratio * A
    mu = moment(t)
    vol = A * A * t * 1e-27
    for nx, ny in ((8, 8), (5, 3)):
        lat = Lattice("square", nx, ny, A, True)
        d = DipolarField(lat, mu, thickness_nm=t)
        up, inplane = uniform(ny, nx, 2), uniform(ny, nx, 0)
        np.testing.assert_allclose(d.field(up), np.broadcast_to([0, 0, -MU0 * MS], up.shape),
                                   rtol=0, atol=1e-11 * MU0 * MS)
        np.testing.assert_allclose(d.field(inplane), 0.0, rtol=0, atol=1e-11 * MU0 * MS)
        de = (d.energy(up) - d.energy(inplane)) / (lat.n_sites * vol)
        assert de == pytest.approx(MU0 * MS**2 / 2, rel=1e-11)
    point = DipolarField(lat, mu)
    de_point = (point.energy(up) - point.energy(inplane)) / (lat.n_sites * vol)
    assert de_point / (MU0 * MS**2 / 2) == pytest.approx(1.0784 * ratio, rel=1e-3)


@pytest.mark.parametrize("ratio", [1.0, 8.0, 30.0])
def test_film_modulation_follows_the_slab_kernel(ratio):
    # A film of thickness t, magnetisation uniform across it and modulated as cos(q x) in plane,
    # has the thickness-averaged demagnetising factors N_zz(q) = (1 - e^{-qt}) / (qt) and
    # N_xx(q) = 1 - N_zz(q) (longitudinal), the kernel of thin-film spin-wave theory (Kalinikos
    # and Slavin, J. Phys. C 19, 7013 (1986); from memory). The prism lattice must follow it for
    # any qt, up to lattice corrections of order (qa)^2 (seen 0.075 (qa)^2).
    t = ratio * A
    lat = Lattice("square", 256, 4, A, True)
    spec = tensor_spectrum(lat, zz=True, thickness_nm=t)[0]
    vol = A * A * t
    iso = -4 * math.pi / (3 * vol)  # isotropic self part, left out of the stored tensor
    for m in (1, 2, 4, 8):
        q = 2 * math.pi * m / (256 * A)
        nzz = -(spec[3, 0, m].real + iso) * vol / (4 * math.pi)
        nxx = -(spec[0, 0, m].real + iso) * vol / (4 * math.pi)
        slab = -math.expm1(-q * t) / (q * t)
        assert abs(nzz - slab) < 0.1 * (q * A) ** 2
        assert abs(nxx - (1 - slab)) < 0.1 * (q * A) ** 2
        assert abs(spec[1, 0, m].real + iso) < 0.1 * (q * A) ** 2 * 4 * math.pi / vol


# --- the periodic sum --------------------------------------------------------------------------

@pytest.mark.parametrize("ratio", [0.01, 1.0, 10.0])
def test_periodic_correction_does_not_depend_on_eta_or_radius(ratio):
    # an Ewald sum is independent of its splitting parameter; the direct sum of P - M converges
    # as radius^-9. Compared in real space, in units of 4 pi / V (mu0 Ms).
    t = ratio * A
    grid = SublatticeGrid(Lattice("square", 8, 6, A, True))
    w = max(A, t)
    unit = A * A * t / (4 * math.pi)
    base = periodic_correction(grid, t)
    variants = [periodic_correction(grid, t, eta=f * EWALD_ETA / w) for f in (0.8, 1.5)]
    variants.append(periodic_correction(grid, t, radius=24 * w))
    for v in variants:
        real = sfft.irfftn(v - base, s=(6, 8), axes=(1, 2))
        assert np.abs(real).max() * unit < 1e-12


@pytest.mark.parametrize("periodic", [True, False])
@pytest.mark.parametrize("ratio", [0.1, 1.0, 5.0])
def test_prism_tensor_is_stored_trace_free(periodic, ratio):
    # the kernels use zz = -(xx + yy); the prism tensor is trace free off the self term, and the
    # self term's isotropic part is left out (added back by DipolarField.field and energy)
    lat = Lattice("square", 6, 4, A, periodic)
    spec = tensor_spectrum(lat, zz=True, thickness_nm=ratio * A)
    tr = spec[:, 0] + spec[:, 1] + spec[:, 3]
    assert np.abs(tr).max() < 1e-12 * np.abs(spec).max()


# --- (e) FFT against direct sums ---------------------------------------------------------------

def prism_table(lat, t, reach_x, reach_y):
    """P at integer offsets |i| <= reach_y, |j| <= reach_x (a quadrant table, nm^-3)."""
    return prism_tensor_quadrant(reach_y + 1, reach_x + 1, lat.spacing_nm, t)


def direct_prism_field(lat, spins, t, images=0):
    """O(N^2) field (T): B_i = mu0 mu_s / (4 pi) sum_j sum_T P(r_i - r_j + T) S_j over the
    (2 images + 1)^2 torus images (0: open edges), the self term (full P(0)) included."""
    ny, nx = lat.ny, lat.nx
    table = prism_table(lat, t, nx - 1 + images * nx, ny - 1 + images * ny)
    i, j = np.divmod(np.arange(lat.n_sites), nx)
    di = i[:, None] - i[None, :]
    dj = j[:, None] - j[None, :]
    tot = np.zeros((4,) + di.shape)
    for m in range(-images, images + 1):
        for n in range(-images, images + 1):
            tot += unfold_quadrant(table, di + m * ny, dj + n * nx)
    xx, yy, xy, zz = tot
    s = spins.reshape(-1, 3)
    b = np.stack([xx @ s[:, 0] + xy @ s[:, 1], xy @ s[:, 0] + yy @ s[:, 1], zz @ s[:, 2]], -1)
    return (b * MU0 / (4 * np.pi) * moment(t) * 1e27).reshape(spins.shape)


@pytest.mark.parametrize("shape_xy", [(5, 7), (1, 4), (6, 1)])
@pytest.mark.parametrize("ratio", [0.2, 1.0, 4.0])
def test_open_field_equals_direct_prism_sum(rng, shape_xy, ratio):
    # exact: the zero-padded convolution is the free-space sum itself (round-off only)
    nx, ny = shape_xy
    t = ratio * A
    lat = Lattice("square", nx, ny, A, False)
    s = reference.random_spins(rng, ny, nx)
    ref = direct_prism_field(lat, s, t)
    got = DipolarField(lat, moment(t), thickness_nm=t).field(s)
    np.testing.assert_allclose(got, ref, rtol=0, atol=1e-13 * np.abs(ref).max())


def _image_tail(wx, wy):
    """(xx, yy) integral of the point-dipole tensor outside |x| < wx, |y| < wy (nm^-1), as in
    tests/test_dipolar.py; far away the prism tensor is the point-dipole one."""
    d = math.hypot(wx, wy)
    s, c = wy / d, wx / d
    return (4 * ((2 * s - s**3) / wx + (c**3 - c) / wy),
            4 * ((2 * c - c**3) / wy + (s**3 - s) / wx))


def _image_sum(lat, spins, t, m):
    b = direct_prism_field(lat, spins, t, m)
    lx, ly = lat.box_nm
    tx, ty = _image_tail((m + 0.5) * lx, (m + 0.5) * ly)
    tot = spins.reshape(-1, 3).sum(0) * MU0 / (4 * np.pi) * moment(t) * 1e27 / (lx * ly)
    return b + np.array([tx * tot[0], ty * tot[1], -(tx + ty) * tot[2]])


@pytest.mark.parametrize("shape_xy", [(4, 6), (5, 3)])
@pytest.mark.parametrize("ratio", [0.2, 3.0])
def test_periodic_field_equals_image_sum(rng, shape_xy, ratio):
    # direct sum over (2m + 1)^2 torus images of the prism tensor plus the continuum integral of
    # the point-dipole tensor beyond; the remainder (~ m^-3: discreteness, and the prism's
    # (t^2 - a^2)/12 d_z^2 H far tail) is removed by Richardson extrapolation from m = 16, 32,
    # as for point dipoles in tests/test_dipolar.py. Remaining difference: ~1e-10.
    nx, ny = shape_xy
    t = ratio * A
    lat = Lattice("square", nx, ny, A, True)
    s = reference.random_spins(rng, ny, nx)
    w1, w2 = 16.5**3, 32.5**3
    ref = (w2 * _image_sum(lat, s, t, 32) - w1 * _image_sum(lat, s, t, 16)) / (w2 - w1)
    got = DipolarField(lat, moment(t), thickness_nm=t).field(s)
    np.testing.assert_allclose(got, ref, rtol=0, atol=1e-8 * np.abs(ref).max())


def test_energy_is_the_pair_sum_plus_each_prisms_self_energy(rng):
    # E = sum_{i<j} mu_s^2 (-mu0 / 4 pi) S_i.P_ij.S_j + sum_i (mu0 / 2) Ms^2 V S_i.N_self.S_i:
    # the magnetostatic energy of the uniformly magnetised prisms (open edges)
    t = 0.5
    lat = Lattice("square", 4, 3, A, False)
    s = reference.random_spins(rng, 3, 4)
    mu = moment(t)
    table = prism_table(lat, t, 3, 2)
    sf = s.reshape(-1, 3)
    i, j = np.divmod(np.arange(12), 4)
    e = 0.0
    for p in range(12):
        for q in range(p, 12):
            off_i, off_j = np.array([i[p] - i[q]]), np.array([j[p] - j[q]])
            xx, yy, xy, zz = unfold_quadrant(table, off_i, off_j)[:, 0]
            tens = np.array([[xx, xy, 0], [xy, yy, 0], [0, 0, zz]])
            pair = sf[p] @ tens @ sf[q] * (0.5 if p == q else 1.0)
            e -= MU0 / (4 * np.pi) * mu * mu * 1e27 * pair
    assert DipolarField(lat, mu, thickness_nm=t).energy(s) == pytest.approx(e, rel=1e-12)


# --- no thickness: today's point dipoles -------------------------------------------------------

@pytest.mark.parametrize("periodic", [True, False])
def test_no_thickness_is_the_point_dipole_tensor_bit_for_bit(rng, periodic):
    # the point-dipole path is untouched: same tensor, no self term; its values are checked
    # against direct point-dipole sums in tests/test_dipolar.py
    lat = Lattice("square", 6, 5, A, periodic)
    d = DipolarField(lat, 2 * MU_B_J_PER_T)
    assert d.thickness_nm is None and d.self_field_T == 0.0
    assert np.array_equal(tensor_spectrum(lat), tensor_spectrum(lat, thickness_nm=None))
    # cached times mu0 mu_s / 4 pi and the 1 / (fy fx) of the unnormalised inverse FFT
    assert np.array_equal(np.asarray(d.tensor), tensor_spectrum(lat) * (
        MU0 / (4 * np.pi) * 2 * MU_B_J_PER_T * 1e27 / (d.grid.fy * d.grid.fx)))
    s = reference.random_spins(rng, 5, 6)
    y = d.planes(s)
    out = d.field(s)
    np.testing.assert_array_equal(out[..., 2], y[2, 0, :5, :6])


def test_prism_sites_need_the_square_lattice():
    for shape in ("triangular", "honeycomb"):
        with pytest.raises(ValueError, match="square lattice only"):
            DipolarField(Lattice(shape, 4, 4, A, True), moment(0.3), thickness_nm=0.3)
        with pytest.raises(ValueError, match="square lattice only"):
            Model(Lattice(shape, 4, 4, A, True), moment(0.3), 1e-21, 0.0, dipolar=True,
                  dipolar_thickness_nm=0.3)
    with pytest.raises(ValueError, match="needs dipolar"):
        Model(Lattice("square", 4, 4, A, True), moment(0.3), 1e-21, 0.0,
              dipolar_thickness_nm=0.3)


# --- LLG driver and time step --------------------------------------------------------------------

def test_llg_builds_the_prism_field_of_the_model():
    lat = Lattice("square", 8, 8, A, True)
    t = 0.6
    model = Model(lat, moment(t), 1e-21, 0.0, dipolar=True, dipolar_thickness_nm=t)
    sim = LLGSimulation(model, temperature_K=0.0, damping=0.5, time_step_s=1e-15)
    assert sim.dipolar.thickness_nm == t and sim.dipolar.self_field_T != 0
    assert model.with_field([0, 0, 0.1]).dipolar_thickness_nm == t
    with pytest.raises(ValueError, match="thickness"):
        LLGSimulation(model, temperature_K=0.0, damping=0.5, time_step_s=1e-15,
                      dipolar=DipolarField(lat, moment(t)))
    # uniform perpendicular state: the energy per site is the slab's mu0 Ms^2 V / 2 (no
    # exchange or anisotropy energy in a uniform state with K = 0 besides -J per bond)
    sim.spins[...] = uniform(8, 8, 2)
    _, e_mev = sim.measure()
    e_dip = e_mev - (-2 * 1e-21 / 1.602176634e-22)
    assert e_dip * 1.602176634e-22 == pytest.approx(MU0 * MS**2 / 2 * A * A * t * 1e-27, rel=1e-9)


@pytest.mark.parametrize("ratio", [0.05, 1.0, 10.0])
def test_time_step_bound_covers_the_prism_field(rng, ratio):
    # stable_time_step bounds the dipolar field by sum_j ||P_ij||; the field of any state is
    # below it (uniform and random states checked). At a fixed moment thin prisms have a far
    # stronger field (mu0 M = mu0 mu_s / (a^2 t)) than point dipoles, tall ones a weaker one.
    t = ratio * A
    lat = Lattice("square", 16, 16, A, True)
    mu = moment(t)
    model = Model(lat, mu, 0.0, 0.0, dipolar=True, dipolar_thickness_nm=t)
    d = DipolarField(lat, mu, thickness_nm=t)
    from thinfilm.model.prism_tensor import field_norm_sum

    bound = field_norm_sum(A, t) * A**3 * dipolar_constant_T(mu, A)
    for s in (uniform(16, 16, 2), uniform(16, 16, 0), reference.random_spins(rng, 16, 16)):
        assert np.linalg.norm(d.field(s), axis=-1).max() <= bound
    point = Model(lat, mu, 0.0, 0.0, dipolar=True)
    dt_prism = stable_time_step(model, 0.0, 0.1)
    dt_point = stable_time_step(point, 0.0, 0.1)
    if ratio < 0.5:
        assert dt_prism < 0.5 * dt_point  # the thin-cell field is larger at fixed moment
    if ratio > 5:
        assert dt_prism > dt_point  # and a tall cell's smaller
