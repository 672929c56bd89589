"""Exchange from a measured Tc: the Ising limit, round trips through the table, error
propagation, the shipped table against published values, scenario form and `thinfilm check`."""

import copy
import math

import numpy as np
import pytest

from thinfilm.cli import main
from thinfilm.input.calibration import (
    ISING_TC,
    calibration_table,
    continuum_from_tc,
    exchange_from_tc,
    reduced_tc,
)
from thinfilm.input.errors import InputError, ScenarioError
from thinfilm.input.scenario import load_scenario
from thinfilm.input.units import KB_J_PER_K, MEV_J

# A smooth stand-in table (Torelli-Olsen form, 2D Mater. 6, 015028 (2019)) so that the
# inversion is tested independently of the Monte Carlo numbers; 2 % errors.
X = np.array([1e-3, 1e-2, 0.1, 1.0, 10.0])


def _table():
    out = {}
    for shape, z in (("square", 4), ("triangular", 6), ("honeycomb", 3)):
        tau = ISING_TC[shape] * np.tanh((6 / z) * np.log1p(0.033 * X)) ** 0.25
        out[shape] = (X, tau, 0.02 * tau)
    return out


TABLE = _table()


@pytest.mark.parametrize("shape,exact", [
    ("square", 2 / math.log(1 + math.sqrt(2))),       # Onsager, Phys. Rev. 65, 117 (1944)
    ("triangular", 4 / math.log(3)),                  # Houtappel 1950; Wannier 1950
    ("honeycomb", 2 / math.log(2 + math.sqrt(3))),    # Houtappel 1950
])
def test_ising_limit_round_trip_on_exact_values(shape, exact):
    j = 2.0 * MEV_J
    tc = exact * j / KB_J_PER_K
    res = exchange_from_tc(tc, shape, "ising", tc_err_K=0.01 * tc)
    assert res["exchange_J"] == pytest.approx(j, rel=1e-12)
    assert res["exchange_err_J"] == pytest.approx(0.01 * j, rel=1e-12)  # exact tau: Tc's only


@pytest.mark.parametrize("shape", ["square", "triangular", "honeycomb"])
@pytest.mark.parametrize("k_over_j", [2e-3, 0.05, 0.7, 7.0])
def test_round_trip_through_the_table(shape, k_over_j):
    j = 3.0 * MEV_J
    tau = reduced_tc(shape, k_over_j, table=TABLE)[0]
    tc = tau * j / KB_J_PER_K
    res = exchange_from_tc(tc, shape, k_over_j * j, table=TABLE)
    assert res["exchange_J"] == pytest.approx(j, rel=1e-8)
    assert res["k_over_j"] == pytest.approx(k_over_j, rel=1e-8)


def test_error_propagation_matches_finite_differences():
    """d ln J / d ln Tc = 1 / (1 - s), checked by solving again at Tc (1 + 1e-4)."""
    k = 0.05 * MEV_J
    tc = 50.0
    a = exchange_from_tc(tc, "square", k, tc_err_K=0.5, table=TABLE)
    b = exchange_from_tc(tc * (1 + 1e-4), "square", k, table=TABLE)
    dlj = math.log(b["exchange_J"] / a["exchange_J"]) / 1e-4
    assert dlj == pytest.approx(1.0 / (1.0 - a["slope"]), rel=1e-3)
    table_part = a["tc_over_j_err"] / a["tc_over_j"]
    expected = math.hypot(0.01, table_part) / (1 - a["slope"])
    assert a["exchange_err_J"] / a["exchange_J"] == pytest.approx(expected, rel=1e-9)


def test_continuum_stiffness_is_j_over_2t_on_the_square_lattice():
    # J = 2 A t on the square lattice (lattice mapping, derived in thinfilm.input.continuum)
    res = continuum_from_tc(300.0, "square", 0.3e-9, 2e6, 1e6, 0.6e-9, table=TABLE)
    assert res["stiffness_J_per_m"] == pytest.approx(res["exchange_J"] / (2 * 0.6e-9))
    assert res["anisotropy_J"] == pytest.approx(2e6 * 0.09e-18 * 0.6e-9)


def test_refusals_are_one_paragraph():
    with pytest.raises(InputError, match="easy axis"):
        exchange_from_tc(200.0, "square", -0.1 * MEV_J, table=TABLE)
    with pytest.raises(InputError, match="outside the calibration table"):
        exchange_from_tc(2000.0, "square", 1e-6 * MEV_J, table=TABLE)


def test_shipped_table_is_ordered_and_below_the_ising_limit():
    """tau rises with K/J, stays below the exact Ising value (the K -> inf limit, PHYSICS
    group 1) and tau / (K/J) falls, so the inversion has one root."""
    tab = calibration_table()
    assert "square" in tab
    for shape, (x, tau, err) in tab.items():
        assert np.all(np.diff(x) > 0) and np.all(err > 0)
        assert np.all(np.diff(tau) > -2 * err[1:])
        assert np.all(tau < ISING_TC[shape] + 2 * err)
        assert np.all(np.diff(tau / x) < 0)


