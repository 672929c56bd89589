"""The validated scenario: frozen dataclasses in SI / practical units."""

from dataclasses import dataclass, field

import numpy as np

from thinfilm.input.units import MEV_J, MU_B_J_PER_T

__all__ = ["LatticeSpec", "MaterialSpec", "DynamicsSpec", "SweepSpec", "Scenario", "SHAPES",
           "box_nm"]

SHAPES = ("square", "triangular", "honeycomb")
_SQ3 = 3.0 ** 0.5


def box_nm(shape, nx, ny, spacing_nm):
    """(Lx, Ly) in nm of an nx x ny grid of the shape: the periods of the torus (also the
    extent for open edges); nearest-neighbour distance spacing_nm."""
    a = spacing_nm
    if shape == "square":
        return (nx * a, ny * a)
    if shape == "triangular":
        return (nx * a, ny * a * _SQ3 / 2)
    return (nx * a * _SQ3 / 2, ny * a * 1.5)


@dataclass(frozen=True)
class LatticeSpec:
    shape: str
    nx: int
    ny: int
    spacing_nm: float
    periodic: bool


@dataclass(frozen=True)
class MaterialSpec:
    moment_J_per_T: float
    exchange_J: float
    anisotropy_J: float
    axis: np.ndarray
    continuum: dict | None = None  # the continuum inputs when the film was given that way
    dipolar: bool = False  # dipole-dipole interaction between the site moments
    dipolar_thickness_nm: float | None = None  # prism sites a x a x t; None: point dipoles
    calibration: dict | None = None  # exchange set from a measured Tc (input.calibration)
    dmi_J: float = 0.0  # interfacial DMI d per bond (J), D_ij = d (z x r_ij)


@dataclass(frozen=True)
class DynamicsSpec:
    method: str = "llg"
    damping: float = 0.1
    time_step_s: float = 1e-15
    duration_s: float = 10e-12
    gamma: float = 1.76085963023e11
    warmup_s: float = 0.0
    ramp_temperature_K: float | None = None
    ramp_field_T: np.ndarray | None = None
    sweeps_warmup: int = 2000
    sweeps_samples: int = 5000
    sample_every: int = 1
    moves: tuple = ("metropolis", "cluster")  # Monte Carlo move set
    cluster_direction: str = "auto"  # reflection direction of the cluster moves


@dataclass(frozen=True)
class SweepSpec:
    temperatures_K: tuple
    sizes: tuple | None = None
    refine: str | None = None
    order: str = "independent"
    cluster: str | None = None
    snapshots: int = 20


@dataclass(frozen=True)
class Scenario:
    """A validated scenario. Quantities in SI units unless the name says otherwise."""

    name: str
    source: str
    lattice: LatticeSpec
    material: MaterialSpec
    field_T: np.ndarray
    temperature_K: float
    dynamics: DynamicsSpec
    initial: str
    record_every_s: float | None
    snapshot_every_s: float | None
    seed: int
    sweep: SweepSpec | None = None
    instrument: dict = field(default_factory=dict)
    movie: dict | None = None
    analysis: dict = field(default_factory=dict)
    raw: dict = field(default_factory=dict, repr=False)
    mode: str = "run"  # run | llg-set | mc-set (thinfilm.input.modes)
    instruments: tuple = ()  # every instrument (dicts); ``instrument`` is the first
    disorder: object = None  # thinfilm.input.disorder_spec.DisorderSpec, or None (perfect film)
    disorder_realisation: int = 0  # which realisation of the disorder (seed offset)
    initial_width_nm: float | None = None  # domain width of an ``initial: {labyrinth: ...}``

    @property
    def is_sweep(self):
        """True for an equilibrium set (llg-set or mc-set): one row per size and temperature."""
        return self.sweep is not None

    def with_changes(self, **changes):
        """Copy with some fields replaced (dataclasses.replace)."""
        from dataclasses import replace

        return replace(self, **changes)

    def describe(self):
        """Resolved parameters in physical units (for manifests and `thinfilm check`)."""
        m, lat, d = self.material, self.lattice, self.dynamics
        out = {
            "name": self.name,
            "source": self.source,
            "mode": self.mode,
            "lattice": {"shape": lat.shape, "cells": [lat.nx, lat.ny], "spacing_nm": lat.spacing_nm,
                        "edges": "periodic" if lat.periodic else "open"},
            "material": {"moment_muB": m.moment_J_per_T / MU_B_J_PER_T,
                         "exchange_meV": m.exchange_J / MEV_J,
                         "anisotropy_meV": m.anisotropy_J / MEV_J,
                         "axis": [float(v) for v in m.axis]},
            "field_T": [float(v) for v in self.field_T],
            "temperature_K": self.temperature_K,
            "dynamics": {"method": d.method, "damping": d.damping,
                         "time_step_fs": d.time_step_s * 1e15,
                         "duration_ps": d.duration_s * 1e12, "gamma_rad_per_s_T": d.gamma,
                         "warmup_sweeps": d.sweeps_warmup, "sample_sweeps": d.sweeps_samples,
                         "sample_every": d.sample_every, "warmup_ps": d.warmup_s * 1e12},
            "initial": self.initial,
            "seed": self.seed,
        }
        if self.initial_width_nm is not None:
            out["initial_width_nm"] = self.initial_width_nm
        if m.continuum:
            out["material"]["continuum"] = m.continuum
        if m.calibration:
            out["material"]["calibration"] = m.calibration
        if m.dmi_J:
            out["material"]["dmi_meV"] = m.dmi_J / MEV_J
        if m.dipolar:
            out["material"]["dipolar"] = True
            if m.dipolar_thickness_nm is not None:
                out["material"]["dipolar_site"] = {
                    "shape": "prism", "size_nm": [lat.spacing_nm, lat.spacing_nm,
                                                  m.dipolar_thickness_nm]}
        if d.method == "monte-carlo":
            out["dynamics"]["moves"] = list(d.moves)
            out["dynamics"]["cluster_direction"] = d.cluster_direction
        if d.ramp_temperature_K is not None:
            out["dynamics"]["ramp_to_temperature_K"] = d.ramp_temperature_K
        if d.ramp_field_T is not None:
            out["dynamics"]["ramp_to_field_T"] = [float(v) for v in d.ramp_field_T]
        if self.record_every_s:
            out["record_every_ps"] = self.record_every_s * 1e12
        if self.sweep:
            out["sweep"] = {"temperatures_K": list(self.sweep.temperatures_K),
                            "sizes": list(self.sweep.sizes) if self.sweep.sizes else None,
                            "refine": self.sweep.refine, "order": self.sweep.order,
                            "snapshots": self.sweep.snapshots}
        if self.instrument:
            out["instrument"] = dict(self.instrument)
        if self.disorder is not None:
            out["disorder"] = self.raw.get("disorder")
            out["disorder_realisation"] = self.disorder_realisation
        if len(self.instruments) > 1:
            out["instruments"] = [dict(i) for i in self.instruments]
        if self.analysis and self.sweep:
            out["analysis"] = dict(self.analysis)
        return out
