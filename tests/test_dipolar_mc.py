"""Monte Carlo with the dipolar field: the exact sequential scheme samples the energy it reports."""

import numpy as np
import pytest

from thinfilm.engines.dipolar import dipolar_constant_T
from thinfilm.engines.dipolar_term import film_terms
from thinfilm.engines.montecarlo import MonteCarlo
from thinfilm.input.dipolar_spec import POINT_DIPOLE_SUM
from thinfilm.input.units import MEV_J, MU_B_J_PER_T
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model


def _model(periodic, thickness=None, shape="square"):
    lat = Lattice(shape, 8, 6, 0.3, periodic)
    return Model(lat, 20 * MU_B_J_PER_T, 0.5 * MEV_J, 0.05 * MEV_J, dipolar=True,
                 dipolar_thickness_nm=thickness)


@pytest.mark.parametrize("periodic,thickness", [(True, None), (False, None), (True, 0.4),
                                                (False, 0.4)])
def test_maintained_field_gives_the_exact_energy(periodic, thickness):
    # after many accepted moves the energy from the updated field equals a fresh FFT sum
    # (round-off only), so every move was accepted against the exact energy change
    model = _model(periodic, thickness)
    mc = MonteCarlo(model, 30.0, seed=3, parallel=False)
    assert mc.path == "generic-dipolar"
    r = mc.run(5, 3, 2)
    n = model.lattice.n_sites
    e_fresh = film_terms(model).energy(mc.spins) / n
    assert r["energy_J"][-1] == pytest.approx(e_fresh, rel=1e-10)
    assert r["acceptance"]["gaussian"] > 0.05


def test_uniform_states_against_the_lattice_sum():
    # periodic point dipoles, uniform states: E/N = (g/2) sum'(a/r)^3 (1 - 3 cos^2) with
    # g = mu0 mu_s^2 / (4 pi a^3): perpendicular +g S/2, in plane -g S/4 (isotropic in-plane
    # sum, <cos^2> = 1/2), S = sum'(a/r)^3 of the infinite square lattice (Ewald; the project's
    # POINT_DIPOLE_SUM, 9.0336 from memory)
    lat = Lattice("square", 8, 8, 0.3, True)
    model = Model(lat, 20 * MU_B_J_PER_T, 0.0, 0.0, dipolar=True)
    g = dipolar_constant_T(model.moment_J_per_T, 0.3) * model.moment_J_per_T
    s_sum = POINT_DIPOLE_SUM["square"]
    for vec, want in (((0, 0, 1), 0.5 * g * s_sum), ((1, 0, 0), -0.25 * g * s_sum)):
        mc = MonteCarlo(model, 1.0, seed=1, initial_spins=np.broadcast_to(vec, (8, 8, 3)))
        assert mc.measure()["energy_J"] == pytest.approx(want, rel=1e-9)


def test_one_prism_samples_the_boltzmann_law_of_its_self_energy():
    # a lone prism site (0.5 x 0.5 x 0.1 nm) has only its self demagnetising energy,
    # E = -(mu/2) S.W S = const - kappa cos^2(theta) with kappa = (mu/2)(W_zz - W_xx) < 0 (easy
    # plane); the exact Boltzmann average <cos^2> = int u^2 exp(s u^2) du / int exp(s u^2) du
    # over u in [-1, 1], s = kappa / kT (integrated by scipy.integrate.quad). This checks the
    # self term of the move energy, which a field-only change would get wrong.
    from scipy.integrate import quad

    from thinfilm.input.units import KB_J_PER_K

    lat = Lattice("square", 1, 1, 0.5, False)
    model = Model(lat, 1000 * MU_B_J_PER_T, 0.0, 0.0, dipolar=True, dipolar_thickness_nm=0.1)
    w = film_terms(model).dipolar.self_tensor_T(0)
    kappa = 0.5 * model.moment_J_per_T * (w[2, 2] - w[0, 0])
    assert kappa < 0
    temp = abs(kappa) / 2.0 / KB_J_PER_K  # s = -2
    s = kappa / (KB_J_PER_K * temp)
    want = (quad(lambda u: u * u * np.exp(s * u * u), -1, 1)[0]
            / quad(lambda u: np.exp(s * u * u), -1, 1)[0])
    mc = MonteCarlo(model, temp, seed=5, over_relaxation=0)
    c2 = mc.run(200, 40000, 1)["m_vector"][:, 2] ** 2
    blocks = c2.reshape(40, -1).mean(axis=1)  # 40 blocks of 1000 sweeps (>> tau_int)
    err = blocks.std(ddof=1) / np.sqrt(len(blocks))
    assert abs(c2.mean() - want) < 5 * err  # 5 standard errors of the block means