def test_shipped_table_at_k_equal_j_against_published_fit():
    """Square lattice, K/J = 1: the Torelli-Olsen Monte Carlo fit (Torelli and Olsen, 2D Mater.
    6, 015028 (2019), formula read only in a secondary source) gives 1.066 J/kB; the fit's
    accuracy is not known to us, so the check uses a +-10 % band (how sure: moderately; an
    independent Metropolis Binder crossing made for the project's reference notes gave
    1.015(10), which the band also holds)."""
    tau, err, _ = reduced_tc("square", 1.0)
    assert abs(tau - 1.066) <= 0.10 * 1.066 + 2 * err
    assert err < 0.05  # the table states a usable error
    # the same fit on the triangular lattice (z = 6) gives 1.545 J/kB; same band
    tau, err, _ = reduced_tc("triangular", 1.0)
    assert abs(tau - 1.545) <= 0.10 * 1.545 + 2 * err


BASE = {
    "lattice": {"shape": "square", "cells": [8, 8], "spacing": "0.3 nm", "edges": "periodic"},
    "material": {"moment": "2 muB", "curie_temperature": {"value": "150 K", "error": "2 K"},
                 "anisotropy": {"constant": "2 meV", "axis": [0, 0, 1]}},
    "temperature": "30 K",
    "dynamics": {"damping": 0.1, "timestep": "1 fs", "duration": "1 ps"},
    "seed": 1,
}


def test_scenario_form_sets_exchange_and_check_prints_its_origin(capsys, tmp_path):
    sc = load_scenario(copy.deepcopy(BASE))
    c = sc.material.calibration
    tc = reduced_tc("square", c["k_over_j"])[0] * sc.material.exchange_J / KB_J_PER_K
    assert tc == pytest.approx(150.0, rel=1e-8)  # the resolved J gives back the measured Tc
    assert c["exchange_err_J"] > 0
    import yaml

    p = tmp_path / "film.yaml"
    p.write_text(yaml.safe_dump(BASE))
    assert main(["check", str(p)]) == 0
    out = capsys.readouterr().out
    j_line = next(x for x in out.splitlines() if x.startswith("  exchange    J = "))
    value, err = (float(v) for v in j_line.split("=")[1].split("meV")[0].split("+-"))
    assert value == pytest.approx(c["exchange_meV"], abs=err / 10)  # digits the error supports
    assert "from Tc = 150 K +- 2 K via the calibration table" in out


def test_scenario_form_refuses_exchange_and_tc_together_and_dipolar():
    d = copy.deepcopy(BASE)
    d["material"]["exchange"] = "10 meV"
    with pytest.raises(ScenarioError, match="not both"):
        load_scenario(d)
    d = copy.deepcopy(BASE)
    d["material"]["dipolar"] = True
    d["dynamics"]["method"] = "llg"
    with pytest.raises(ScenarioError, match="without the dipolar field"):
        load_scenario(d)


def test_continuum_scenario_form_gives_stiffness():
    d = copy.deepcopy(BASE)
    d["material"] = {"anisotropy_density": "4 MJ/m^3", "magnetisation": "1 MA/m",
                     "thickness": "0.6 nm", "curie_temperature": "100 K"}
    sc = load_scenario(d)
    a = sc.material.continuum["stiffness_J_per_m"]
    assert a == pytest.approx(sc.material.exchange_J / (2 * 0.6e-9))
    assert sc.material.calibration["stiffness_J_per_m"] == pytest.approx(a)


def test_cli_calibrate_ising_limit_and_bad_quantity(capsys):
    # honeycomb Ising limit: kB Tc / J = 2 / ln(2 + sqrt3) (Houtappel 1950); Tc = 1.518651 J/kB
    tc = 2 / math.log(2 + math.sqrt(3)) * 5 * MEV_J / KB_J_PER_K
    assert main(["calibrate", "--tc", f"{tc:.6f} K", "--lattice", "honeycomb",
                 "--anisotropy", "ising"]) == 0
    assert "J = 5 meV" in capsys.readouterr().out
    assert main(["calibrate", "--tc", "290", "--anisotropy", "ising"]) == 2
    assert "--tc" in capsys.readouterr().err


def test_caution_where_the_table_crossings_are_not_ising_like():
    """Below K/J ~ 0.1 the table's Binder crossings lie far below the 2D Ising U4* = 0.61069
    (Kamieniarz and Bloete 1993, from memory): the inversion says so; at K/J ~ 3 it does not."""
    kt = KB_J_PER_K * 100.0
    low = exchange_from_tc(100.0, "square", 0.02 * kt / 0.6)  # K/J near 0.02
    assert low["k_over_j"] < 0.05 and "caution" in low["origin"]
    high = exchange_from_tc(100.0, "square", 3.0 * kt / 1.3)  # K/J near 3
    assert high["k_over_j"] > 1.5 and "caution" not in high["origin"]
