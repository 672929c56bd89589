"""Scenario of a coarse film: the top-level key ``coarse_film`` (see README, "Atomistic lattice
or coarse film").

    name: my-film
    coarse_film:
      cells: [256, 256]          # Nx, Ny cells
      cell_size: 4 nm            # prism cells cell_size x cell_size x thickness
      edges: periodic            # or open
      parameters: film.csv       # the parameter table (thinfilm.input.parameter_table),
                                 # relative paths from the scenario's folder
      dipolar: true              # prism-cell dipolar field
      coupling: 0.1              # the LLB coupling lambda (damping)
      renormalise: true          # cell renormalisation of m_e (false: double counting)
      grains: {size: 20 nm, anisotropy_spread: 0.1}   # optional: K(T) x (1 + spread g) per grain
    temperatures: [300 K, 320 K] # or {start, stop, step}; each continues from the previous state
    hold: 50 ps                  # time at each temperature
    field: {value: [0, 0, 0], unit: T}
    initial: up                  # up, random or {labyrinth: 200 nm}
    snapshots: 4                 # snapshots per temperature
    seed: 1

Errors name the file, the key, the value and what is allowed.
"""

import math
from dataclasses import dataclass
from pathlib import Path

import yaml

from thinfilm.input.errors import ScenarioError
from thinfilm.input.parameter_table import ParameterTable, TableError
from thinfilm.input.reader import Reader
from thinfilm.input.units import parse_quantity

__all__ = ["CoarseScenario", "load_coarse", "is_coarse"]

INITIAL = ("up", "down", "random")


@dataclass(frozen=True)
class CoarseScenario:
    name: str
    source: str
    nx: int
    ny: int
    cell_nm: float
    periodic: bool
    table_path: str
    dipolar: bool
    coupling: float
    renormalise: bool
    grain_size_nm: float | None
    grain_spread: float
    temperatures_K: tuple
    hold_s: float
    field_T: tuple
    initial: str
    initial_width_nm: float | None
    snapshots: int
    seed: int
    raw: dict

    def table(self):
        return ParameterTable.read(self.table_path)

    def describe(self):
        return {"name": self.name, "source": self.source, "kind": "coarse film",
                "cells": [self.nx, self.ny], "cell_size_nm": self.cell_nm,
                "edges": "periodic" if self.periodic else "open",
                "box_nm": [self.nx * self.cell_nm, self.ny * self.cell_nm],
                "parameters": self.table_path, "dipolar": self.dipolar,
                "coupling": self.coupling, "renormalise": self.renormalise,
                "grains": ({"size_nm": self.grain_size_nm, "anisotropy_spread": self.grain_spread}
                           if self.grain_size_nm else None),
                "temperatures_K": list(self.temperatures_K), "hold_ps": self.hold_s * 1e12,
                "field_T": list(self.field_T), "initial": self.initial,
                "initial_width_nm": self.initial_width_nm, "snapshots_per_temperature":
                    self.snapshots, "seed": self.seed}


