"""LLG with the dipolar field: both Heun stages, the unchanged local path, relaxation at T = 0."""

import math

import numpy as np
import pytest
import reference

from thinfilm.engines._kernels.dipolar import gather_planes
from thinfilm.engines._kernels.llg import heun_run_twopass, twopass_work
from thinfilm.engines._kernels.llg_dipolar import added_work, heun_run_added, noise_field32
from thinfilm.engines.dipolar import DipolarField
from thinfilm.engines.stochastic_llg import LLGSimulation, measure
from thinfilm.input.units import MEV_J, MU_B_J_PER_T
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model

CASES = [("square", 5, 4, False), ("square", 6, 6, True), ("triangular", 5, 4, True),
         ("triangular", 3, 5, False), ("honeycomb", 6, 4, True), ("honeycomb", 5, 3, False)]
ALPHA, GAMMA, DT = 0.3, 1.7, 0.01


def _args(lat, s, n_steps, step0, seed, temp0):
    jt, kt, axis, _ = reference.kernel_params()
    b0, db = np.array([0.1, -0.25, 0.4]), np.array([0.01, 0.0, -0.02])
    gdt = GAMMA * DT / (1 + ALPHA**2)
    return (s, n_steps, step0, seed, lat.code, lat.periodic, jt, kt, axis, b0, db, temp0, 0.5,
            0.7, gdt, ALPHA)


