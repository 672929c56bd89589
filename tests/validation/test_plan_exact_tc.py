"""The heating plan's Tc on a film whose exact Tc is known: the square Ising limit (slow).

The whole path a user runs: a Monte Carlo sweep over two sizes (cluster moves), the Binder
crossing written to tc.json, and the plan built on that sweep. Reference: Onsager's
kB Tc / J = 2 / ln(1 + sqrt 2) (Phys. Rev. 65, 117, 1944) for the square Ising model, shifted to
first order in kB T / K for the finite anisotropy K/J = 1000, Tc' = Tc (1 - Tc / (K/J))
(derived in validation/ising_tc.py; the next order is (Tc/(K/J))^2 ~ 5e-6). Temperatures in K
use J/kB = 11.604518 K for J = 1 meV (CODATA 2018 values of e and kB), not the package's own
constants, so an error in the package's temperature scale also fails here.
"""

import json
import math

import pytest

from thinfilm.plan.heating_plan import make_plan

JK = 11.604518  # J/kB in K for J = 1 meV (CODATA 2018)
K_OVER_J = 1000.0
TC_ISING = 2.0 / math.log(1.0 + math.sqrt(2.0))  # Onsager 1944
TC_K = TC_ISING * (1.0 - TC_ISING / K_OVER_J) * JK
# finite-size shift of the U4 crossing of L = 16 and 32: the crossing approaches Tc like
# L^-(1/nu + omega) = L^-3 for the square Ising model (nu = 1, leading irrelevant exponent
# omega = 2; Binder, Z. Phys. B 43, 119, 1981 for the method, exponents from memory), so the
# shift is a few 1e-4 of Tc at L = 16 unless its amplitude is unusually large; 0.3 % allows an
# amplitude of 12 in units of Tc.
FINITE_SIZE = 0.003


@pytest.mark.slow
def test_plan_tc_of_an_ising_limit_film_is_onsagers(tmp_path):
    temps = [f"{g * TC_K:.5f} K" for g in (0.985, 0.995, 1.0, 1.005, 1.015)]
    sc = {"name": "ising-limit-film",
          "lattice": {"shape": "square", "cells": [32, 32], "spacing": "1 nm"},
          "material": {"moment": "1 muB", "exchange": "1 meV",
                       "anisotropy": {"constant": f"{K_OVER_J:g} meV", "axis": [0, 0, 1]}},
          "temperature": temps, "sizes": [16, 32], "initial": "random", "seed": 29,
          "dynamics": {"method": "monte-carlo", "sweeps": {"warmup": 1000, "samples": 20000},
                       "sample_every": 1, "damping": 0.5, "timestep": "1 fs"},
          "sweep": {"order": "independent", "snapshots": 4}}
    res = make_plan(sc, tmp_path / "plan", resolution="2 nm", exposure="10 ms",
                    field_of_view="5 um", workers=1, progress=False, llg_size=8,
                    llg_duration="4 ps", n_boot=150)
    p = res["plan"]
    tc_json = json.loads((tmp_path / "plan" / "tc.json").read_text())
    # the plan uses the sweep's crossing (not the susceptibility-peak fallback)
    assert p["tc_method"] == tc_json["method"] and tc_json["tc_K"] == p["tc_K"]
    # Tolerance: 3 bootstrap standard errors of the crossing plus the finite-size allowance;
    # the error must be below 0.5 % so that a 2 % error in Tc (or in the temperature scale)
    # fails: 3 x 0.5 % + 0.3 % = 1.8 %
    assert p["tc_err_K"] < 0.005 * TC_K, p["tc_err_K"]
    assert abs(p["tc_K"] - TC_K) < 3 * p["tc_err_K"] + FINITE_SIZE * TC_K, (p["tc_K"], TC_K)
