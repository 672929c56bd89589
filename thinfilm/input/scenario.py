"""YAML scenario -> frozen, validated dataclasses in SI / practical units.

Every error names the file, the key path, the value and what is allowed.
"""

import difflib
import math
import os
from dataclasses import replace
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import yaml

from thinfilm.input import calibration_spec as curie
from thinfilm.input.continuum import continuum_to_lattice, dmi_factor, warn_continuum_cells
from thinfilm.input.dipolar_spec import parse_dipolar
from thinfilm.input.disorder_spec import parse_disorder
from thinfilm.input.errors import ScenarioError
from thinfilm.input.initial_spec import labyrinth_width_nm
from thinfilm.input.instrument_spec import parse_instruments
from thinfilm.input.modes import check_keys_for_mode, metropolis_where_needed, scenario_mode
from thinfilm.input.reader import Reader
from thinfilm.input.spec import (
    SHAPES,
    DynamicsSpec,
    LatticeSpec,
    MaterialSpec,
    Scenario,
    SweepSpec,
    box_nm,
)
from thinfilm.input.units import KB_J_PER_K, MEV_J, MU0, parse_quantity

__all__ = ["Scenario", "load_scenario", "DEFAULT_SCENARIO"]

DEFAULT_SCENARIO = Path(__file__).resolve().parents[1] / "data" / "demo.yaml"
INITIAL_STATES = ("random", "up", "down", "stripes")
METHODS = ("llg", "monte-carlo")
ORDERS = ("heating", "cooling", "independent")
MOVES = ("metropolis", "cluster")
CLUSTER_DIRECTIONS = ("auto", "axis", "plane", "sphere")
COLOURS = ("mz", "angle")
MAX_SITES = 50_000_000  # 50 M sites ~ 5 GB of engine memory
BYTES_PER_SITE = 100


def _temperatures(r, path):
    """Single temperature (float) or a sweep (tuple of K, refine) from the 'temperature' key."""
    val = r.raw("temperature", required=True)
    if isinstance(val, str):
        return r.quantity("temperature", "temperature", nonneg=True), None, None
    if isinstance(val, list):
        if not val:
            raise r.error("an explicit list of temperatures must not be empty", "temperature")
        temps = []
        for k, v in enumerate(val):
            try:
                t = parse_quantity(v, "temperature")
            except ValueError as exc:
                raise ScenarioError(str(exc), path=path, key=f"temperature[{k}]") from None
            if t < 0:
                raise ScenarioError(f"must not be negative, got {v!r}", path=path,
                                    key=f"temperature[{k}]")
            temps.append(t)
        return temps[0], tuple(sorted(temps)), None
    t = r.sub("temperature")
    t.check_keys({"start", "stop", "step", "refine"})
    start = t.quantity("start", "temperature", required=True, nonneg=True)
    stop = t.quantity("stop", "temperature", required=True, nonneg=True)
    step = t.quantity("step", "temperature", required=True, positive=True)
    if stop < start:
        raise t.error(f"stop ({stop} K) must not be below start ({start} K)", "stop")
    n = int(math.floor((stop - start) / step + 1e-9)) + 1
    if n > 2000:
        raise t.error(f"gives {n} temperatures; at most 2000 are allowed", "step")
    temps = tuple(float(round(start + k * step, 9)) for k in range(n))
    refine = t.choice("refine", ("near-tc", "none"), default="none")
    return start, temps, (None if refine == "none" else refine)


