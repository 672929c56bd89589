"""T = 0 relaxation helpers: stripe states, energy per site, the steepest-descent minimiser."""

import math

import numpy as np
import pytest
import reference

from thinfilm.engines.dipolar import DipolarField, dipolar_constant_T
from thinfilm.engines.relax import energy_per_site, relax, stripe_spins
from thinfilm.engines.stochastic_llg import LLGSimulation, stable_time_step
from thinfilm.input.units import MEV_J, MU_B_J_PER_T
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model

A_NM = 0.5
MU = 40 * MU_B_J_PER_T
G = dipolar_constant_T(MU, A_NM) * MU


def test_stripe_spins_layout():
    lat = Lattice("square", 12, 3, A_NM, True)
    s = stripe_spins(lat, 3, wall_width=1.5)
    assert s.shape == (3, 12, 3)
    np.testing.assert_allclose(np.linalg.norm(s, axis=-1), 1.0)
    assert np.all(s[0, :3, 2] > 0) and np.all(s[0, 3:6, 2] < 0) and np.all(s[0, 6:9, 2] > 0)
    np.testing.assert_allclose(s[1], s[0])  # uniform along y
    # Bloch: the in-plane part lies along y, sech of the distance to the wall
    np.testing.assert_allclose(s[..., 0], 0.0, atol=1e-15)
    np.testing.assert_allclose(s[0, 2, 1], 1 / math.cosh(0.5 / 1.5))
    np.testing.assert_allclose(s[0, :, 2].sum(), 0.0, atol=1e-12)
    sharp = stripe_spins(lat, 2, wall_width=0)
    assert set(np.unique(sharp[..., 2])) == {-1.0, 1.0}
    with pytest.raises(ValueError, match="multiple"):
        stripe_spins(lat, 5)


def test_energy_per_site_matches_llg_measure(rng):
    lat = Lattice("square", 8, 6, A_NM, True)
    model = Model(lat, MU, 3 * G, 8 * G, field_T=(0.1, 0, 0.2), dipolar=True)
    s = reference.random_spins(rng, 6, 8)
    sim = LLGSimulation(model, temperature_K=0, damping=1, time_step_s=1e-15, spins=s)
    assert energy_per_site(model, s) == pytest.approx(sim.measure()[1] * MEV_J, rel=1e-12)
    without = sim.measure()[1] * MEV_J - sim.dipolar.energy(s) / lat.n_sites
    assert energy_per_site(model, s, dipolar=False) == pytest.approx(without, rel=1e-12)


def test_relax_finds_the_lattice_bloch_wall():
    # continuum Bloch wall: sigma = 4 sqrt(A K), profile tanh(x / delta), delta = sqrt(A / K)
    # (Landau and Lifshitz 1935; e.g. Hubert and Schaefer, Magnetic Domains, 1998, from memory).
    # No dipolar field: two Bloch walls on a periodic chain of 2 x 60 columns, each costing
    # the discrete wall energy, 0.5 % below the continuum 4 sqrt(A K) = 2 sqrt(2 J K) at
    # delta = sqrt(J / 2K) = 3 (lattice correction O(a^2 / delta^2))
    j, k = 9.0, 0.5
    lat = Lattice("square", 120, 2, A_NM, True)
    model = Model(lat, MU, j * G, k * G)
    res = relax(model, stripe_spins(lat, 60, wall_width=1.0))
    assert res["converged"]
    up = np.zeros((2, 120, 3))
    up[..., 2] = 1.0
    sigma = (res["energy_J"] - energy_per_site(model, up)) * 120 / 2 / G
    cont = 2 * math.sqrt(2 * j * k)
    assert -0.01 < sigma / cont - 1 < -0.002, sigma / cont
    # the relaxed profile is the tanh of width 3 to a few per cent
    mz = res["spins"][0, :30, 2]
    np.testing.assert_allclose(mz, np.tanh((np.arange(30) + 0.5) / 3.0), atol=0.02)


def test_relax_is_a_fixed_point_of_damped_llg():
    j, keff = 4.95, 0.355  # scenarios/stripe_film.yaml, K/g = 7.13
    lat = Lattice("square", 20, 2, A_NM, True)
    model = Model(lat, MU, j * G, (keff + 6.7752) * G, dipolar=True)
    s0 = stripe_spins(lat, 10, wall_width=2.6)
    res = relax(model, s0)
    assert res["converged"] and res["iterations"] < 2000
    assert res["energy_J"] < energy_per_site(model, s0)
    # a double-precision field: the default single-precision FFTs of LLG runs would shift the
    # energy by ~1e-8 of itself, above this 1e-9 g comparison
    sim = LLGSimulation(model, temperature_K=0, damping=1.0,
                        time_step_s=stable_time_step(model, 0, 1.0), spins=res["spins"],
                        dipolar=DipolarField(lat, MU, precision="double"))
    sim.advance(200)
    assert np.abs(sim.spins - res["spins"]).max() < 1e-6
    assert sim.measure()[1] * MEV_J == pytest.approx(res["energy_J"], abs=1e-9 * G)


@pytest.mark.slow
def test_damped_llg_reaches_the_same_minimum():
    # the production integrator from the same stripe start: same energy once converged
    j, keff = 4.95, 0.355
    lat = Lattice("square", 20, 2, A_NM, True)
    model = Model(lat, MU, j * G, (keff + 6.7752) * G, dipolar=True)
    s0 = stripe_spins(lat, 10, wall_width=2.6)
    res = relax(model, s0)
    sim = LLGSimulation(model, temperature_K=0, damping=1.0,
                        time_step_s=stable_time_step(model, 0, 1.0), spins=s0)
    sim.advance(20000)
    assert sim.measure()[1] * MEV_J == pytest.approx(res["energy_J"], abs=1e-7 * G)