def _read(source):
    if isinstance(source, dict):
        return source, "<dict>"
    path = str(source)
    try:
        data = yaml.safe_load(Path(source).read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise ScenarioError("file not found", path=path) from None
    except (OSError, UnicodeDecodeError, yaml.YAMLError) as exc:
        raise ScenarioError(f"cannot read the scenario ({exc})".replace("\n", " "),
                            path=path) from None
    return data, path


def is_coarse(source):
    """True if the scenario (path or dict) has the top-level key coarse_film."""
    try:
        data, _ = _read(source)
    except ScenarioError:
        return False
    return isinstance(data, dict) and "coarse_film" in data


def _temperatures(r):
    val = r.raw("temperatures", required=True)
    if isinstance(val, list) and val:
        out = []
        for k, v in enumerate(val):
            try:
                t = parse_quantity(v, "temperature")
            except ValueError as exc:
                raise r.error(str(exc), f"temperatures[{k}]") from None
            if t < 0:
                raise r.error(f"must not be negative, got {v!r}", f"temperatures[{k}]")
            out.append(t)
        return tuple(out)
    if isinstance(val, dict):
        t = r.sub("temperatures")
        t.check_keys({"start", "stop", "step"})
        a = t.quantity("start", "temperature", required=True, nonneg=True)
        b = t.quantity("stop", "temperature", required=True, nonneg=True)
        s = t.quantity("step", "temperature", required=True, positive=True)
        n = int(math.floor(abs(b - a) / s + 1e-9)) + 1
        if n > 2000:
            raise t.error(f"gives {n} temperatures; at most 2000 are allowed", "step")
        sign = 1.0 if b >= a else -1.0
        return tuple(round(a + sign * k * s, 9) for k in range(n))
    raise r.error(f"must be a list of temperatures or {{start, stop, step}}, got {val!r}",
                  "temperatures")


def load_coarse(source):
    """Read and validate a coarse-film scenario (path or dict) -> CoarseScenario."""
    data, path = _read(source)
    if not isinstance(data, dict) or "coarse_film" not in data:
        raise ScenarioError("a coarse-film scenario needs the top-level key coarse_film",
                            path=path)
    r = Reader(data, path)
    r.check_keys({"name", "description", "coarse_film", "temperatures", "hold", "field",
                  "initial", "snapshots", "seed", "movie"})
    c = r.sub("coarse_film", required=True)
    c.check_keys({"cells", "cell_size", "edges", "parameters", "dipolar", "coupling",
                  "renormalise", "grains"})
    cells = c.raw("cells", required=True)
    if (not isinstance(cells, list) or len(cells) != 2
            or not all(isinstance(v, int) and not isinstance(v, bool) and v >= 2 for v in cells)):
        raise c.error(f"must be a list of two integers >= 2 [Nx, Ny], got {cells!r}", "cells")
    if cells[0] * cells[1] > 4096 * 4096:
        raise c.error(f"{cells[0] * cells[1]} cells: at most 4096 x 4096 are allowed", "cells")
    cell = c.quantity("cell_size", "length", required=True, positive=True) * 1e9
    edges = c.choice("edges", ("periodic", "open"), default="periodic")
    tp = c.raw("parameters", required=True)
    if not isinstance(tp, str):
        raise c.error(f"must be the path of a parameter table CSV, got {tp!r}", "parameters")
    p = Path(tp)
    if not p.is_absolute() and path != "<dict>":
        p = Path(path).parent / p
    try:
        table = ParameterTable.read(p)
    except TableError as exc:
        raise ScenarioError(str(exc), path=path, key="coarse_film.parameters") from None
    coupling = c.number("coupling", default=0.1, lo=0.0)
    if not coupling > 0:
        raise c.error("must be positive (the thermal noise is proportional to it), got 0",
                      "coupling")
    gs, spread = None, 0.0
    if c.has("grains"):
        g = c.sub("grains")
        g.check_keys({"size", "anisotropy_spread"})
        gs = g.quantity("size", "length", required=True, positive=True) * 1e9
        spread = g.number("anisotropy_spread", default=0.1, lo=0.0, hi=0.9)
    temps = _temperatures(r)
    lo, hi = table.temperature_K[0], table.temperature_K[-1]
    bad = [t for t in temps if not (lo - 1e-9 <= t <= hi + 1e-9)]
    if bad:
        raise r.error(f"{bad[0]:g} K lies outside the parameter table {p} ({lo:g} K to "
                      f"{hi:g} K): the table does not determine the film there", "temperatures")
    hold = r.quantity("hold", "time", required=True, positive=True)
    fld = r.vector("field", unit_kind="field", default={"value": [0, 0, 0], "unit": "T"})
    ini = r.raw("initial", "up")
    width = None
    if isinstance(ini, dict):
        s = r.sub("initial")
        s.check_keys({"labyrinth"})
        width = s.quantity("labyrinth", "length", required=True, positive=True) * 1e9
        ini = "labyrinth"
    elif ini not in INITIAL:
        raise r.error(f"must be one of {', '.join(INITIAL)} or {{labyrinth: <domain width>}}, "
                      f"got {ini!r}", "initial")
    return CoarseScenario(
        name=str(r.raw("name", Path(path).stem if path != "<dict>" else "coarse")),
        source=path, nx=cells[0], ny=cells[1], cell_nm=float(cell),
        periodic=edges == "periodic", table_path=str(p), dipolar=c.flag("dipolar", default=False),
        coupling=float(coupling), renormalise=c.flag("renormalise", default=True),
        grain_size_nm=gs, grain_spread=float(spread), temperatures_K=temps, hold_s=hold,
        field_T=tuple(float(v) for v in fld), initial=ini, initial_width_nm=width,
        snapshots=r.number("snapshots", default=2, lo=1, hi=1000, integer=True),
        seed=r.number("seed", default=1, lo=0, hi=2**63 - 1, integer=True), raw=data)
