"""Scenario validation: resolved units and one-paragraph errors for bad input."""

import copy
import math

import numpy as np
import pytest

from thinfilm.input.continuum import continuum_to_lattice
from thinfilm.input.errors import ScenarioError
from thinfilm.input.scenario import DEFAULT_SCENARIO, load_scenario
from thinfilm.input.units import MEV_J, MU_B_J_PER_T

BASE = {
    "lattice": {"shape": "square", "cells": [8, 8], "spacing": "0.4 nm", "edges": "periodic"},
    "material": {"moment": "3 muB", "exchange": "1.5 meV",
                 "anisotropy": {"constant": "0.1 meV", "axis": [0, 0, 1]}},
    "field": {"value": [0, 0, 0.05], "unit": "T"},
    "temperature": "30 K",
    "dynamics": {"damping": 0.1, "timestep": "1 fs", "duration": "1 ps"},
    "initial": "random",
    "record": {"every": "0.5 ps"},
    "seed": 1,
}


def with_(path, value):
    d = copy.deepcopy(BASE)
    node = d
    keys = path.split(".")
    for k in keys[:-1]:
        node = node.setdefault(k, {})
    if value is KeyError:
        del node[keys[-1]]
    else:
        node[keys[-1]] = value
    return d


def test_resolves_physical_units():
    sc = load_scenario(BASE)
    assert math.isclose(sc.material.moment_J_per_T, 3 * MU_B_J_PER_T)
    assert math.isclose(sc.material.exchange_J, 1.5 * MEV_J)
    assert math.isclose(sc.material.anisotropy_J, 0.1 * MEV_J)
    assert sc.lattice.spacing_nm == 0.4
    assert np.allclose(sc.field_T, [0, 0, 0.05])
    assert sc.temperature_K == 30.0
    assert math.isclose(sc.dynamics.time_step_s, 1e-15)
    assert math.isclose(sc.record_every_s, 0.5e-12)
    assert not sc.is_sweep


def test_field_in_millitesla_and_temperature_sweep():
    d = with_("field", {"value": [0, 0, 50], "unit": "mT"}) | {
        "temperature": {"start": "10 K", "stop": "20 K", "step": "2 K"}}
    del d["record"]  # a set has no time series (record acts only in a time-resolved run)
    sc = load_scenario(d)
    assert np.allclose(sc.field_T, [0, 0, 0.05])
    assert sc.sweep.temperatures_K == (10.0, 12.0, 14.0, 16.0, 18.0, 20.0)


@pytest.mark.parametrize("path,value,match", [
    ("material.exchnge", "1 meV",
     r"material\.exchnge: unknown key 'exchnge'.*Did you mean 'exchange'"),
    ("material.exchange", "1.5", r"material\.exchange: '1\.5' has no unit"),
    ("material.exchange", "1.5 nm", r"material\.exchange: .*wrong kind of unit.*energy"),
    ("material.exchange", 1.5, r"material\.exchange: must be a quantity with a unit"),
    ("lattice.cells", [-4, 8], r"lattice\.cells: must be positive"),
    ("lattice.spacing", "-0.4 nm", r"lattice\.spacing: must be positive"),
    ("temperature", "nan K", r"temperature: 'nan K' is not a finite number"),
    ("lattice.cells", [100000, 100000], r"lattice\.cells: .*sites need about"),
    ("lattice.shape", "hexagon", r"lattice\.shape: must be one of square, triangular, honeycomb"),
    ("material.anisotropy.axis", [0, 0, 0],
     r"material\.anisotropy\.axis: must be a non-zero 3-vector"),
    ("field", [0, 0, 1], r"field: must be written as \{value: \[x, y, z\], unit: T\}"),
    ("initial", "upp", r"initial: .*Did you mean 'up'"),
    ("dynamics.damping", 0, r"dynamics\.damping: must be positive"),
    ("lattice.cells", [8, 7], None),
    ("material.moment", KeyError, r"material\.moment: is required but missing"),
    ("colour", "red", r"unknown key 'colour'"),
])
def test_bad_input_names_file_key_value(tmp_path, path, value, match):
    d = with_(path, value)
    if match is None:  # odd rows are fine on a square lattice, not on a periodic triangular one
        load_scenario(d)
        d["lattice"]["shape"] = "triangular"
        match = r"lattice\.cells: a periodic triangular lattice needs an even Ny"
    import yaml

    f = tmp_path / "bad.yaml"
    f.write_text(yaml.safe_dump(d))
    with pytest.raises(ScenarioError, match=match) as info:
        load_scenario(f)
    assert str(f) in str(info.value)
    assert "\n" not in str(info.value)