def _material(r, lat):
    m = r.sub("material", required=True)
    continuum_keys = {"stiffness", "anisotropy_density", "magnetisation", "thickness",
                      "shape_anisotropy"}
    lattice_keys = {"moment", "exchange", "anisotropy"}
    m.check_keys(continuum_keys | lattice_keys | {"axis", "dipolar", "dmi", curie.KEY})
    given_c = continuum_keys & set(m.data)
    given_l = lattice_keys & set(m.data)
    if given_c and given_l:
        raise m.error(
            f"give either lattice parameters (moment, exchange, anisotropy) or continuum "
            f"parameters (stiffness, anisotropy_density, magnetisation, thickness), not both; "
            f"got {sorted(m.data)}", "")
    if given_c:
        ku = m.quantity("anisotropy_density", "energy_density", default="0 J/m^3")
        ms = m.quantity("magnetisation", "magnetisation", required=True, positive=True)
        t = m.quantity("thickness", "length", required=True, positive=True)
        dipolar, dip_t = parse_dipolar(m, lat, t)
        shape_aniso = m.flag("shape_anisotropy", default=False)
        a, calib = curie.continuum_stiffness(m, lat, ku, ms, t, shape_aniso, dipolar)
        if dipolar and shape_aniso:
            raise m.error("shape_anisotropy: true folds the thin-film demagnetising energy into K, "
                          "and dipolar: true computes it from the moments: together they count it "
                          "twice; keep one (dipolar: true for stripe and bubble domains)",
                          "shape_anisotropy")
        axis = m.vector("axis", default=[0, 0, 1], nonzero=True)
        mu, jj, kk = continuum_to_lattice(lat.shape, lat.spacing_nm * 1e-9, a, ku, ms, t,
                                          shape_anisotropy=shape_aniso, axis=axis)
        dmi = m.quantity("dmi", "dmi_density", default="0 J/m^2")
        cont = {"stiffness_J_per_m": a, "anisotropy_density_J_per_m3": ku,
                "magnetisation_A_per_m": ms,
                "thickness_nm": t * 1e9, "shape_anisotropy": shape_aniso, "dmi_J_per_m2": dmi,
                "shape_anisotropy_density_J_per_m3": MU0 * ms**2 / 2 if shape_aniso else 0.0}
        return MaterialSpec(mu, jj, kk, axis / np.linalg.norm(axis), cont, dipolar, dip_t, calib,
                            dmi_J=dmi_factor(lat.shape) * dmi * t * lat.spacing_nm * 1e-9)
    dipolar, dip_t = parse_dipolar(m, lat)
    mu = m.quantity("moment", "moment", required=True, positive=True)
    aniso = m.raw("anisotropy")
    if aniso is None:
        kk, axis = 0.0, np.array([0.0, 0.0, 1.0])
    else:
        an = m.sub("anisotropy")
        an.check_keys({"constant", "axis"})
        kk = an.quantity("constant", "energy", required=True)
        axis = an.vector("axis", default=[0, 0, 1], nonzero=True)
    if m.has("axis"):
        raise m.error("put the axis under material.anisotropy.axis", "axis")
    jj, calib = curie.lattice_exchange(m, lat, kk, dipolar)  # given, or from a measured Tc
    return MaterialSpec(mu, jj, kk, axis / np.linalg.norm(axis), None, dipolar, dip_t, calib,
                        dmi_J=m.quantity("dmi", "energy", default="0 J"))


def _lattice(r):
    lt = r.sub("lattice", required=True)
    lt.check_keys({"shape", "cells", "spacing", "edges"})
    shape = lt.choice("shape", SHAPES, required=True)
    cells = lt.raw("cells", required=True)
    if (not isinstance(cells, list) or len(cells) != 2
            or not all(isinstance(c, int) and not isinstance(c, bool) for c in cells)):
        raise lt.error(f"must be a list of two positive integers [Nx, Ny], got {cells!r}", "cells")
    nx, ny = cells
    if nx < 1 or ny < 1:
        raise lt.error(f"must be positive, got {cells!r}", "cells")
    spacing = lt.quantity("spacing", "length", required=True, positive=True)
    edges = lt.choice("edges", ("periodic", "open"), default="periodic")
    periodic = edges == "periodic"
    if periodic and shape == "triangular" and ny % 2:
        raise lt.error(f"a periodic triangular lattice needs an even Ny, got {cells!r}", "cells")
    if periodic and shape == "honeycomb" and (nx % 2 or ny % 2):
        raise lt.error(f"a periodic honeycomb lattice needs even Nx and Ny, got {cells!r}", "cells")
    return LatticeSpec(shape, nx, ny, float(f"{spacing * 1e9:.12g}"), periodic)


