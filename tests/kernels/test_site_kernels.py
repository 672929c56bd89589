"""Per-site kernels: energy, field and Heun step against the NumPy references on every shape and
edge kind (tiny and odd sizes), the uniform limit, vacancies, and per-site thermal equilibrium."""

import math

import numpy as np
import pytest
from disorder_reference import site_energy, site_energy_from_bonds, site_field, site_heun_step
from reference import random_spins

from thinfilm.engines._kernels.llg import noise_field
from thinfilm.engines._kernels.site_field import site_field_all
from thinfilm.engines.disordered_llg import SiteLLG, site_measure
from thinfilm.engines.disordered_mc import SiteMonteCarlo
from thinfilm.engines.film import as_terms
from thinfilm.engines.stochastic_llg import LLGSimulation
from thinfilm.input.disorder_spec import DisorderSpec, GrainSpec, SpreadSpec
from thinfilm.input.units import KB_J_PER_K, MEV_J, MU_B_J_PER_T
from thinfilm.model.disorder import realise_disorder
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model
from thinfilm.model.site_parameters import SiteParameters, uniform_site_parameters

# (shape, nx, ny, periodic): tiny, odd, one-row/one-column grids, both edge kinds
CASES = [
    ("square", 1, 5, True), ("square", 5, 1, False), ("square", 2, 2, True),
    ("square", 2, 2, False), ("square", 3, 5, True), ("square", 3, 5, False),
    ("square", 9, 4, True), ("triangular", 1, 4, True), ("triangular", 2, 2, True),
    ("triangular", 3, 5, False), ("triangular", 5, 4, True), ("triangular", 7, 6, True),
    ("honeycomb", 2, 2, True), ("honeycomb", 2, 2, False), ("honeycomb", 3, 5, False),
    ("honeycomb", 6, 4, True), ("honeycomb", 1, 6, False),
]
IDS = [f"{s}-{nx}x{ny}-{'p' if p else 'o'}" for s, nx, ny, p in CASES]
SPEC = DisorderSpec(vacancies=0.25, axis_cone_deg=15.0, anisotropy=SpreadSpec(0.4),
                    exchange=SpreadSpec(0.3, "uniform"), moment=SpreadSpec(0.3),
                    grains=GrainSpec(0.6, axis_cone_deg=40.0, boundary_exchange=0.4))


def _model(lat, field=(0.3, -0.2, 0.5)):
    return Model(lat, 1.7 * MU_B_J_PER_T, 1.3 * MEV_J, 0.4 * MEV_J, (0.3, -0.2, 0.9), field)


def _disordered(case, seed=4):
    lat = Lattice(case[0], case[1], case[2], 0.3, case[3])
    return realise_disorder(_model(lat), SPEC, seed)


@pytest.mark.parametrize("case", CASES, ids=IDS)
def test_energy_equals_the_numpy_reference(case):
    p = _disordered(case)
    s = random_spins(np.random.default_rng(1), p.lattice.ny, p.lattice.nx)
    s[~p.occupied] = 0.0
    m, e = site_measure(p, s)
    want = site_energy(p, s)
    n = p.n_occupied
    assert e * n * MEV_J == pytest.approx(want, rel=1e-12, abs=1e-12 * abs(p.exchange_J).max())
    if not (p.lattice.periodic and min(p.lattice.nx, p.lattice.ny) < 3):  # no repeated pairs
        assert site_energy_from_bonds(p, s) == pytest.approx(want, rel=1e-12, abs=1e-34)
    assert np.allclose(m * n, s.reshape(-1, 3).sum(axis=0), atol=1e-12)


