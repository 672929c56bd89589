"""MonteCarlo driver: Boltzmann statistics of single spins, determinism, resuming."""

import numpy as np
import pytest
from scipy import integrate

from thinfilm.analysis.thermo import blocking_error
from thinfilm.engines.montecarlo import MonteCarlo
from thinfilm.input.units import KB_J_PER_K, MEV_J, MU_B_J_PER_T
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model

JK = MEV_J / KB_J_PER_K  # 1 meV / kB = 11.6045 K


def free_spins(n=32, field_T=(0.0, 0.0, 0.0), anisotropy_J=0.0, exchange_J=0.0):
    lat = Lattice("square", n, n, 0.3, True)
    return Model(lat, MU_B_J_PER_T, exchange_J, anisotropy_J, (0, 0, 1), np.array(field_T))


def test_free_spins_follow_the_langevin_function():
    # exact (Langevin 1905): <S.b> = coth(xi) - 1/xi = 0.3130352855 at xi = mu B/(kB T) = 1
    temp = 5.0
    b = KB_J_PER_K * temp / MU_B_J_PER_T  # xi = 1
    mc = MonteCarlo(free_spins(field_T=(b, 0, 0)), temp, seed=1)
    r = mc.run(200, 3000)
    mx = r["m_vector"][:, 0]
    err = blocking_error(mx)
    # tolerance: 4 standard errors of the mean (blocking), i.e. a false alarm ~1e-4
    assert abs(mx.mean() - 0.3130352855) < 4 * err
    assert err < 0.002
    assert r["acceptance"]["gaussian"] > 0.3  # sigma may hit its cap for free spins


@pytest.mark.parametrize("reflection", [False, True])
def test_uniaxial_spins_follow_the_boltzmann_distribution(reflection):
    # exact Boltzmann average for one uniaxial spin, sigma = K/(kB T) = 2:
    # <cos^2> = int x^2 e^(2x^2) dx / int e^(2x^2) dx = 0.5313 (Boltzmann weight e^(-E/kBT) of
    # E = -K cos^2 theta with the uniform measure d(cos theta) on the sphere, by quadrature)
    temp = 3.0
    kj = 2.0 * KB_J_PER_K * temp
    num = integrate.quad(lambda x: x * x * np.exp(2 * x * x), -1, 1)[0]
    den = integrate.quad(lambda x: np.exp(2 * x * x), -1, 1)[0]
    mc = MonteCarlo(free_spins(anisotropy_J=kj), temp, seed=2, reflection=reflection)
    mc.warmup(200)
    vals = np.array([np.mean(mc.spins[..., 2] ** 2) for _ in mc.samples(600)])
    # tolerance: 4 blocking standard errors of the mean over samples
    assert abs(vals.mean() - num / den) < 4 * blocking_error(vals)
    assert abs(vals.mean() - num / den) < 0.01


def test_reflection_move_crosses_a_high_barrier():
    # exact: independent spins with K/(kB T) = 40 have <S_z> = 0 by symmetry; the barrier
    # (e^-40) stops small Gaussian steps, the axis reflection does not (common practice)
    temp = 1.0
    model = free_spins(n=16, anisotropy_J=40 * KB_J_PER_K * temp)
    stuck = MonteCarlo(model, temp, seed=3, initial_spins="ordered", reflection=False)
    free = MonteCarlo(model, temp, seed=3, initial_spins="ordered", reflection=True)
    a = stuck.run(100, 200)["m_order"]
    b = free.run(100, 200)["m_order"]
    assert a.mean() > 0.95
    # 256 independent +-1 spins: std of the mean ~ 1/16 per sample; 200 samples
    assert abs(b.mean()) < 4 / 16 / np.sqrt(200) + 0.01


def heis(n=12, shape="square", kk=0.5):
    lat = Lattice(shape, n, n, 0.3, True)
    return Model(lat, MU_B_J_PER_T, MEV_J, kk * MEV_J, (0, 0, 1), np.array([0.0, 0.0, 1.0]))


def test_runs_are_deterministic_and_seed_dependent():
    a = MonteCarlo(heis(), 10.0, seed=5).run(30, 20)
    b = MonteCarlo(heis(), 10.0, seed=5).run(30, 20)
    c = MonteCarlo(heis(), 10.0, seed=6).run(30, 20)
    assert np.array_equal(a["energy_J"], b["energy_J"])
    assert np.array_equal(a["m_vector"], b["m_vector"])
    assert not np.array_equal(a["energy_J"], c["energy_J"])