def test_missing_file_and_bad_yaml(tmp_path):
    with pytest.raises(ScenarioError, match="file not found"):
        load_scenario(tmp_path / "none.yaml")
    f = tmp_path / "x.yaml"
    f.write_text("lattice: {shape: square\n")
    with pytest.raises(ScenarioError, match="not valid YAML"):
        load_scenario(f)


def test_continuum_mapping_square_matches_spin_spiral_energy():
    # J = 2 A t, mu_s = Ms a^2 t, K = Ku a^2 t for one spin per a x a x t cell: a spin spiral
    # of wavevector q costs J (1 - cos qa) ~ J q^2 a^2 / 2 per site on the square lattice and
    # A t a^2 q^2 in the continuum (derived; standard lattice-continuum mapping, common practice).
    a, A, ku, ms, t = 0.4e-9, 15e-12, 0.5e6, 1.1e6, 0.7e-9
    mu, jj, kk = continuum_to_lattice("square", a, A, ku, ms, t)
    assert math.isclose(jj, 2 * A * t)
    assert math.isclose(mu, ms * a * a * t)
    assert math.isclose(kk, ku * a * a * t)
    q = 1e7  # 1/m, q a << 1
    for shape in ("square", "triangular", "honeycomb"):
        from thinfilm.model.lattice import Lattice

        mu, jj, kk = continuum_to_lattice(shape, a, A, ku, ms, t)
        lat = Lattice(shape, 4, 4, a * 1e9, True)
        # lattice energy per site of a spiral along x: (J/2) sum over bonds (1 - cos q dx)
        pos = lat.positions_nm.reshape(-1, 2) * 1e-9
        nb = lat.neighbours
        dx = pos[nb[0], 0] - pos[0, 0]
        dx -= lat.box_nm[0] * 1e-9 * np.round(dx / (lat.box_nm[0] * 1e-9))
        e_site = 0.5 * jj * np.sum(1 - np.cos(q * dx))
        from thinfilm.input.continuum import site_area

        e_cont = A * t * site_area(shape, a) * q * q
        assert math.isclose(e_site, e_cont, rel_tol=1e-3), shape


def test_continuum_scenario_and_shape_anisotropy():
    d = with_("material", {"stiffness": "15 pJ/m", "anisotropy_density": "1.2 MJ/m^3",
                           "magnetisation": "1.1 MA/m", "thickness": "0.7 nm",
                           "shape_anisotropy": True})
    sc = load_scenario(d)
    mu0 = 1.25663706212e-6
    omega_t = (0.4e-9) ** 2 * 0.7e-9
    # thin-film shape anisotropy K_eff = Ku - mu0 Ms^2 / 2 (textbook, e.g. Johnson et al.,
    # Rep. Prog. Phys. 59, 1409, 1996; from memory)
    assert math.isclose(sc.material.anisotropy_J, (1.2e6 - mu0 * 1.1e6**2 / 2) * omega_t,
                        rel_tol=1e-9)
    d["material"]["exchange"] = "1 meV"
    with pytest.raises(ScenarioError, match="either lattice parameters"):
        load_scenario(d)


def test_default_scenario_loads():
    sc = load_scenario(DEFAULT_SCENARIO)
    assert sc.is_sweep and sc.sweep.sizes
