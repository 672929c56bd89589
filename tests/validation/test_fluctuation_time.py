"""Fluctuation time of m_axis(t) in stochastic LLG: critical slowing down above Tc.

Expectation: the relaxation time of the order parameter grows as Tc is approached from above,
tau ~ xi^z (critical slowing down; Hohenberg & Halperin, Rev. Mod. Phys. 49, 435, 1977).
Film: square lattice, moment 1 muB, J = 1 meV, easy axis K = 5 J. Its Tc lies below the
Ising-limit value 2.269 J/kB (Onsager, Phys. Rev. 65, 117, 1944): the Monte Carlo fit of
Torelli & Olsen (2D Mater. 6, 015028, 2019) gives about 1.56 J/kB at K/J = 5, so
T = 1.6, 1.25 and 1.0 x 2.269 J/kB (about 2.3, 1.8 and 1.45 Tc) are all above Tc and approach
it in that order. With an axially symmetric energy, total m_z is conserved by
precession and relaxes through the damping only (from the LLG equation itself).
"""

import math

import numpy as np
import pytest

from thinfilm.analysis.fluctuation import exposure_verdict, fluctuation_time
from thinfilm.input.units import GAMMA_E_RAD_PER_S_T, KB_J_PER_K, MEV_J, MU_B_J_PER_T
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model

TC_ISING = 2.0 / math.log(1.0 + math.sqrt(2.0))  # kB Tc / J, Onsager 1944
JK = MEV_J / KB_J_PER_K  # J/kB in K for J = 1 meV


def _model(n):
    return Model(Lattice("square", n, n, 0.4, True), MU_B_J_PER_T, MEV_J, 5.0 * MEV_J,
                 np.array([0.0, 0.0, 1.0]))


FRACTIONS = (1.6, 1.25, 1.0)  # T / (Tc_Ising J/kB) of the three runs
DAMPING = 0.5


def _taus(n, plan, seed=11):
    m = _model(n)
    return [fluctuation_time(m, f * TC_ISING * JK, damping=DAMPING, time_step_s=2e-15,
                             duration_s=d, seed=seed, sample_every_s=0.05e-12, warmup_sweeps=200)
            for f, d in plan]


def brown_time_ps(temperature_K):
    """Rotational-diffusion time of a free classical moment, mu (1 + a^2) / (2 a gamma kB T):
    <S(t).S(0)> = exp(-t / tau) (Brown, Phys. Rev. 130, 1677, 1963)."""
    return (MU_B_J_PER_T * (1 + DAMPING**2)
            / (2 * DAMPING * GAMMA_E_RAD_PER_S_T * KB_J_PER_K * temperature_K) * 1e12)


def _check(r):
    r16, r13, r11 = r
    s = lambda a, b: math.hypot(a["tau_err_ps"], b["tau_err_ps"])  # noqa: E731
    # monotonic growth toward Tc: the end points must differ by 2 combined standard errors
    # (Sokal's error of tau_int, ~sqrt(20 tau / run) relative), the middle point must sit in
    # between (point estimates; one standard error apart at these run lengths)
    assert r11["tau_ps"] - r16["tau_ps"] > 2 * s(r11, r16)
    assert r11["tau_ps"] > r13["tau_ps"] > r16["tau_ps"]
    # disordered film: m_axis fluctuates about zero (within 5 of its own standard deviations
    # over sqrt(independent samples))
    for x, f in zip(r, FRACTIONS, strict=True):
        assert abs(x["m_axis_mean"]) < 5 * x["m_axis_std"] / math.sqrt(x["n_independent"])
        # time scale from theory: the free moment's Brown time is a lower bound (the well of
        # the anisotropy, K/kB T = 1.4 at the hottest point, and the ferromagnetic
        # correlations both slow the total moment down: Brown 1963; relaxational dynamics,
        # tau ~ chi / kinetic coefficient, Hohenberg & Halperin 1977). At the hottest point
        # (2.3 Tc) the two factors are each about 2 (barrier (e^s - 1)/s; high-temperature
        # series chi/chi_free ~ 1 + 4 K_J, both from memory), so tau < 10 tau_Brown there.
        # Measured with seeds 11-13: tau / tau_Brown = 3.0, 2.8, 4.2 at 2.3 Tc; 12-15 at 1.45 Tc
        tau_b = brown_time_ps(f * TC_ISING * JK)
        assert x["tau_ps"] > tau_b, (f, x["tau_ps"], tau_b)
    assert r16["tau_ps"] < 10 * brown_time_ps(FRACTIONS[0] * TC_ISING * JK), r16


def test_fluctuation_time_grows_toward_tc_from_above():
    r = _taus(10, [(1.6, 100e-12), (1.25, 200e-12), (1.0, 600e-12)])
    _check(r)
    # the verdict flips with the exposure: a ps exposure catches a partly averaged pattern,
    # a 10 ms exposure averages it out to grey; a 10 fs exposure freezes it
    tau_s = r[-1]["tau_ps"] * 1e-12
    assert exposure_verdict(tau_s, 1e-12) == "blurred/partly averaged"
    assert exposure_verdict(tau_s, 10e-3) == "averaged out to grey"
    assert exposure_verdict(tau_s, 1e-14) == "frozen"


def test_fluctuation_time_inputs():
    with pytest.raises(ValueError, match="temperature"):
        fluctuation_time(_model(4), 0.0, damping=0.5, time_step_s=1e-15, duration_s=1e-12)
    with pytest.raises(ValueError, match="samples"):
        fluctuation_time(_model(4), 10.0, damping=0.5, time_step_s=1e-15, duration_s=1e-12,
                         sample_every_s=0.5e-12)


@pytest.mark.slow
def test_fluctuation_time_grows_toward_tc_from_above_long():
    _check(_taus(16, [(1.6, 400e-12), (1.25, 800e-12), (1.0, 2000e-12)], seed=5))
