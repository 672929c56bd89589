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
