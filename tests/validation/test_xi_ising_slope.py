"""Correlation length above Tc in the Ising limit: growth toward Tc with exponent nu = 1 (slow)."""

import sys
from pathlib import Path

import numpy as np
import pytest

sys.path.insert(0, str(Path(__file__).resolve().parents[2] / "validation"))
import xi_ising_slope as xs  # noqa: E402


@pytest.mark.slow
def test_xi_grows_toward_tc_with_slope_close_to_minus_nu():
    # 2D Ising: xi ~ f+ |t|^-nu with nu = 1 (Onsager, Phys. Rev. 65, 117, 1944); the exact
    # exponential correlation length 1/(2 (K* - K)) (Onsager 1944; McCoy and Wu 1973) has an
    # effective slope of -0.92 over t = 0.06 .. 0.27, printed by the script.
    ts = np.array([0.06, 0.09, 0.13, 0.19, 0.27])
    rows, slope, slope_exact, exact = xs.run(ts, 20000, seed=3)
    oz = np.array([r[2] for r in rows])
    err = np.array([r[3] for r in rows])
    assert np.all(np.diff(oz) < 0), oz  # xi grows as Tc is approached
    # each point within 4 jackknife errors plus 10 % (OZ-fit vs exponential length, finite L)
    assert np.all(np.abs(oz - exact) < 4 * err + 0.10 * exact), (oz, err, exact)
    # slope: within 0.15 of the exact effective slope and within 0.2 of -nu = -1
    assert abs(slope - slope_exact) < 0.15, (slope, slope_exact)
    assert abs(slope + 1.0) < 0.2, slope