@pytest.mark.parametrize("case", CASES, ids=IDS)
def test_field_and_heun_step_equal_the_numpy_reference(case):
    p = _disordered(case)
    lat = p.lattice
    s = random_spins(np.random.default_rng(2), lat.ny, lat.nx)
    s[~p.occupied] = 0.0
    out = np.empty((lat.n_sites, 3))
    nbr, jt, dm, kt, axis, bs, occ = as_terms(p).kernel_arrays
    site_field_all(s.reshape(-1, 3), nbr, jt, dm, kt, axis, occ, p.field_T, bs, out)
    want = site_field(p, s)
    assert np.allclose(out.reshape(s.shape), want, rtol=1e-12, atol=1e-12 * np.abs(want).max())
    # one step at temperature: the thermal field of site i is sigma_ref sqrt(mu_ref/mu_i) x
    # the uniform path's normals
    dt, gamma, alpha, temp = 2e-15, 1.76e11, 0.2, 30.0
    sim = SiteLLG(p, temperature_K=temp, damping=alpha, time_step_s=dt, seed=9, spins=s, step=5,
                  gamma=gamma)
    sig = sim.noise_sigma_coef() * math.sqrt(temp)
    noise = np.empty_like(s)
    noise_field(lat.ny, lat.nx, 9, 5, sig, noise)
    noise *= p.noise_scale.reshape(lat.ny, lat.nx, 1)
    ref = site_heun_step(p, s, noise, dt, gamma, alpha)
    sim.advance(1)
    assert np.abs(sim.spins - ref).max() < 1e-12
    assert np.all(sim.spins[~p.occupied] == 0.0)


@pytest.mark.parametrize("case", [CASES[5], CASES[10], CASES[15]], ids=[IDS[5], IDS[10], IDS[15]])
def test_zero_spread_runs_the_uniform_model(case):
    lat = Lattice(case[0], case[1], case[2], 0.3, case[3])
    model = _model(lat)
    # grains with a zero cone, no K spread and boundary factor 1, plus zero spreads
    spec = DisorderSpec(anisotropy=SpreadSpec(0.0), exchange=SpreadSpec(0.0, "uniform"),
                        moment=SpreadSpec(0.0), grains=GrainSpec(0.6, 0.0, SpreadSpec(0.0), 1.0))
    p = realise_disorder(model, spec, 11)
    u = uniform_site_parameters(model)
    for name in ("exchange_J", "anisotropy_J", "axis", "moment_J_per_T", "occupied"):
        assert np.array_equal(getattr(p, name), getattr(u, name)), name  # bitwise
    s = random_spins(np.random.default_rng(3), lat.ny, lat.nx)
    a = LLGSimulation(model, temperature_K=20.0, damping=0.1, time_step_s=1e-15, seed=3, spins=s)
    b = SiteLLG(p, temperature_K=20.0, damping=0.1, time_step_s=1e-15, seed=3, spins=s)
    a.advance(50)
    b.advance(50)
    # same noise numbers; only the order of the neighbour additions differs (round-off)
    assert np.abs(a.spins - b.spins).max() < 1e-12
    ma, ea = a.measure()
    mb, eb = b.measure()
    assert np.allclose(ma, mb, atol=1e-12) and eb == pytest.approx(ea, rel=1e-12)


def test_monte_carlo_energy_series_matches_the_reference():
    p = _disordered(("triangular", 7, 6, True))
    mc = SiteMonteCarlo(p, 40.0, seed=3)
    r = mc.run(20, 5)
    assert r["n_sites"] == p.n_occupied
    # the last sample's energy is that of the final spins
    assert r["energy_J"][-1] * p.n_occupied == pytest.approx(site_energy(p, mc.spins), rel=1e-12)
    assert np.all(mc.spins[~p.occupied] == 0.0)
    assert np.allclose(np.linalg.norm(mc.spins[p.occupied], axis=-1), 1.0, atol=1e-12)


def test_monte_carlo_thread_split_is_bitwise_neutral():
    p = _disordered(("square", 9, 7, True))
    a = SiteMonteCarlo(p, 40.0, seed=5, parallel=True)
    b = SiteMonteCarlo(p, 40.0, seed=5, parallel=False)
    ra, rb = a.run(30, 10), b.run(30, 10)
    assert np.array_equal(a.spins, b.spins) and np.array_equal(ra["energy_J"], rb["energy_J"])


def _langevin(x):
    return 1.0 / math.tanh(x) - 1.0 / x


def _free_moments(lat, moments):
    """J = K = 0, B along z; two moment values on a checkerboard of sites."""
    model = Model(lat, MU_B_J_PER_T, 0.0, 0.0, (0, 0, 1), (0.0, 0.0, 2.0))
    u = uniform_site_parameters(model)
    ii, jj = np.meshgrid(np.arange(lat.ny), np.arange(lat.nx), indexing="ij")
    mu = np.where((ii + jj) % 2 == 0, moments[0], moments[1]) * MU_B_J_PER_T
    return SiteParameters(lat, MU_B_J_PER_T, u.exchange_J, u.anisotropy_J, u.axis, mu,
                          u.occupied, model.field_T, model.axis), (ii + jj) % 2 == 0


