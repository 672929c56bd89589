"""Every correlation length the sweep table carries, against exact values.

The sweep (thinfilm/runs/sweep_point.py) fills ``correlation_length_nm`` (second moment,
disordered or ordered form), ``correlation_length_fit_nm`` (Ornstein-Zernike fit of C(r)) and
``correlation_length_sk_nm`` (OZ fit of S(k)) by calling
:func:`thinfilm.analysis.correlation.correlation_length` and
:func:`thinfilm.analysis.structure.structure_factor_length` on its snapshots; the tests call
the same two functions the same way. (``correlation_length_instrument_nm`` is the second
moment of blurred images: it is the first estimator applied to other fields.)

1. Exact input (fast): fields whose structure factor is exactly the lattice OZ form
   S(k) = 1 / (khat^2 + xi^-2), khat^2 = 4 sin^2(kx/2) + 4 sin^2(ky/2) (Ornstein and Zernike
   1914; every mode's amplitude set exactly, random phases). Both second-moment forms and the
   S(k) fit then return xi up to rounding (they are exact for this spectrum by construction:
   Cooper, Freedman and Preston, Nucl. Phys. B 210, 210, 1982). The C(r) fit assumes the
   continuum form K0(r/xi), while C(r) here is the lattice Green function, whose short-range
   part differs by lattice terms that fall like a/xi (-0.56, -0.32, -0.22 % at xi = 4, 6, 8 a
   with the fit starting at r = 2 a, computed): allowed 0.5 % at xi = 8 a. A 2 % bias in any
   estimator fails.

2. Monte Carlo data (slow): the square Ising limit (K/J = 1000) at t = 0.2 above the shifted
   Tc' (validation/ising_tc.py), L = 26 ~ 8 xi, against the exact lengths of Onsager (Phys.
   Rev. 65, 117, 1944) and McCoy and Wu (The Two-Dimensional Ising Model, 1973) at the Ising
   coupling of the finite-K model (validation/xi_exact.py: xi_1p, the second-moment length of
   the one-particle part, for the two S(k)-based estimators; xi_exp, the exponential length,
   for the C(r) fit, whose K0 form is the one-particle part of the Ising C(r) in the scaling
   limit: Wu, McCoy, Tracy and Barouch, Phys. Rev. B 13, 316, 1976; from memory). The
   statistical errors are about 1.3 % of xi here, so this part resolves biases of about 5 %;
   part 1 is the 2 % test of each estimator.
"""

import math
import sys
from pathlib import Path

import numpy as np
import pytest

from thinfilm.analysis.correlation import correlation_length
from thinfilm.analysis.structure import structure_factor_length
from thinfilm.engines.montecarlo import MonteCarlo
from thinfilm.model.lattice import Lattice

sys.path.insert(0, str(Path(__file__).resolve().parents[2] / "validation"))
import xi_exact as xe  # noqa: E402
from ising_tc import J_OVER_KB, corrected_tc, ising_model  # noqa: E402


def exact_oz_fields(n, xi, m, seed):
    """m periodic n x n fields (spacing 1) whose |F(k)|^2 / N is exactly the lattice OZ S(k)."""
    rng = np.random.default_rng(seed)
    k = 2 * np.pi * np.fft.fftfreq(n)
    kx, ky = np.meshgrid(k, k)
    spec = 1.0 / ((2 * np.sin(kx / 2)) ** 2 + (2 * np.sin(ky / 2)) ** 2 + xi**-2)
    w = np.fft.fft2(rng.standard_normal((m, n, n)))  # Hermitian: the result is real
    return np.fft.ifft2(w / np.abs(w) * np.sqrt(n * n * spec)).real


def _lengths(fields, lat, ordered=False):
    """The three table lengths as the sweep computes them (nm)."""
    geo = (lat.positions_nm, lat.box_nm, lat.period)
    r = correlation_length(fields, *geo, periodic=True, subtract_mean=ordered)
    s = structure_factor_length(fields, *geo, spacing_nm=lat.spacing_nm)
    return r, s