@pytest.mark.parametrize("shape,nx,ny,periodic", CASES)
@pytest.mark.parametrize("temp0, dtemp, atol", [(0.0, 0.0, 1e-14), (2.0, 0.5, 1e-4)])
def test_zero_added_field_is_the_twopass_step(rng, shape, nx, ny, periodic, temp0, dtemp, atol):
    # the local two-pass Heun when the added field is zero: equal to round-off at T = 0; at
    # T > 0 the same noise keys and counters give normals that differ only by the float32
    # Box-Muller's 24-bit radius (at most sqrt(2) 2^-12 = 3.5e-4 of sigma ~ 1 T here, rotation
    # gdt |db| < 6e-6 rad per step); a different or missing noise would differ by ~1e-2
    lat = Lattice(shape, nx, ny, 0.3, periodic)
    s0 = reference.random_spins(rng, ny, nx)
    a, b = s0.copy(), s0.copy()
    args_a, args_b = list(_args(lat, a, 3, 11, 5, temp0)), list(_args(lat, b, 3, 11, 5, temp0))
    args_a[12] = args_b[12] = dtemp
    heun_run_twopass(*args_a, *twopass_work(ny, nx))
    p, q = lat.period
    zero = np.zeros((3, p * q, -(-ny // p), -(-nx // q)))
    gin = np.zeros_like(zero)
    heun_run_added(*args_b, lambda: zero, gin, p, q, *added_work(ny, nx))
    np.testing.assert_allclose(b, a, rtol=0, atol=atol)
    assert np.abs(b - s0).max() > 1e-3
    # the stages leave the new spins in the planes array for the next field evaluation
    expect = np.zeros_like(zero)
    gather_planes(b, p, q, expect)
    assert np.array_equal(gin, expect)


@pytest.mark.parametrize("shape,nx,ny,periodic", CASES)
def test_dipolar_field_enters_both_stages(rng, shape, nx, ny, periodic):
    # NumPy Heun (Garcia-Palacios and Lazaro, Phys. Rev. B 58, 14937 (1998)) with the dipolar
    # field added to the effective field at the start of the step and at the predictor
    lat = Lattice(shape, nx, ny, 0.3, periodic)
    mu = 1e-21  # large moment: the dipolar field is comparable to the local one
    dip = DipolarField(lat, mu)
    s0 = reference.random_spins(rng, ny, nx)
    args = _args(lat, s0.copy(), 3, 4, 9, 2.0)
    jt, kt, axis, _ = reference.kernel_params()
    b0, db, sigma_coef = args[9], args[10], args[13]
    s = s0.copy()
    for n in range(3):
        noise = np.zeros_like(s)
        noise_field32(ny, nx, 9, 4 + n, sigma_coef * math.sqrt(2.0 + 0.5 * n), noise)
        kw = dict(exchange_T=jt, anisotropy_T=kt, axis=axis, field_T=b0 + db * n)
        h1 = reference.effective_field(lat, s, **kw) + dip.field(s) + noise
        d1 = reference.llg_rhs(s, h1, GAMMA, ALPHA) * DT
        sp = s + d1
        sp /= np.linalg.norm(sp, axis=-1, keepdims=True)
        h2 = reference.effective_field(lat, sp, **kw) + dip.field(sp) + noise
        s = s + 0.5 * (d1 + reference.llg_rhs(sp, h2, GAMMA, ALPHA) * DT)
        s /= np.linalg.norm(s, axis=-1, keepdims=True)
    got = args[0]
    heun_run_added(*args, dip.transform_gathered, dip.gather_buffer(), *lat.period,
                   *added_work(ny, nx))
    np.testing.assert_allclose(got, s, rtol=0, atol=1e-12)
    assert np.abs(got - s0).max() > 1e-3


def _film(shape, n, periodic, mu):
    lat = Lattice(shape, n, n, 0.3, periodic)
    return Model(lat, mu, 0.5 * MEV_J, 0.05 * MEV_J)


@pytest.mark.parametrize("shape,periodic", [("square", True), ("honeycomb", False),
                                            ("triangular", True)])
def test_relaxation_conserves_length_and_lowers_energy(rng, shape, periodic):
    # deterministic LLG with damping: dE/dt = -alpha gamma mu_s/(1+alpha^2) |S x B_eff|^2 <= 0
    # (Gilbert, IEEE Trans. Magn. 40, 3443 (2004)), here with B_eff including the dipolar field
    mu = 50 * MU_B_J_PER_T  # dipolar fields of ~1 T, comparable to the exchange field
    model = _film(shape, 16, periodic, mu)
    s0 = reference.random_spins(rng, 16, 16)
    sim = LLGSimulation(model, temperature_K=0.0, damping=0.5, time_step_s=5e-15, spins=s0,
                        dipolar=True)
    energies = [sim.measure()[1]]
    for _ in range(30):
        sim.advance(20)
        energies.append(sim.measure()[1])
    np.testing.assert_allclose(np.linalg.norm(sim.spins, axis=-1), 1.0, rtol=0, atol=1e-14)
    assert np.all(np.diff(energies) < 0)
    e_dip = sim.dipolar.energy(sim.spins) / model.lattice.n_sites / MEV_J
    e_loc = measure(model, sim.spins)[1]
    assert energies[-1] == pytest.approx(e_loc + e_dip, rel=1e-12)
    assert abs(e_dip) > 1e-3 * abs(e_loc)  # the dipolar term matters in this film


def test_dipolar_changes_the_trajectory_and_off_path_is_unchanged(rng):
    model = _film("square", 8, True, 2 * MU_B_J_PER_T)
    s0 = reference.random_spins(rng, 8, 8)
    kw = dict(temperature_K=5.0, damping=0.1, time_step_s=1e-15, spins=s0, seed=3)
    off = LLGSimulation(model, **kw)
    off.advance(10)
    plain = LLGSimulation(model, dipolar=False, **kw)
    plain.advance(10)
    assert np.array_equal(off.spins, plain.spins)
    on = LLGSimulation(model, dipolar=True, **kw)
    on.advance(10)
    assert 0 < np.abs(on.spins - off.spins).max() < 1e-3


def test_rejects_a_field_of_another_lattice():
    model = _film("square", 8, True, 2 * MU_B_J_PER_T)
    other = DipolarField(Lattice("square", 8, 8, 0.4, True), 2 * MU_B_J_PER_T)
    with pytest.raises(ValueError, match="another lattice"):
        LLGSimulation(model, temperature_K=0.0, damping=0.1, time_step_s=1e-15, dipolar=other)


def _free_spin_mean(dt, n=32, alpha=0.5, temp=1.0, blocks=40, per_block=25):
    """<S_z> of free unit moments in B = z (units mu = kB = gamma = 1) by the dipolar stages
    with a zero added field; block means over time spans of 0.4 per sample."""
    lat = Lattice("square", n, n, 0.3, True)
    s = np.zeros((n, n, 3))
    s[..., 2] = 1.0
    zero = np.zeros((3, 1, n, n))
    gin = np.zeros_like(zero)
    work = added_work(n, n)
    axis = np.array([0.0, 0.0, 1.0])
    every = round(0.4 / dt)

    def run(m, step0):
        heun_run_added(s, m, step0, 3, lat.code, True, 0.0, 0.0, axis, axis, np.zeros(3), temp,
                       0.0, math.sqrt(2 * alpha / dt), dt / (1 + alpha**2), alpha,
                       lambda: zero, gin, 1, 1, *work)

    run(20 * every, 0)
    means = []
    for b in range(blocks):
        vals = []
        for k in range(per_block):
            run(every, 10**6 + 10**4 * b + every * k)
            vals.append(s[..., 2].mean())
        means.append(np.mean(vals))
    means = np.array(means)
    return means.mean(), means.std(ddof=1) / math.sqrt(means.size)


def test_dipolar_stages_sample_the_boltzmann_law_of_free_spins():
    # exact (Langevin 1905): free moments in a field, <S.b> = coth(xi) - 1/xi = 0.3130352855 at
    # xi = mu B / (kB T) = 1, with Brown's thermal field of variance 2 alpha kB T/(gamma mu dt)
    # (Brown, Phys. Rev. 130, 1677 (1963)). Heun is weak order 1: its bias is linear in dt
    # (measured +0.013 at dt = 0.05 on the local path too), so the two runs at dt and dt/2 are
    # extrapolated to dt -> 0 (Richardson, common practice); tolerance 4 standard errors.
    # A variance off by a factor 1 + alpha^2 or 2 moves the answer by 0.057 or 0.149.
    m1, e1 = _free_spin_mean(0.04)
    m2, e2 = _free_spin_mean(0.02)
    m0, e0 = 2 * m2 - m1, math.sqrt(4 * e2**2 + e1**2)
    exact = 1 / math.tanh(1.0) - 1.0
    assert abs(m0 - exact) < 4 * e0, (m1, m2, m0, e0)
