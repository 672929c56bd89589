"""How the site thickness reaches the dipolar tensor from a scenario, and the keys that cannot
take effect (input errors naming the key)."""

import copy
import math

import numpy as np
import pytest

from thinfilm.api import run
from thinfilm.engines.stochastic_llg import LLGSimulation
from thinfilm.input.dipolar_spec import (
    POINT_DIPOLE_SUM,
    PRISM_ASPECT_RANGE,
    point_shape_ratio,
    point_window,
)
from thinfilm.input.errors import ScenarioError
from thinfilm.input.scenario import load_scenario
from thinfilm.model.dipolar_tensor import SublatticeGrid, tensor_spectrum
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import build_model
from thinfilm.model.prism_tensor import ASPECT_RANGE

RUN = {
    "temperature": "2 K",
    "dynamics": {"method": "llg", "duration": "0.03 ps"},
    "initial": "up",
    "seed": 5,
}
LATTICE_FORM = {"moment": "20 muB", "exchange": "1 meV",
                "anisotropy": {"constant": "0.1 meV", "axis": [0, 0, 1]}}
CONTINUUM_FORM = {"stiffness": "10 pJ/m", "magnetisation": "1 MA/m", "thickness": "1.2 nm",
                  "anisotropy_density": "1 MJ/m^3"}


def scenario(shape="square", material=LATTICE_FORM, dipolar=True, spacing="0.4 nm", **extra):
    d = copy.deepcopy(RUN) | {"lattice": {"shape": shape, "cells": [8, 8], "spacing": spacing}}
    d["material"] = copy.deepcopy(material) | {"dipolar": dipolar}
    d.update(extra)
    return d


def test_lattice_form_without_thickness_keeps_point_dipoles():
    sc = load_scenario(scenario())
    model = build_model(sc)
    assert sc.material.dipolar and sc.material.dipolar_thickness_nm is None
    assert model.dipolar_thickness_nm is None
    assert "dipolar_site" not in sc.describe()["material"]
    sim = LLGSimulation(model, temperature_K=1.0, damping=0.1, time_step_s=1e-15)
    assert sim.dipolar.thickness_nm is None


def test_lattice_form_takes_an_optional_thickness():
    sc = load_scenario(scenario(dipolar={"thickness": "1.2 nm"}))
    assert sc.material.dipolar and sc.material.dipolar_thickness_nm == pytest.approx(1.2)
    assert sc.describe()["material"]["dipolar_site"] == {"shape": "prism",
                                                         "size_nm": [0.4, 0.4, 1.2]}
    sim = LLGSimulation(build_model(sc), temperature_K=1.0, damping=0.1, time_step_s=1e-15)
    assert sim.dipolar.thickness_nm == pytest.approx(1.2)
    # an empty mapping is dipolar: true
    assert load_scenario(scenario(dipolar={})).material.dipolar_thickness_nm is None


def test_continuum_form_uses_the_film_thickness(tmp_path):
    sc = load_scenario(scenario(material=CONTINUUM_FORM))
    assert sc.material.dipolar_thickness_nm == pytest.approx(1.2)
    out = run(scenario(material=CONTINUUM_FORM), tmp_path / "r", progress=False)
    assert (out / "snapshots" / "final.npz").is_file()
    # with the dipolar field off the thickness only maps A, Ku, Ms onto the lattice
    assert load_scenario(scenario(material=CONTINUUM_FORM, dipolar=False)).material \
        .dipolar_thickness_nm is None


def test_a_second_thickness_in_the_continuum_form_is_refused():
    d = scenario(material=CONTINUUM_FORM, dipolar={"thickness": "1.2 nm"})
    with pytest.raises(ScenarioError, match=r"material\.dipolar\.thickness: cannot take effect"):
        load_scenario(d)


