"""Stochastic LLG against closed forms: Langevin, Boltzmann, Larmor, energy decrease."""

import math

import numpy as np
import pytest

from thinfilm.engines.stochastic_llg import LLGSimulation, initial_spins, measure
from thinfilm.input.units import GAMMA_E_RAD_PER_S_T, KB_J_PER_K, MEV_J, MU_B_J_PER_T
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model


def free_model(n, *, field_T=(0, 0, 0), anisotropy_meV=0.0, moment_muB=1.0):
    lat = Lattice("square", n, n, 0.4, True)
    return Model(lat, moment_muB * MU_B_J_PER_T, 0.0, anisotropy_meV * MEV_J, (0, 0, 1), field_T)


def sample_mz(sim, n_warm, n_run, every):
    sim.advance(n_warm)
    out = []
    for _ in range(n_run // every):
        sim.advance(every)
        out.append(sim.spins[..., 2].ravel().copy())
    return np.array(out)  # (n_samples, n_spins)


def langevin(x):
    return 1.0 / math.tanh(x) - 1.0 / x


def test_free_spins_follow_langevin_function():
    # Free classical moments in a field: <m_z> = L(mu B / kB T), L(x) = coth x - 1/x
    # (Langevin 1905; any statistical-mechanics textbook). L(1) = 0.3130352855.
    b = 1.0
    mu = MU_B_J_PER_T
    temp = mu * b / KB_J_PER_K  # x = 1
    model = free_model(64, field_T=(0, 0, b))
    sim = LLGSimulation(model, temperature_K=temp, damping=1.0, time_step_s=20e-15, seed=11,
                        spins=initial_spins(model.lattice, "random", seed=3))
    mz = sample_mz(sim, 1500, 6000, 100)
    # tau_D = mu (1 + a^2) / (2 a gamma kB T) = 1/(gamma B) = 5.7 ps = 284 steps; samples 100
    # steps apart are correlated, so the error uses spin-wise means over ~10 relaxation times.
    per_spin = mz.mean(axis=0)
    err = per_spin.std(ddof=1) / math.sqrt(per_spin.size)
    assert abs(langevin(1.0) - 0.3130352855) < 1e-9
    # 5 standard errors plus 0.005 for the O(dt) weak error of Heun at gamma B dt = 0.0035
    assert abs(per_spin.mean() - langevin(1.0)) < 5 * err + 0.005, (per_spin.mean(), err)


def test_uniaxial_spin_samples_boltzmann_distribution():
    # One uniaxial spin: P(cos theta) ~ exp(sigma cos^2 theta), sigma = K / kB T
    # (Boltzmann; Brown, Phys. Rev. 130, 1677, 1963). <m_z^2> = 0.5313 at sigma = 2.
    k_mev = 1.0
    sigma = 2.0
    temp = k_mev * MEV_J / (sigma * KB_J_PER_K)
    model = free_model(64, anisotropy_meV=k_mev)
    sim = LLGSimulation(model, temperature_K=temp, damping=1.0, time_step_s=4e-15, seed=5,
                        spins=initial_spins(model.lattice, "random", seed=9))
    mz = sample_mz(sim, 2000, 8000, 100)
    x = np.abs(mz)
    # exact bin probabilities of |cos theta| on [0, 1] with weight exp(sigma x^2)
    edges = np.linspace(0, 1, 11)
    fine = np.linspace(0, 1, 100001)
    w = np.exp(sigma * fine**2)
    cdf = np.concatenate([[0], np.cumsum((w[1:] + w[:-1]) / 2 * np.diff(fine))])
    cdf /= cdf[-1]
    p_exact = np.diff(np.interp(edges, fine, cdf))
    # per-spin histograms give independent estimates (spins do not interact)
    h = np.stack([np.histogram(x[:, i], bins=edges)[0] / x.shape[0] for i in range(x.shape[1])])
    p_sim = h.mean(axis=0)
    p_err = h.std(axis=0, ddof=1) / math.sqrt(h.shape[0])
    assert np.all(np.abs(p_sim - p_exact) < 5 * p_err + 0.004), (p_sim, p_exact, p_err)
    m2 = (mz**2).mean(axis=0)
    m2_err = m2.std(ddof=1) / math.sqrt(m2.size)
    # <m_z^2> at sigma = 2 is 0.5313 (closed form with the Dawson function; checked by quadrature)
    assert abs(m2.mean() - 0.5313) < 5 * m2_err + 0.004, (m2.mean(), m2_err)


def test_precession_frequency_is_gamma_b_over_two_pi():
    # Larmor precession at T = 0: f = gamma B / (2 pi) = 28.0249514 GHz/T for the free electron
    # (CODATA 2018 gamma_e = 1.76085963023e11 rad s^-1 T^-1).
    b = 1.0
    model = free_model(4, field_T=(0, 0, b))
    s0 = np.zeros((4, 4, 3))
    s0[..., 0] = math.sin(0.3)
    s0[..., 2] = math.cos(0.3)
    sim = LLGSimulation(model, temperature_K=0.0, damping=1e-4, time_step_s=1e-15, seed=1, spins=s0)
    phases = []
    for _ in range(200):
        sim.advance(5)
        phases.append(math.atan2(sim.spins[0, 0, 1], sim.spins[0, 0, 0]))
    phase = np.unwrap(phases)
    t = np.arange(1, 201) * 5e-15
    omega = np.polyfit(t, phase, 1)[0]
    f_ghz = omega / (2 * math.pi) / 1e9
    assert abs(f_ghz - 28.0249514) < 28.0249514 * 1e-5, f_ghz
    assert abs(GAMMA_E_RAD_PER_S_T / (2 * math.pi) / 1e9 - 28.0249514) < 1e-6


@pytest.mark.parametrize("shape", ["square", "triangular", "honeycomb"])
def test_energy_never_increases_with_damping_at_zero_temperature(shape):
    # dE/dt = -alpha gamma mu_s / (1 + alpha^2) |S x B_eff|^2 <= 0 at T = 0 (Gilbert 1955;
    # common practice as an integrator check).
    lat = Lattice(shape, 12, 12, 0.4, True)
    model = Model(lat, 2 * MU_B_J_PER_T, 2.0 * MEV_J, 0.3 * MEV_J, (0.2, 0, 1), (0, 0.1, 0.5))
    s = initial_spins(lat, "random", seed=4)
    sim = LLGSimulation(model, temperature_K=0.0, damping=0.1, time_step_s=1e-15, seed=1, spins=s)
    energies = [measure(model, sim.spins)[1]]
    for _ in range(150):
        sim.advance(10)
        energies.append(sim.measure()[1])
    e = np.array(energies)
    assert np.all(np.diff(e) <= 1e-9 * np.abs(e[:-1])), np.diff(e).max()
    # relaxation lowered the energy well below the random start (E = 0 on average)
    assert e[-1] < e[0] - 1.0
    # unit length is kept by the renormalised Heun scheme (common practice)
    assert np.allclose(np.linalg.norm(sim.spins, axis=-1), 1.0, atol=1e-12)


def test_same_seed_reproduces_run_exactly_and_other_seed_differs():
    # Counter-based noise: one seed reproduces a run bit for bit (common practice).
    lat = Lattice("square", 16, 16, 0.4, True)
    model = Model(lat, 3 * MU_B_J_PER_T, 1.0 * MEV_J, 0.1 * MEV_J)
    runs = []
    for seed in (7, 7, 8):
        sim = LLGSimulation(model, temperature_K=20.0, damping=0.1, time_step_s=1e-15, seed=seed)
        sim.advance(50)
        runs.append(sim.spins.copy())
    assert np.array_equal(runs[0], runs[1])
    assert not np.array_equal(runs[0], runs[2])
