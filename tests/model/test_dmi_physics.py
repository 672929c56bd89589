"""Interfacial DMI physics on the lattice: spiral period, wall energy, wall type and sense."""

import math

import numpy as np
import pytest

from thinfilm.analysis.chirality import wall_chirality
from thinfilm.engines.dipolar_term import film_terms
from thinfilm.engines.montecarlo import MonteCarlo
from thinfilm.engines.stochastic_llg import LLGSimulation
from thinfilm.input.scenario import load_scenario
from thinfilm.input.units import MEV_J, MU_B_J_PER_T
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model, build_model

A, D_MJ, T_NM, SPACING = 15e-12, 1.5, 0.6, 0.4  # J/m, mJ/m^2, nm, nm


@pytest.mark.parametrize("shape", ["square", "triangular", "honeycomb"])
def test_spiral_period_is_4_pi_A_over_D(shape):
    # T = 0 spin spiral of an isotropic film: period 4 pi A / D (continuum limit; common
    # practice, from memory). The lattice energy of cycloids of every commensurate period on a
    # long periodic strip is minimal at the period nearest 4 pi A / D; lattice corrections are
    # O((q a)^2) ~ 1e-3 here, the grid of periods L/m steps by about L/m^2 = 2 %.
    nx = {"square": 2000, "triangular": 2000, "honeycomb": 1000}[shape]
    sc = load_scenario({
        "name": "spiral", "lattice": {"shape": shape, "cells": [nx, 2 if shape != "honeycomb"
                                                                else 2], "spacing": "0.4 nm",
                                      "edges": "periodic"},
        "material": {"stiffness": f"{A * 1e12} pJ/m", "magnetisation": "1 MA/m",
                     "thickness": f"{T_NM} nm", "dmi": f"{D_MJ} mJ/m^2"},
        "temperature": "0 K", "dynamics": {"method": "llg", "damping": 1.0, "timestep": "1 fs",
                                             "duration": "1 ps"}})
    model = build_model(sc)
    lat = model.lattice
    want = 4 * math.pi * A / (D_MJ * 1e-3) * 1e9  # nm
    lx = lat.box_nm[0]
    x = lat.positions_nm[..., 0]
    energies = {}
    for sign in (1, -1):
        for m in range(1, int(lx / want * 2)):
            q = sign * 2 * math.pi * m / lx
            s = np.stack([np.sin(q * x), np.zeros_like(x), np.cos(q * x)], axis=-1)
            sim = LLGSimulation(model, temperature_K=0.0, damping=1.0, time_step_s=1e-15,
                                spins=s)
            energies[sign * m] = sim.measure()[1]
    best = min(energies, key=energies.get)
    assert best < 0  # d > 0: the cycloid turns against +x (the sense D > 0 selects)
    period = lx / abs(best)
    step = lx / abs(best) ** 2
    assert abs(period - want) <= 0.6 * step + 2e-3 * want


def _wall_film(dmi_meV, n=200):
    lat = Lattice("square", n, 2, 1.0, True)
    jj, kk = MEV_J, 0.01 * MEV_J
    return Model(lat, MU_B_J_PER_T, jj, kk, (0.0, 0.0, 1.0), dmi_J=dmi_meV * MEV_J)


def _relaxed_walls(model, bloch_start=True):
    lat = model.lattice
    x = np.arange(lat.nx) - lat.nx / 4
    x2 = np.arange(lat.nx) - 3 * lat.nx / 4
    th = 2 * np.arctan(np.exp(x / 4.0)) - 2 * np.arctan(np.exp(x2 / 4.0))
    s = np.zeros((lat.ny, lat.nx, 3))
    s[..., 2] = np.cos(th)
    s[..., 1 if bloch_start else 0] = np.sin(th)
    s[..., 0] += 1e-3
    s /= np.linalg.norm(s, axis=-1, keepdims=True)
    sim = LLGSimulation(model, temperature_K=0.0, damping=1.0, time_step_s=1e-14, spins=s)
    for _ in range(40):
        sim.advance(1000)
    return sim


