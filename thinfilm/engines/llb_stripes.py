"""Equilibrium stripe period of the coarse film at T = 0, by energy minimisation.

A box one period P long (periodic, two cells across: stripes along y) is started from two
Bloch walls and relaxed by the LLB at T = 0 (the LLG with |m| = 1, coupling 1); its energy
per area (exchange, anisotropy, prism-cell dipolar) is computed for periods on a grid around a
guess, and the period of least energy is the vertex of a parabola in ln P through the five
lowest points. The walls' positions are free, so the domain widths inside the period relax
too. Compared with :mod:`thinfilm.analysis.stripe_theory` in tests/test_coarse_stripes.py and
validation/coarse_stripe_period.py.
"""

import math

import numpy as np

from thinfilm.engines.llb import CoarseFilm
from thinfilm.input.parameter_table import ParameterTable

__all__ = ["relaxed_stripe_energy", "coarse_stripe_period"]


def _table(A, Ku, Ms, t_nm):
    return ParameterTable(np.array([0.0, 1.0]), [1.0, 1.0], [0.0, 0.0], [1.0, 1.0], [Ku, Ku],
                          [A, A], ms0_A_per_m=Ms, tc_K=float("nan"), thickness_nm=t_nm,
                          source="T = 0 continuum parameters")


def relaxed_stripe_energy(P_nm, cell_nm, *, A, Ku, Ms, t_nm, steps=4000, wall_nm=15.0):
    """Energy per area (J/m^2) of one relaxed stripe period P (nm) on cells of cell_nm."""
    nx = int(round(P_nm / cell_nm))
    P = nx * cell_nm
    x = (np.arange(nx) + 0.5) * cell_nm
    mz = np.tanh((x - P / 4) / wall_nm) * np.tanh((3 * P / 4 - x) / wall_nm)
    m = np.zeros((2, nx, 3))
    m[..., 2] = mz
    m[..., 1] = np.sqrt(np.clip(1 - mz**2, 0.0, 1.0))
    cf = CoarseFilm(_table(A, Ku, Ms, t_nm), cell_nm, nx, 2, dipolar=True, coupling=1.0, m=m)
    dt = cf.stable_time_step(cf.parameters(0.0))
    cf.advance(steps, 0.0, dt=dt)
    return sum(cf.energy_density(0.0).values()), P


def coarse_stripe_period(cell_nm, guess_nm, *, A, Ku, Ms, t_nm, span=0.5, points=7,
                         steps=4000):
    """Period (nm) of least energy, and the scanned (periods, energies)."""
    ps, es = [], []
    for f in np.exp(np.linspace(-span, span, points)):
        e, p = relaxed_stripe_energy(guess_nm * f, cell_nm, A=A, Ku=Ku, Ms=Ms, t_nm=t_nm,
                                     steps=steps)
        ps.append(p)
        es.append(e)
    ps, es = np.array(ps), np.array(es)
    i = int(np.argmin(es))
    if i in (0, len(es) - 1):
        raise ValueError("the energy minimum lies at the edge of the scanned periods; widen "
                         "the span or move the guess")
    sl = slice(max(i - 2, 0), min(i + 3, len(es)))
    c = np.polyfit(np.log(ps[sl]), es[sl], 2)
    return math.exp(-c[1] / (2 * c[0])), ps, es
