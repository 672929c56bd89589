"""Quantities with units: every spelling pint reads for the quantity's dimension, plus the
exponent digits and offset temperatures people write."""

import pytest
import yaml

from thinfilm.input.units import parse_quantity


@pytest.mark.parametrize("text, kind, si", [
    # exact unit definitions (SI brochure, 9th ed.: 0 degC = 273.15 K; prefixes exact)
    ("0.8 MJ/m3", "energy_density", 8e5),
    ("0.8 MJ/m^3", "energy_density", 8e5),
    ("0.8 MJ/m**3", "energy_density", 8e5),
    ("0.8 MJ m-3", "energy_density", 8e5),
    ("0.8 MJ m^-3", "energy_density", 8e5),
    ("800 kJ/m\u00b3", "energy_density", 8e5),
    ("27 degC", "temperature", 300.15),
    ("27 \u00b0C", "temperature", 300.15),
    ("-5 degC", "temperature", 268.15),
    ("300 kelvin", "temperature", 300.0),
    ("2 \u00b5m", "length", 2e-6),
    ("0.4nm", "length", 0.4e-9),
    ("15 pJ/m", "stiffness", 15e-12),
    ("1.1 MA/m", "magnetisation", 1.1e6),
    ("1e-3 eV", "energy", 1.602176634e-22),  # exact elementary charge (SI 2019)
    ("5 mT", "field", 5e-3),
    ("5 G", "field", 5e-4),  # 1 gauss = 1e-4 T (cgs definition, exact)
    ("10 Oe", "field", 1e-3),  # mu0 H in vacuum: 1 Oe -> 1e-4 T
])
def test_accepted_spellings(text, kind, si):
    assert parse_quantity(text, kind) == pytest.approx(si, rel=1e-12)


@pytest.mark.parametrize("text, kind, words", [
    ("2 m2", "length", "wrong kind of unit"),
    ("5", "length", "no unit"),
    ("1 kA/m", "field", "field strength H"),
    ("abc nm", "length", "cannot read"),
])
def test_refused_with_a_reason(text, kind, words):
    with pytest.raises(ValueError, match=words):
        parse_quantity(text, kind)


def test_check_prints_the_resolved_values(tmp_path, capsys):
    from thinfilm.cli import main

    sc = {"lattice": {"shape": "square", "cells": [8, 8], "spacing": "0.4 nm"},
          "material": {"stiffness": "10 pJ/m", "magnetisation": "1 MA/m", "thickness": "0.5 nm",
                       "anisotropy_density": "0.8 MJ/m3"},
          "temperature": "27 degC", "dynamics": {"duration": "1 ps"}}
    f = tmp_path / "film.yaml"
    f.write_text(yaml.safe_dump(sc))
    assert main(["check", str(f)]) == 0
    out = capsys.readouterr().out
    assert "temperature 300.15 K" in out and "given as '27 degC'" in out
    assert "Ku = 8e+05 J/m^3" in out
