"""Exchange per bond in both engines: independent dimers with their own J.

Two classical unit spins with E = -J S1.S2 (no field, no anisotropy): the relative angle has
weight sin(theta) exp(J cos(theta)/kB T), so <S1.S2> = L(J/kB T) = coth(x) - 1/x (derived; the
Langevin function, Langevin 1905). A code that ignored the per-bond J (e.g. used the mean) would
give one value for every dimer.
"""

import math

import numpy as np

from thinfilm.engines.disordered_llg import SiteLLG
from thinfilm.engines.disordered_mc import SiteMonteCarlo
from thinfilm.input.units import KB_J_PER_K, MEV_J, MU_B_J_PER_T
from thinfilm.model.lattice import Lattice
from thinfilm.model.site_parameters import SiteParameters

NY = 256
TEMP = MEV_J / KB_J_PER_K  # kB T = 1 meV
J_ROWS = (1.0, 3.0)  # meV, even and odd rows


def _dimers():
    """Open 2 x NY square film, only the horizontal bond of each row, J by row parity."""
    lat = Lattice("square", 2, NY, 0.3, periodic=False)
    ex = np.zeros((NY, 2, 4))
    j_row = np.where(np.arange(NY) % 2 == 0, J_ROWS[0], J_ROWS[1]) * MEV_J
    ex[:, 0, 1] = j_row  # slot 1: right neighbour of column 0
    ex[:, 1, 0] = j_row  # slot 0: left neighbour of column 1
    return SiteParameters(lat, MU_B_J_PER_T, ex, np.zeros((NY, 2)),
                          np.broadcast_to([0.0, 0.0, 1.0], (NY, 2, 3)),
                          np.full((NY, 2), MU_B_J_PER_T), np.ones((NY, 2), bool))


def _langevin(x):
    return 1.0 / math.tanh(x) - 1.0 / x


def _check(mean_dot):
    for parity, j in enumerate(J_ROWS):
        got = mean_dot[parity::2].mean()
        # 128 dimers x ~200 independent samples: std of the mean ~ 0.003
        assert abs(got - _langevin(j)) < 0.02, (j, got, _langevin(j))
    assert _langevin(J_ROWS[1]) - _langevin(J_ROWS[0]) > 0.3


def test_monte_carlo_dimers():
    mc = SiteMonteCarlo(_dimers(), TEMP, seed=6, over_relaxation=0, parallel=False)
    mc.warmup(300)
    acc = np.zeros(NY)
    for _ in range(800):
        mc.sweep(2)
        acc += np.einsum("ic,ic->i", mc.spins[:, 0], mc.spins[:, 1])
    _check(acc / 800)


def test_llg_dimers():
    # alpha = 1, dt = 2 fs: gamma B dt <= 0.02 rad at the strongest exchange field (51 T)
    sim = SiteLLG(_dimers(), temperature_K=TEMP, damping=1.0, time_step_s=2e-15, seed=2,
                  spins=np.random.default_rng(0).normal(size=(NY, 2, 3)))
    sim.advance(4000)
    acc = np.zeros(NY)
    n = 400
    for _ in range(n):
        sim.advance(40)
        acc += np.einsum("ic,ic->i", sim.spins[:, 0], sim.spins[:, 1])
    _check(acc / n)