def test_resume_from_state_continues_the_same_chain():
    one = MonteCarlo(heis(shape="triangular"), 10.0, seed=7)
    one.warmup(40)
    one.sweep(20)
    first = MonteCarlo(heis(shape="triangular"), 10.0, seed=7)
    first.warmup(40)
    first.sweep(10)
    second = MonteCarlo(heis(shape="triangular"), 10.0, seed=7, initial_spins="ordered")
    second.state = first.state
    second.sweep(10)
    assert np.array_equal(one.spins, second.spins)
    assert second.state["sweep"] == 60 and second.sigma == one.sigma


def test_parallel_and_serial_drivers_agree_bitwise():
    a = MonteCarlo(heis(shape="honeycomb"), 8.0, seed=9, parallel=True).run(20, 15)
    b = MonteCarlo(heis(shape="honeycomb"), 8.0, seed=9, parallel=False).run(20, 15)
    assert np.array_equal(a["energy_J"], b["energy_J"])


def test_run_series_matches_measure_and_reference_energy():
    import reference

    model = heis(shape="square")
    mc = MonteCarlo(model, 6.0, seed=4)
    r = mc.run(10, 5, sample_every=3)
    e = reference.energy(model.lattice, mc.spins, exchange_J=model.exchange_J,
                         anisotropy_J=model.anisotropy_J, axis=model.axis,
                         moment=model.moment_J_per_T, field_T=model.field_T)
    assert r["energy_J"][-1] * model.lattice.n_sites == pytest.approx(e, rel=1e-10)
    assert r["energy_meV"][-1] == pytest.approx(r["energy_J"][-1] / MEV_J)
    assert r["m_order"][-1] == pytest.approx(mc.spins[..., 2].mean())
    assert r["sweep"].tolist() == [13, 16, 19, 22, 25]
    d = mc.measure()
    assert d["energy_J"] == pytest.approx(r["energy_J"][-1], rel=1e-12)


def test_sigma_is_tuned_in_warmup_and_frozen_while_sampling():
    mc = MonteCarlo(heis(kk=50.0), 0.5 * JK, seed=1, initial_spins="ordered")
    mc.warmup(200)
    s = mc.sigma
    assert s < 0.3  # stiff spins need small steps
    r = mc.run(0, 50)
    assert mc.sigma == s and 0.35 < r["acceptance"]["gaussian"] < 0.65


def test_bad_inputs_are_refused():
    with pytest.raises(ValueError):
        MonteCarlo(heis(), 0.0, seed=1)
    with pytest.raises(ValueError):
        MonteCarlo(heis(), 1.0, seed=1, stream=0)
    with pytest.raises(ValueError):
        MonteCarlo(Model(Lattice("square", 4, 1, 0.3, True), MU_B_J_PER_T, MEV_J, 0.0),
                   1.0, seed=1)
    with pytest.raises(ValueError):
        MonteCarlo(heis(), 1.0, seed=1, initial_spins=np.zeros((3, 3, 3)))


def test_move_sets_sample_the_same_distribution():
    # common practice: every valid move set has the same stationary distribution, so runs
    # with and without over-relaxation / reflection must agree (exchange, anisotropy and an
    # oblique field all active, so every acceptance rule matters). Tolerance: 4 combined
    # jackknife errors.
    from thinfilm.analysis.thermo import thermodynamics

    lat = Lattice("triangular", 8, 8, 0.3, True)
    model = Model(lat, MU_B_J_PER_T, MEV_J, 0.7 * MEV_J, (0, 0, 1), np.array([3.0, 0.0, 2.0]))
    temp = 2.0 * JK
    out = []
    for n_or, refl in [(0, False), (3, True)]:
        r = MonteCarlo(model, temp, seed=12, over_relaxation=n_or, reflection=refl).run(
            300, 6000)
        out.append(thermodynamics(r["energy_J"], r["m_order"], r["m_vector"], lat.n_sites,
                                  temp))
    a, b = out
    for key in ("energy_meV", "m_abs", "m_norm"):
        assert abs(a[key] - b[key]) < 4 * np.hypot(a[key + "_err"], b[key + "_err"]), key