@pytest.mark.parametrize("n, xi", [(64, 4.0), (128, 8.0)])
def test_every_estimator_returns_the_length_of_an_exact_oz_spectrum(n, xi):
    lat = Lattice("square", n, n, 1.0, True)
    fields = exact_oz_fields(n, xi, 2, seed=n)
    r, s = _lengths(fields, lat)
    assert r["second_moment_nm"] == pytest.approx(xi, rel=1e-9)
    assert s["xi_nm"] == pytest.approx(xi, rel=1e-9)
    ordered, _ = _lengths(fields, lat, ordered=True)
    assert ordered["second_moment_nm"] == pytest.approx(xi, rel=1e-9)
    # C(r) fit: lattice terms of order a/xi (module doc): 0.5 % at xi = 8 a, 1 % at 4 a
    allow = 0.04 / xi
    assert abs(r["fit_nm"] / xi - 1) < allow, r["fit_nm"]


@pytest.mark.slow
def test_table_lengths_match_the_exact_ising_length_on_monte_carlo_data():
    # t = 0.2 above Tc' (xi_1p = 3.196, xi_exp = 3.209), L = 26, 16000 snapshots one cluster
    # sweep apart, about 40 s of CPU and 0.3 GB (the estimators hold float64 stacks).
    t = 0.2
    temp = corrected_tc("square") * (1 + t)
    model = ising_model("square", 26)
    lat = model.lattice
    mc = MonteCarlo(model, temp * J_OVER_KB, seed=29, initial_spins="random",
                    moves=("metropolis", "cluster"))
    mc.warmup(500)
    n = 16000
    fields = np.empty((n, 26, 26), dtype=np.float32)
    for i in range(n):
        mc.sweep(1)
        fields[i] = mc.spins[..., 2]
    r, s = _lengths(fields, lat)
    a = lat.spacing_nm
    k = xe.ising_coupling(temp)
    xi_1p, xi_exp = xe.xi_second_moment("square", k), xe.xi_exponential("square", k)
    # Tolerances: 3 jackknife errors (20 and 10 blocks) plus a systematic allowance:
    # second moment 0.1 % (three-particle states and the torus at L ~ 8 xi,
    # validation/xi_exact.py); S(k) fit 0.3 % (that, plus the departure of the Ising S(k) from
    # the OZ form over k xi <= 2, a (k xi)^4 term of relative size ~ 4e-4: Campostrini et al.,
    # Phys. Rev. E 57, 184, 1998, from memory); C(r) fit 1 % (the lattice terms of part 1 at
    # xi = 3.2 a, -0.7 %, plus the three-particle part of C(r) near the fit's start).
    checks = [("second moment", r["second_moment_nm"] / a, r["second_moment_err_nm"] / a,
               xi_1p, 0.001),
              ("S(k) fit", s["xi_nm"] / a, s["xi_err_nm"] / a, xi_1p, 0.003),
              ("C(r) fit", r["fit_nm"] / a, r["fit_err_nm"] / a, xi_exp, 0.01)]
    for name, val, err, exact, allow in checks:
        assert math.isfinite(val) and err > 0, (name, val, err)
        assert abs(val - exact) < 3 * err + allow * exact, (name, val, err, exact)
    # statistical power (16000 snapshots; measured 3.221(40), 3.188(40) against 3.196 and
    # 3.117(30) against 3.209): each error is about 1.3 % of xi, so this check resolves biases
    # of about 5 % on Monte Carlo data; the 2 % test of every estimator is the exact-spectrum
    # test above (resolving 2 % here needs ~6x the snapshots, ~1 GB of fields). Each error
    # must stay below 1.5 % or the check loses that power
    for name, val, err, exact, _ in checks:
        assert err < 0.015 * exact, (name, val, err)