@pytest.mark.parametrize("dmi", [0.04, -0.04])
def test_relaxed_wall_energy_type_and_sense(dmi):
    # sigma = 4 sqrt(A K) - pi |D| (Heide, Bihlmayer and Bluegel, PRB 78, 140403 (2008);
    # Thiaville et al., EPL 100, 57002 (2012)); square lattice A t = J/2, K t = K/a^2,
    # D t = d/a, so sigma t a = 4 sqrt(J K / 2) - pi |d| = 0.283 - 0.126 = 0.157 meV here.
    # Delta = a sqrt(J / 2K) = 7.1 a: lattice corrections O((a/Delta)^2) ~ 2 %; tolerance 4 %.
    model = _wall_film(dmi)
    sim = _relaxed_walls(model)
    lat = model.lattice
    e_walls = sim.measure()[1] * lat.n_sites
    up = np.zeros((lat.ny, lat.nx, 3))
    up[..., 2] = 1.0
    e_up = LLGSimulation(model, temperature_K=0.0, damping=1.0, time_step_s=1e-15,
                         spins=up).measure()[1] * lat.n_sites
    sigma = (e_walls - e_up) / (2 * lat.ny)  # meV per wall and row (length a)
    want = 4 * math.sqrt(1.0 * 0.01 / 2) - math.pi * abs(dmi)
    assert sigma == pytest.approx(want, rel=0.04)
    ch = wall_chirality(sim.spins)
    assert ch["wall_type"] == "Neel" and abs(ch["neel_index"]) > 0.9
    assert ch["sense"] == ("anticlockwise" if dmi > 0 else "clockwise")


def test_without_dmi_the_wall_has_the_bare_energy():
    # control: no DMI, no dipolar field (Bloch and Neel walls degenerate): sigma = 4 sqrt(A K)
    # (Landau-Lifshitz; square lattice 4 sqrt(J K / 2) per row), same tolerance as above
    model = _wall_film(0.0)
    sim = _relaxed_walls(model)
    lat = model.lattice
    up = np.zeros((lat.ny, lat.nx, 3))
    up[..., 2] = 1.0
    e_up = LLGSimulation(model, temperature_K=0.0, damping=1.0, time_step_s=1e-15,
                         spins=up).measure()[1] * lat.n_sites
    sigma = (sim.measure()[1] * lat.n_sites - e_up) / (2 * lat.ny)
    assert sigma == pytest.approx(4 * math.sqrt(0.005), rel=0.04)


def test_monte_carlo_and_llg_see_the_same_dmi_energy(rng):
    model = _wall_film(0.04, n=16)
    s = rng.normal(size=(2, 16, 3))
    s /= np.linalg.norm(s, axis=-1, keepdims=True)
    mc = MonteCarlo(model, 1.0, seed=1, initial_spins=s)
    e_mc = mc.measure()["energy_J"] * model.lattice.n_sites
    assert mc.path == "generic"
    assert e_mc == pytest.approx(film_terms(model).energy(s), rel=1e-12)


@pytest.mark.parametrize("component,sign,kind,sense", [
    (0, 1, "Neel", "clockwise"), (0, -1, "Neel", "anticlockwise"), (1, 1, "Bloch", None)])
def test_wall_type_and_sense_of_hand_made_walls(component, sign, kind, sense):
    # exact 1D profiles theta = 2 arctan exp(x / w) (Landau-Lifshitz wall shape): a Neel wall
    # turns in the plane of its normal (x), a Bloch wall in the wall plane (y); the movie label
    # names the same type
    from thinfilm.analysis.chirality import wall_label

    x = np.arange(128) - 64.0
    th = sign * 2 * np.arctan(np.exp(x / 5.0))
    m = np.zeros((4, 128, 3))
    m[..., component] = np.sin(th)
    m[..., 2] = np.cos(th)
    ch = wall_chirality(m, periodic=False)
    assert ch["wall_type"] == kind and ch["sense"] == sense
    index = ch["neel_index"] if kind == "Neel" else ch["bloch_index"]
    assert abs(index) > 0.95
    assert wall_label(m, False).startswith(f"{kind} walls")