@pytest.mark.parametrize("shape", ["triangular", "honeycomb"])
def test_thickness_on_hexagonal_cells_is_refused(shape):
    d = scenario(shape=shape, dipolar={"thickness": "1.2 nm"})
    with pytest.raises(ScenarioError, match=rf"material\.dipolar\.thickness: cannot take effect "
                                            rf"on a {shape} lattice"):
        load_scenario(d)
    # point dipoles on that lattice (no thickness) are still accepted
    assert load_scenario(scenario(shape=shape)).material.dipolar


@pytest.mark.parametrize("shape", ["triangular", "honeycomb"])
def test_continuum_on_hexagonal_cells_only_where_point_dipoles_hold(shape):
    # the cells stay point dipoles: accepted inside the band where their uniform shape energy is
    # within 10 % of mu0 Ms^2 / 2, refused (naming material.dipolar) outside it
    lo, hi = point_window(shape)
    assert point_shape_ratio(shape, lo) == pytest.approx(0.9)
    assert point_shape_ratio(shape, hi) == pytest.approx(1.1)
    mid = f"{0.4 * (lo + hi) / 2:.4f} nm"
    sc = load_scenario(scenario(shape=shape, material=CONTINUUM_FORM | {"thickness": mid}))
    assert sc.material.dipolar and sc.material.dipolar_thickness_nm is None
    for thick in (f"{0.4 * lo * 0.97:.4f} nm", f"{0.4 * hi * 1.03:.4f} nm", "5 nm"):
        d = scenario(shape=shape, material=CONTINUUM_FORM | {"thickness": thick})
        with pytest.raises(ScenarioError, match=r"material\.dipolar: on a .* point dipoles are "
                                                r"inaccurate"):
            load_scenario(d)


def test_aspect_ratio_outside_the_tensor_range_is_refused():
    lo, hi = PRISM_ASPECT_RANGE
    assert (lo, hi) == ASPECT_RANGE
    with pytest.raises(ScenarioError, match=r"material\.dipolar\.thickness: .* outside"):
        load_scenario(scenario(dipolar={"thickness": f"{0.4 * hi * 1.5} nm"}))
    with pytest.raises(ScenarioError, match=r"material\.thickness: .* outside"):
        load_scenario(scenario(material=CONTINUUM_FORM | {"thickness": f"{0.4 * lo / 2} nm"}))
    with pytest.raises(ScenarioError, match=r"material\.dipolar\.thickness: must be positive"):
        load_scenario(scenario(dipolar={"thickness": "0 nm"}))


def test_dipolar_mapping_keys_and_mode():
    with pytest.raises(ScenarioError, match=r"material\.dipolar\.thicknes: unknown key .*"
                                            r"Did you mean 'thickness'"):
        load_scenario(scenario(dipolar={"thicknes": "1 nm"}))
    mc = scenario(dipolar={"thickness": "1.2 nm"}, temperature=["2 K", "3 K"],
                  dynamics={"method": "monte-carlo", "sweeps": {"warmup": 5, "samples": 20}})
    with pytest.raises(ScenarioError, match=r"material\.dipolar: cannot take effect"):
        load_scenario(mc)


def test_point_dipole_sums_are_the_ewald_sums():
    # the constants the input stage uses (it may not import the model) against the Ewald sums
    for shape, value in POINT_DIPOLE_SUM.items():
        lat = Lattice(shape, 4, 4, 1.0, True)
        grid = SublatticeGrid(lat)
        spec = tensor_spectrum(lat, zz=True)
        idx, _ = grid.pair_index()
        total = -sum(spec[idx[0, t], 3, 0, 0].real for t in range(grid.n_sub))
        assert total == pytest.approx(value, rel=1e-10)
    # square: 4 zeta(3/2) beta(3/2) (tests/test_dipolar.py); E_perp - E_in = mu0 Ms^2/2 at
    # t/a = 8 pi / (3 S) for the square lattice
    assert point_shape_ratio("square", 8 * math.pi / (3 * POINT_DIPOLE_SUM["square"])) == \
        pytest.approx(1.0)
    assert np.isclose(point_shape_ratio("square", 1.0), 1.0784, atol=1e-4)
