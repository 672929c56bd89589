"""Tiny sweep scenarios shared by the sweep tests (invented film, fast to sample)."""

from thinfilm.input.scenario import load_scenario


def tiny_sweep(*, temps=("1.5 K", "2.5 K", "3.5 K"), sizes=(6, 8), order="independent",
               method="monte-carlo", warmup=40, samples=160, snapshots=2, refine=None,
               seed=11, initial="up", **extra):
    """A square film with J = 0.25 meV, K = 0.1 meV, 1 muB: Tc near 2.5 K (kB Tc ~ 0.85 J)."""
    temperature = list(temps)
    if refine:
        temperature = {"start": temps[0], "stop": temps[-1], "step": refine, "refine": "near-tc"}
    data = {
        "name": "tiny-sweep",
        "lattice": {"shape": "square", "cells": [8, 8], "spacing": "0.3 nm"},
        "material": {"moment": "1 muB", "exchange": "0.25 meV",
                     "anisotropy": {"constant": "0.1 meV", "axis": [0, 0, 1]}},
        "temperature": temperature,
        "dynamics": {"method": method, "damping": 1.0, "timestep": "5 fs",
                     "sample_every": 1 if method == "monte-carlo" else 10,
                     **({"sweeps": {"warmup": warmup, "samples": samples}}
                        if method == "monte-carlo"
                        else {"duration": "2 ps", "warmup": "0.5 ps"})},
        "sweep": {"order": order, "snapshots": snapshots},
        "initial": initial,
        "seed": seed,
    }
    if sizes:
        data["sizes"] = list(sizes)
    data.update(extra)
    return load_scenario(data)
