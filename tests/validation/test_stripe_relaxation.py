"""Stripe domains from the dipolar field: a consistency check of our model at T = 0.

Not a published value: with the dipole-dipole field on and K just above the out-of-plane shape
cost of the square lattice of point dipoles (6.78 g per site, g = mu0 mu_s^2 / (4 pi a^3),
from the uniform-state energies of this model), a random state relaxes into perpendicular
domains with a finite period; the same film without the dipolar field and with the anisotropy
that the uniform state then sees (K - 6.78 g) coarsens towards one domain. A film with sharp
walls (J/g = 5, K/g = 7.1), on small lattices.
"""

import numpy as np
import pytest

from thinfilm.analysis.patterns import stripe_orientation, stripe_period
from thinfilm.engines.dipolar import dipolar_constant_T
from thinfilm.engines.stochastic_llg import LLGSimulation, initial_spins
from thinfilm.input.units import MU_B_J_PER_T
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model

A_NM = 0.5
MU = 40 * MU_B_J_PER_T
G = dipolar_constant_T(MU, A_NM) * MU  # dipolar constant (J)
SHAPE_COST = 6.775  # K/g where the uniform up and in-plane states have equal energy (this model)


def _relax(nx, ny, k_over_g, dipolar, steps, seed=2):
    lat = Lattice("square", nx, ny, A_NM, True)
    model = Model(lat, MU, 5.0 * G, k_over_g * G, dipolar=dipolar)
    sim = LLGSimulation(model, temperature_K=0.0, damping=0.5, time_step_s=40e-15,
                        spins=initial_spins(lat, "random", seed=seed))
    sim.advance(steps)
    return sim


def test_shape_cost_is_the_reorientation_of_the_uniform_state():
    # E(up) - E(in plane) per spin = -K + SHAPE_COST g: zero at K = SHAPE_COST g
    lat = Lattice("square", 16, 16, A_NM, True)
    e = {}
    for name, vec in (("up", (0, 0, 1)), ("plane", (1, 0, 0))):
        s = np.zeros((16, 16, 3))
        s[...] = vec
        sim = LLGSimulation(Model(lat, MU, 5.0 * G, SHAPE_COST * G, dipolar=True),
                            temperature_K=0.0, damping=0.5, time_step_s=40e-15, spins=s)
        e[name] = sim.measure()[1]
    assert abs(e["up"] - e["plane"]) < 2e-3 * abs(e["up"])


def test_dipolar_film_relaxes_into_stripes():
    # a 64 x 16 strip: the stripes run across it (short walls), so their order is clear
    sim = _relax(64, 16, 7.1, True, 4000)
    f = sim.spins[..., 2]
    period_a = stripe_period(f, A_NM)["period_nm"] / A_NM
    order = stripe_orientation(f, A_NM)["order"]
    assert 12 <= period_a <= 24, period_a  # 6 to 12 nm: several stripes in the 32 nm strip
    assert order > 0.1, order  # a random state gives about 0.01 .. 0.1 on this strip
    assert abs(f.mean()) < 0.2  # up and down domains in equal parts
    assert np.abs(f).mean() > 0.8  # perpendicular domains, not an in-plane state


@pytest.mark.parametrize("seed", [2, 3])
def test_without_dipolar_the_film_coarsens(seed):
    # same J, the anisotropy the uniform state sees with the dipolar field (K - shape cost)
    sim = _relax(32, 32, 7.1 - SHAPE_COST, False, 20000, seed)
    f = sim.spins[..., 2]
    uniform = abs(f.mean()) > 0.9
    # or one band wrapped round the torus: its period is the box
    band = stripe_period(f, A_NM)["period_nm"] / A_NM > 30
    assert uniform or band, (f.mean(), stripe_period(f, A_NM)["period_nm"])