def _check_memory(r, lat, sizes):
    n = max([lat.nx * lat.ny] + [s * s for s in (sizes or ())])
    try:
        phys = os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES")
    except (ValueError, OSError, AttributeError):
        phys = 8 * 2**30
    need = n * BYTES_PER_SITE
    if n > MAX_SITES or need > 0.5 * phys:
        raise r.error(f"{n} sites need about {need / 2**30:.1f} GiB; at most {MAX_SITES} sites and "
                      f"half the machine's memory ({phys / 2**30:.1f} GiB) are allowed",
                      "lattice.cells" if not sizes else "sizes")


def _dynamics(r):
    d = r.sub("dynamics")
    d.check_keys({"method", "damping", "timestep", "duration", "warmup", "gyromagnetic_ratio",
                  "ramp", "sweeps", "sample_every", "moves", "cluster_direction"})
    method = d.choice("method", METHODS, default="llg")
    damping = d.number("damping", default=0.1, lo=0.0)
    if not damping > 0:
        raise d.error("must be positive (the thermal field is proportional to the damping), got 0",
                      "damping")
    dt = d.quantity("timestep", "time", default="1 fs", positive=True)
    duration = d.quantity("duration", "time", default="10 ps", positive=True)
    warm = d.quantity("warmup", "time", default="0 ps", nonneg=True)
    gamma_raw = d.raw("gyromagnetic_ratio")
    gamma = 1.76085963023e11
    if gamma_raw is not None:
        try:
            gamma = _gamma(gamma_raw)
        except ValueError as exc:
            raise d.error(str(exc), "gyromagnetic_ratio") from None
    if duration / dt > 2e9:
        raise d.error(f"duration/timestep = {duration / dt:.3g} steps; at most 2e9 allowed",
                      "duration")
    ramp_t = ramp_b = None
    if d.has("ramp"):
        rp = d.sub("ramp")
        rp.check_keys({"temperature", "field"})
        ramp_t = rp.quantity("temperature", "temperature", nonneg=True)
        ramp_b = rp.vector("field", unit_kind="field")
    sw = d.sub("sweeps")
    sw.check_keys({"warmup", "samples"})
    n_warm = sw.number("warmup", default=2000, lo=0, integer=True)
    n_samp = sw.number("samples", default=5000, lo=10, integer=True)
    every = d.number("sample_every", default=1, lo=1, integer=True)
    moves = d.raw("moves", ["metropolis", "cluster"])
    if (not isinstance(moves, list) or not moves or any(m not in MOVES for m in moves)
            or "metropolis" not in moves):
        raise d.error(f"must be a list of moves from {', '.join(MOVES)} that includes metropolis "
                      f"(cluster moves alone flip only one spin component and are not ergodic); "
                      f"got {moves!r}", "moves")
    direction = d.choice("cluster_direction", CLUSTER_DIRECTIONS, default="auto")
    return DynamicsSpec(method, damping, dt, duration, gamma, warm, ramp_t, ramp_b, n_warm, n_samp,
                        every, tuple(m for m in MOVES if m in moves), direction)


def _gamma(text):
    """Gyromagnetic ratio from e.g. "1.76e11 rad/(s T)" or "28 GHz/T" (2 pi applied for Hz)."""
    if not isinstance(text, str):
        raise ValueError(f"must be a string with a unit such as \"1.76e11 rad/(s T)\", "
                         f"got {text!r}")
    from thinfilm.input.units import ureg

    try:
        q = ureg.Quantity(text)
    except Exception as exc:
        raise ValueError(f"cannot read {text!r}") from exc
    if q.check("1 / [time] * [current] * [time] ** 2 / [mass]"):
        val = q.to("rad/(s*T)").magnitude if "rad" in str(q.units) else q.to("1/(s*T)").magnitude
        if "Hz" in str(q.units) or "hertz" in str(q.units):
            val *= 2 * math.pi
        if not val > 0:
            raise ValueError(f"must be positive, got {text!r}")
        return float(val)
    raise ValueError(f"{text!r} is not a gyromagnetic ratio (example: \"1.76e11 rad/(s T)\")")


