"""A labyrinth of perpendicular domains narrows when the film is held warm: the stripe demo's film.

Thin-film domain theory (Kaplan and Gehring, J. Magn. Magn. Mater. 128, 111 (1993)) gives the
equilibrium width L ~ delta exp(sigma_w / 4g) with the wall energy sigma_w = 4 sqrt(A K_eff).
On heating K_eff = K - (shape cost) g falls faster than the exchange and the dipolar constant
(single-ion anisotropy scales as m^3, exchange and dipolar energies as m^2: Callen and Callen,
J. Phys. Chem. Solids 27, 1271 (1966)), so the equilibrium width falls: a labyrinth prepared at
the T = 0 width (24 sites for J/g = 8, K_eff = 0.6 g, validation/stripe_period.py) must narrow
at a temperature where its domains are still saturated, and must not at a low temperature
(the control: the narrowing is thermal, not the relaxation of the prepared state). The
tolerances come from the runs below (fixed seeds), with the mean half-period from the S(k)
ring (36 ps after the start to 360 or 720 ps):
128^2, 360 ps: -12.3 % at 17 K (<|m_z|> 0.75), -0.2 % at 2 K (0.90), 8 s each;
160^2, 720 ps (slow): -23.0 % at 17 K (0.72), +0.9 % at 2 K (0.90), 30 s each.
Pinned walls or a thermal field that did not drive the walls would fail the first check; a
pattern that kept relaxing from its prepared state would fail the control.
"""

import numpy as np
import pytest

from thinfilm.analysis.patterns import stripe_period
from thinfilm.engines.dipolar import dipolar_constant_T
from thinfilm.engines.stochastic_llg import LLGSimulation
from thinfilm.input.units import MU_B_J_PER_T
from thinfilm.model.labyrinth import labyrinth_spins
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model

A_NM = 0.5
MU = 40 * MU_B_J_PER_T
G = dipolar_constant_T(MU, A_NM) * MU  # dipolar constant (J)
J_OVER_G, K_OVER_G = 8.0, 7.375  # K_eff = 0.6 g: walls sqrt(J / 2 K_eff) = 2.6 sites wide
DT = 36e-15


def _hold(n, temperature_K, time_ps, seed=13):
    """(mean half-period in sites after 36 ps, after time_ps; <|m_z|> at the end)."""
    lat = Lattice("square", n, n, A_NM, True)
    model = Model(lat, MU, J_OVER_G * G, K_OVER_G * G, dipolar=True)
    sim = LLGSimulation(model, temperature_K=temperature_K, damping=0.5, time_step_s=DT,
                        seed=seed, spins=labyrinth_spins(lat, 24 * A_NM, seed=seed))

    def half():
        return stripe_period(sim.spins[..., 2], A_NM)["mean_period_nm"] / (2 * A_NM)

    sim.advance(1000)  # 36 ps: the walls settle
    start = half()
    sim.advance(int(round(time_ps * 1e-12 / DT)) - 1000)
    return start, half(), float(np.abs(sim.spins[..., 2]).mean())


@pytest.mark.parametrize("n, time_ps, least", [(128, 360.0, 0.07),
                                               pytest.param(160, 720.0, 0.15,
                                                            marks=pytest.mark.slow)])
def test_labyrinth_narrows_when_warm_and_keeps_its_width_when_cold(n, time_ps, least):
    start, end, mz = _hold(n, 17.0, time_ps)
    assert end < (1 - least) * start, (start, end)
    assert mz > 0.68  # the domains are intact: the narrowing is not a break-up
    start, end, mz = _hold(n, 2.0, time_ps)
    assert abs(end / start - 1) < 0.03, (start, end)
    assert mz > 0.85