def test_per_site_moment_sets_the_thermal_field_langevin():
    # independent moments in B: <S_z> = L(mu_i B/(kB T)) (Langevin 1905); a wrong per-site noise
    # variance (e.g. the reference moment everywhere) gives L(mu_ref B/kT) on both sublattices
    lat = Lattice("square", 32, 32, 0.3, True)
    temp = 2.0
    p, even = _free_moments(lat, (1.0, 3.0))
    sim = SiteLLG(p, temperature_K=temp, damping=1.0, time_step_s=2e-14, seed=4)
    sim.advance(3000)
    acc = np.zeros((lat.ny, lat.nx))
    n = 200
    for _ in range(n):
        sim.advance(25)
        acc += sim.spins[..., 2]
    acc /= n
    for mask, mu in ((even, 1.0), (~even, 3.0)):
        want = _langevin(mu * MU_B_J_PER_T * 2.0 / (KB_J_PER_K * temp))
        # 512 spins x 200 samples (correlated over ~tau_D = 25 steps): std of the mean ~ 0.003;
        # Heun time-step bias at dt/tau_D ~ 1/40 below 0.01 (measured when written)
        assert abs(acc[mask].mean() - want) < 0.02, (mu, acc[mask].mean(), want)
    assert _langevin(3.0 * MU_B_J_PER_T * 2 / (KB_J_PER_K * temp)) - _langevin(
        MU_B_J_PER_T * 2 / (KB_J_PER_K * temp)) > 0.2  # the two cases are far apart


def test_monte_carlo_per_site_moment_langevin():
    lat = Lattice("square", 16, 16, 0.3, True)
    temp = 2.0
    p, even = _free_moments(lat, (1.0, 3.0))
    mc = SiteMonteCarlo(p, temp, seed=8, over_relaxation=0)
    mc.warmup(200)
    acc = np.zeros((lat.ny, lat.nx))
    for _ in range(1000):
        mc.sweep(2)
        acc += mc.spins[..., 2]
    acc /= 1000
    for mask, mu in ((even, 1.0), (~even, 3.0)):
        want = _langevin(mu * MU_B_J_PER_T * 2.0 / (KB_J_PER_K * temp))
        assert abs(acc[mask].mean() - want) < 0.02, (mu, acc[mask].mean(), want)


def test_per_site_axes_uniaxial_boltzmann():
    # J = 0, K/kT = 2 with a random axis per site: <(S.n_i)^2> = 0.5313 for every site
    # (Boltzmann weight sin(theta) exp(sigma cos^2 theta); value from the physics table, V-calc)
    lat = Lattice("square", 16, 16, 0.3, True)
    model = Model(lat, MU_B_J_PER_T, 0.0, 1.0 * MEV_J, (0, 0, 1))
    temp = MEV_J / (2.0 * KB_J_PER_K)
    p = realise_disorder(model, DisorderSpec(grains=GrainSpec(0.3, 90.0)), 2)
    assert p.grain_id is not None and np.unique(p.grain_id).size > 100
    mc = SiteMonteCarlo(p, temp, seed=3, reflection=True)
    mc.warmup(200)
    acc = 0.0
    for _ in range(1000):
        mc.sweep(2)
        acc += np.mean(np.einsum("ijc,ijc->ij", mc.spins, p.axis) ** 2)
    assert abs(acc / 1000 - 0.5313) < 0.01


def test_llg_thread_split_is_bitwise_neutral():
    p = _disordered(("honeycomb", 6, 4, True))
    kw = dict(temperature_K=25.0, damping=0.2, time_step_s=1e-15, seed=7)
    a = SiteLLG(p, parallel=True, **kw)
    b = SiteLLG(p, parallel=False, **kw)
    a.advance(40, temperature_rate_K_per_step=0.5, field_rate_T_per_step=(0.01, 0.0, -0.02))
    b.advance(40, temperature_rate_K_per_step=0.5, field_rate_T_per_step=(0.01, 0.0, -0.02))
    assert np.array_equal(a.spins, b.spins) and not np.array_equal(a.spins, SiteLLG(p, **kw).spins)
