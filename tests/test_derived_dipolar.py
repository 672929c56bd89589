"""`thinfilm check`'s dipolar shape anisotropy and wall parameter against the model's energies."""

import math

import numpy as np
import pytest

from thinfilm.engines.dipolar import DipolarField
from thinfilm.engines.relax import energy_per_site
from thinfilm.input.derived import dipolar_shape_cost_J, wall_parameter_nm
from thinfilm.input.units import MU0, MU_B_J_PER_T
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model

MU = 40 * MU_B_J_PER_T


def _uniform_energy_gap(model, thickness_nm=None):
    """E(uniform up) - E(uniform in plane) per site (J), dipolar energy by Ewald sums."""
    lat = model.lattice
    dip = DipolarField(lat, model.moment_J_per_T, thickness_nm=thickness_nm)
    e = []
    for vec in ((0, 0, 1), (1, 0, 0)):
        s = np.zeros((lat.ny, lat.nx, 3))
        s[...] = vec
        e.append(energy_per_site(model, s, dipolar=dip))
    return e[0] - e[1]


@pytest.mark.parametrize("shape", ["square", "triangular", "honeycomb"])
def test_point_dipole_shape_cost_is_the_uniform_energy_gap(shape):
    # K = 0, J = 0: the gap is the dipolar term alone; the model's periodic Ewald sums are
    # checked against Glasser and Zucker's lattice sum elsewhere (test_dipolar); square:
    # (3/4) 4 zeta(3/2) beta(3/2) g = 6.775 g exactly (Glasser and Zucker lattice sum)
    lat = Lattice(shape, 8, 8, 0.5, True)
    model = Model(lat, MU, 0.0, 0.0, dipolar=True)
    cost = dipolar_shape_cost_J(model)
    assert cost == pytest.approx(_uniform_energy_gap(model), rel=1e-6)
    if shape == "square":
        g = MU0 * MU**2 / (4 * math.pi * (0.5e-9) ** 3)
        assert cost / g == pytest.approx(6.7752162, rel=1e-7)


def test_prism_shape_cost_is_the_slab_value():
    # a uniformly magnetised slab: mu0 Ms^2 / 2 per volume (standard magnetostatics)
    lat = Lattice("square", 8, 8, 0.5, True)
    model = Model(lat, MU, 0.0, 0.0, dipolar=True, dipolar_thickness_nm=0.6)
    volume = 0.5 * 0.5 * 0.6 * 1e-27
    assert dipolar_shape_cost_J(model) == pytest.approx(MU0 * (MU / volume) ** 2 / 2 * volume)
    assert dipolar_shape_cost_J(model) == pytest.approx(_uniform_energy_gap(model, 0.6), rel=1e-6)


def test_wall_parameter_uses_the_effective_anisotropy():
    lat = Lattice("square", 8, 8, 0.5, True)
    j = 5.5e-3 * 1.602176634e-19
    plain = Model(lat, MU, j, 1.0e-22, dipolar=False)
    dip = Model(lat, MU, j, 1.0e-22 + dipolar_shape_cost_J(Model(lat, MU, j, 0.0, dipolar=True)),
                dipolar=True)
    # the same K_eff gives the same wall: Delta = sqrt(J a^2 / (2 K_eff)) on the square lattice
    assert wall_parameter_nm(dip) == pytest.approx(wall_parameter_nm(plain), rel=1e-9)
    assert wall_parameter_nm(plain) == pytest.approx(math.sqrt(j * 0.25 / (2 * 1.0e-22)), rel=1e-12)
    assert wall_parameter_nm(Model(lat, MU, j, 1.0e-22, dipolar=True)) is None  # K_eff < 0
