"""The labyrinth start (``initial: {labyrinth: <width>}``): its spectrum, its domains, its key."""

import numpy as np
import pytest

from thinfilm.analysis.lattice_fourier import structure_factor
from thinfilm.analysis.patterns import stripe_period
from thinfilm.engines.stochastic_llg import initial_spins
from thinfilm.input.errors import ScenarioError
from thinfilm.input.scenario import load_scenario
from thinfilm.model.labyrinth import RING_WIDTH, labyrinth_field, labyrinth_spins, ring_amplitudes
from thinfilm.model.lattice import Lattice

SC = {"name": "t", "lattice": {"shape": "square", "cells": [64, 64], "spacing": "0.5 nm",
                               "edges": "periodic"},
      "material": {"moment": "2 muB", "exchange": "2 meV"}, "temperature": "5 K",
      "dynamics": {"method": "llg", "duration": "1 ps"}, "seed": 3}


@pytest.mark.parametrize("shape, cells", [("square", (12, 10)), ("triangular", (12, 10)),
                                          ("honeycomb", (12, 10))])
def test_field_is_the_sum_of_its_plane_waves_at_the_true_positions(shape, cells):
    # exact: f(r) = Re sum_k A(k) exp(i k.r) / N, summed directly over every mode and site
    lat = Lattice(shape, *cells, 0.3, True)
    kx, ky, amp = ring_amplitudes(lat, 0.7, seed=4)
    x, y = lat.positions_nm[..., 0].ravel(), lat.positions_nm[..., 1].ravel()
    direct = np.real(np.exp(1j * (np.outer(x, kx.ravel()) + np.outer(y, ky.ravel()))) @ amp.ravel())
    direct = direct.reshape(cells[1], cells[0])
    direct /= direct.std()
    np.testing.assert_allclose(labyrinth_field(lat, 0.7, seed=4), direct, atol=1e-12)


@pytest.mark.parametrize("shape", ["square", "triangular"])
def test_field_spectrum_lies_on_its_ring(shape):
    # The exact structure factor at the true positions (lattice_fourier; on these Bravais
    # lattices its modes are orthogonal) must find the weight on the ring: a Gaussian ring
    # holds 99.7 % of its weight within 3 widths (exact for the amplitudes; > 0.99 for a draw).
    lat = Lattice(shape, 96, 96, 0.3, True)
    width = 1.2  # nm
    f = labyrinth_field(lat, width, seed=5)
    kx, ky, s = structure_factor(f, lat.positions_nm, lat.box_nm, lat.period)
    k0 = np.pi / width
    near = np.abs(np.hypot(kx, ky) - k0) < 3 * RING_WIDTH * k0
    assert np.sum(s[near]) / np.sum(s) > 0.99
    assert f.std() == pytest.approx(1.0)


def test_domains_have_the_requested_width():
    # The sign of a band-limited Gaussian field keeps the ring's wavelength: the S(k) peak of
    # m_z sits at pi / width (random-wave model of a labyrinth, common practice); measured here
    # within 10 % for five seeds on 256^2 sites (ring resolution 2 pi / 128 nm: 4 % at 8 sites).
    lat = Lattice("square", 256, 256, 0.5, True)
    for seed in range(5):
        s = labyrinth_spins(lat, 4.0, seed=seed)
        half = stripe_period(s[..., 2], 0.5)["period_nm"] / 2
        assert half == pytest.approx(4.0, rel=0.10)
        np.testing.assert_allclose(np.linalg.norm(s, axis=-1), 1.0, atol=1e-12)
        assert abs(s[..., 2].mean()) < 0.15  # demagnetised: as much up as down
        assert np.abs(s[..., 2]).mean() > 0.75  # saturated domains, walls of a few sites


def test_axis_seed_and_the_initial_spins_entry():
    lat = Lattice("triangular", 48, 48, 0.4, True)
    a = initial_spins(lat, "labyrinth", seed=2, axis=(1.0, 0.0, 0.0), width_nm=2.0)
    b = labyrinth_spins(lat, 2.0, seed=2, axis=(1.0, 0.0, 0.0))
    np.testing.assert_array_equal(a, b)
    assert np.abs(a[..., 0]).mean() > 0.75  # domains along the given axis
    assert not np.allclose(labyrinth_spins(lat, 2.0, seed=3), labyrinth_spins(lat, 2.0, seed=2))


def test_scenario_key():
    sc = load_scenario(SC | {"initial": {"labyrinth": "6 nm"}})
    assert (sc.initial, sc.initial_width_nm) == ("labyrinth", 6.0)
    assert sc.describe()["initial_width_nm"] == 6.0
    for bad, msg in [({"labyrinth": "0.6 nm"}, r"initial\.labyrinth: domain width 0.6 nm is "
                      r"outside 1-16 nm"),
                     ({"labyrinth": "6 K"}, r"initial\.labyrinth: .*length is needed"),
                     ({"labyrint": "6 nm"}, r"Did you mean 'labyrinth'"),
                     ({}, r"initial\.labyrinth: needs a domain width"),
                     (3, r"initial: must be one of .*labyrinth")]:
        with pytest.raises(ScenarioError, match=msg):
            load_scenario(SC | {"initial": bad})
    # a set of sizes: the smallest lattice (16 x 16 x 0.5 nm) must hold a period
    mc = SC | {"temperature": ["5 K", "6 K"], "sizes": [16, 32],
               "dynamics": {"method": "monte-carlo", "sweeps": {"warmup": 10, "samples": 10}}}
    assert load_scenario(mc | {"initial": {"labyrinth": "4 nm"}}).initial_width_nm == 4.0
    with pytest.raises(ScenarioError, match=r"outside 1-4 nm"):
        load_scenario(mc | {"initial": {"labyrinth": "6 nm"}})