def _initial(r, path, lat):
    """(initial state, domain width in nm or None)."""
    val = r.raw("initial", "random")
    if isinstance(val, dict):
        return "labyrinth", labyrinth_width_nm(r.sub("initial"), lat)
    if not isinstance(val, str):
        raise r.error(f"must be one of {', '.join(INITIAL_STATES)}, {{labyrinth: <domain width>}} "
                      f"or a path to a saved .npz snapshot; got {val!r}", "initial")
    if val in INITIAL_STATES:
        return val, None
    p = Path(val)
    if not p.is_absolute() and path and path != "<dict>":
        p = Path(path).parent / p
    if p.suffix != ".npz" or not p.is_file():
        close = difflib.get_close_matches(val, INITIAL_STATES, n=1, cutoff=0.5)
        hint = f" Did you mean {close[0]!r}?" if close else ""
        raise r.error(f"must be one of {', '.join(INITIAL_STATES)}, {{labyrinth: <domain width>}} "
                      f"or the path of an existing .npz snapshot; got {val!r}.{hint}", "initial")
    return str(p), None


def _disorder(r, path, lat, sizes, mat, dyn):
    """The validated ``disorder`` section (None for a perfect film), checked against the films
    it will be laid on and against the engines that can run it."""
    raw = r.raw("disorder")
    if raw is None:
        return None
    sides = [(s, s) for s in sizes] if sizes else [(lat.nx, lat.ny)]
    boxes = [box_nm(lat.shape, nx, ny, lat.spacing_nm) for nx, ny in sides]
    geometry = SimpleNamespace(box_nm=max(boxes, key=lambda b: b[0] * b[1]),
                               smallest_box_nm=min(boxes, key=lambda b: b[0] * b[1]),
                               spacing_nm=lat.spacing_nm, periodic=lat.periodic)
    spec = parse_disorder(raw, path, geometry)
    if not spec.is_disordered:
        return None
    if dyn.method == "monte-carlo" and "cluster" in dyn.moves:
        if isinstance(r.raw("dynamics"), dict) and "moves" in r.raw("dynamics"):
            raise ScenarioError("cluster moves are not available for a disordered film: the "
                                "embedded-cluster reflection is not a symmetry of per-site "
                                "anisotropy axes and constants; set moves: [metropolis]",
                                path=path, key="dynamics.moves")
    return spec


def load_scenario(source):
    """Read and validate a scenario from a YAML path or a dictionary.

    Parameters
    ----------
    source : str, Path or dict

    Returns
    -------
    Scenario

    Raises
    ------
    ScenarioError
        Naming the file, key path, value and what is allowed.
    """
    if isinstance(source, dict):
        data, path = source, "<dict>"
    else:
        path = str(source)
        try:
            text = Path(source).read_text(encoding="utf-8")
        except FileNotFoundError:
            raise ScenarioError("file not found", path=path) from None
        except (OSError, UnicodeDecodeError) as exc:
            raise ScenarioError(f"cannot read the file ({exc})", path=path) from None
        try:
            data = yaml.safe_load(text)
        except yaml.YAMLError as exc:
            raise ScenarioError(f"is not valid YAML: {exc}".replace("\n", " "), path=path) from None
        if data is None:
            raise ScenarioError("is empty; see scenarios/ for examples", path=path)
    r = Reader(data, path)
    r.check_keys({"name", "description", "lattice", "material", "field", "temperature", "sizes",
                  "dynamics", "initial", "record", "seed", "sweep", "instrument", "movie",
                  "analysis", "disorder"})
    lat = _lattice(r)
    mat = _material(r, lat)
    field_T = r.vector("field", unit_kind="field", default={"value": [0, 0, 0], "unit": "T"})
    t0, temps, refine = _temperatures(r, path)
    temps = temps if temps is not None else (t0,)
    sizes = r.raw("sizes")
    if sizes is not None:
        if (not isinstance(sizes, list) or not sizes
                or not all(isinstance(s, int) and not isinstance(s, bool) and s >= 2
                           for s in sizes)):
            raise r.error(f"must be a list of lattice sizes L >= 2 (L x L cells), got {sizes!r}",
                          "sizes")
        if lat.shape in ("triangular", "honeycomb") and lat.periodic and any(s % 2 for s in sizes):
            raise r.error(f"a periodic {lat.shape} lattice needs even sizes, got {sizes!r}",
                          "sizes")
        sizes = tuple(sorted(set(sizes)))
    _check_memory(r, lat, sizes)
    dyn = _dynamics(r)
    mode = scenario_mode(dyn.method, len(temps), sizes is not None)
    if "cluster" in dyn.moves and dyn.cluster_direction == "sphere" and mat.anisotropy_J != 0:
        raise ScenarioError(
            "sphere: cluster moves along random directions change the anisotropy energy "
            f"-K (S.n)^2 (K = {mat.anisotropy_J / MEV_J:g} meV), so they would not sample the "
            "Boltzmann distribution; use axis (easy axis), plane (easy plane) or auto",
            path=path, key="dynamics.cluster_direction")
    check_keys_for_mode(data, mode, path, n_temperatures=len(temps))
    sw = r.sub("sweep")
    sw.check_keys({"order", "cluster", "snapshots"})
    order = sw.choice("order", ORDERS, default="independent")
    cluster = sw.raw("cluster")
    if cluster is not None and (not isinstance(cluster, str) or "://" not in cluster):
        raise sw.error(f"must be a scheduler address such as 'tcp://host:8786', got {cluster!r}",
                       "cluster")
    n_snap = sw.number("snapshots", default=20, lo=1, integer=True)
    sweep = None if mode == "run" else SweepSpec(temps, sizes, refine, order, cluster, n_snap)
    rec = r.sub("record")
    rec.check_keys({"every", "snapshots"})
    every = rec.quantity("every", "time", positive=True)
    snap_every = rec.quantity("snapshots", "time", positive=True)
    if every is not None and every < dyn.time_step_s:
        raise rec.error(f"must be at least one time step ({dyn.time_step_s * 1e15:g} fs)", "every")
    seed = r.number("seed", default=1, lo=0, hi=2**63 - 1, integer=True)
    mv = r.raw("movie")
    movie = None
    if mv is not None:
        m = r.sub("movie")
        m.check_keys({"fps", "colour", "gif", "instrument"})
        movie = {"fps": m.number("fps", default=20, lo=1, hi=120, integer=True),
                 "colour": m.choice("colour", COLOURS, default="mz"),
                 "gif": m.flag("gif", default=False),
                 "instrument": m.flag("instrument", default=False)}
    an = r.sub("analysis")
    an.check_keys({"level", "smoothing"})
    analysis = {"level": an.number("level", default=0.0, lo=-1.0, hi=1.0)}
    sm = an.quantity("smoothing", "length", nonneg=True)
    if sm:
        analysis["smoothing_nm"] = sm * 1e9
    name = r.raw("name", Path(path).stem if path != "<dict>" else "scenario")
    primary, instruments = parse_instruments(r)
    disorder = _disorder(r, path, lat, sizes, mat, dyn)
    dyn = metropolis_where_needed(r, path, mat, disorder, dyn)
    initial, width_nm = _initial(r, path, replace(lat, nx=min(sizes), ny=min(sizes)) if sizes
                                 else lat)
    warn_continuum_cells(path, lat.spacing_nm, bool(mat.continuum), max(temps))
    return Scenario(str(name), path, lat, mat, field_T, t0, dyn, initial, every,
                    snap_every, seed, sweep, primary, movie, analysis, data, mode, instruments,
                    disorder, initial_width_nm=width_nm)


def thermal_energy_meV(temperature_K):
    """kB T in meV."""
    return KB_J_PER_K * temperature_K / MEV_J
