"""The scenario's ``disorder`` mapping -> a validated DisorderSpec; reading disorder maps.

Proposed YAML form (every key optional; an empty or absent mapping means a perfect film)::

    disorder:
      seed: 7                      # realisation seed (default: the scenario seed)
      realisations: 4              # ensemble size: seeds seed, seed + 1, ...
      vacancies: 0.1               # fraction of non-magnetic sites (each site independently)
      anisotropy: {spread: 0.2, distribution: gaussian}   # relative std of K per site
      exchange: {spread: 0.1, distribution: uniform}      # relative std of J per bond
      moment: {spread: 0.05}                              # relative std of mu per site
      axis_cone_deg: 5             # per-site axes uniform in a cone around the (grain) axis
      grains:
        size: "20 nm"              # mean grain size d: one grain per d^2 of film area
        axis_cone_deg: 10          # grain axes uniform in a cone around the material axis
        anisotropy: {spread: 0.3}  # relative std of K per grain
        boundary_exchange: 0.5     # J factor on bonds joining two grains, in [0, 1]
      map:
        file: maps/k.png           # PNG/TIFF image or .npy array; relative to the scenario
        scale: "2 nm"              # pixel size (nm per pixel)
        sets: anisotropy           # anisotropy | exchange | moment | vacancies
        range: [0.5, 1.5]          # factor on the material value at pixel value 0 .. 1
        threshold: 0.5             # vacancies only: pixel value below -> vacancy

Pixel values: integer images are divided by their type's maximum (uint8 by 255); float images
and .npy arrays are used as stored. Colour images are averaged over R, G, B (alpha ignored).
Pixel row r, column c covers r s <= y < (r + 1) s, c s <= x < (c + 1) s (s the scale): the
array is used as stored, row 0 at y = 0, as the spin arrays (ny, nx).
"""

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from thinfilm.input.reader import Reader

__all__ = ["SpreadSpec", "GrainSpec", "MapSpec", "DisorderSpec", "parse_disorder", "read_map",
           "DISTRIBUTIONS", "MAP_TARGETS"]

DISTRIBUTIONS = ("gaussian", "uniform")
MAP_TARGETS = ("anisotropy", "exchange", "moment", "vacancies")
MAX_SPREAD = 2.0


@dataclass(frozen=True)
class SpreadSpec:
    """Relative spread of a parameter: factor 1 + spread * xi, xi of zero mean and unit std."""

    spread: float
    distribution: str = "gaussian"


@dataclass(frozen=True)
class GrainSpec:
    size_nm: float
    axis_cone_deg: float = 0.0
    anisotropy: SpreadSpec | None = None
    boundary_exchange: float = 1.0


@dataclass(frozen=True)
class MapSpec:
    file: str
    scale_nm: float
    sets: str
    range: tuple = (0.0, 1.0)
    threshold: float = 0.5


@dataclass(frozen=True)
class DisorderSpec:
    seed: int | None = None
    realisations: int = 1
    vacancies: float = 0.0
    axis_cone_deg: float = 0.0
    anisotropy: SpreadSpec | None = None
    exchange: SpreadSpec | None = None
    moment: SpreadSpec | None = None
    grains: GrainSpec | None = None
    map: MapSpec | None = None

    @property
    def is_disordered(self):
        """True when any disorder is switched on (the per-site engines are needed)."""
        spreads = [s for s in (self.anisotropy, self.exchange, self.moment) if s is not None]
        return bool(self.vacancies > 0 or self.axis_cone_deg > 0
                    or any(s.spread > 0 for s in spreads)
                    or self.grains is not None or self.map is not None)


def read_map(path):
    """Image (PNG, TIFF, ...) or .npy -> 2D float64 array of pixel values (see module doc).

    Raises ValueError (unreadable, not 2D, not finite).
    """
    p = Path(path)
    if p.suffix.lower() == ".npy":
        a = np.load(p, allow_pickle=False)
    elif p.suffix.lower() in (".tif", ".tiff"):
        import tifffile

        a = tifffile.imread(p)
    else:
        import imageio.v3 as iio

        a = iio.imread(p)
    a = np.asarray(a)
    if np.issubdtype(a.dtype, np.integer):
        a = a.astype(np.float64) / np.iinfo(a.dtype).max
    elif a.dtype == bool:
        a = a.astype(np.float64)
    else:
        a = a.astype(np.float64)
    if a.ndim == 3 and a.shape[-1] in (3, 4):
        a = a[..., :3].mean(axis=-1)
    if a.ndim != 2 or min(a.shape) < 1:
        raise ValueError(f"a disorder map must be a 2D image; {p} has shape {a.shape}")
    if not np.all(np.isfinite(a)):
        raise ValueError(f"the disorder map {p} holds NaN or infinite values")
    return a


def _spread(r, name):
    if not r.has(name):
        return None
    s = r.sub(name)
    s.check_keys({"spread", "distribution"})
    val = s.number("spread", required=True, lo=0.0, hi=MAX_SPREAD)
    dist = s.choice("distribution", DISTRIBUTIONS, default="gaussian")
    return SpreadSpec(val, dist)


def _grains(r, lattice):
    g = r.sub("grains")
    g.check_keys({"size", "axis_cone_deg", "anisotropy", "boundary_exchange"})
    size_nm = g.quantity("size", "length", required=True, positive=True) * 1e9
    lx, ly = getattr(lattice, "smallest_box_nm", lattice.box_nm)
    if size_nm < lattice.spacing_nm:
        raise g.error(f"must be at least the lattice spacing ({lattice.spacing_nm:g} nm); got "
                      f"{g.raw('size')!r}", "size")
    if size_nm > math.sqrt(lx * ly):
        raise g.error(f"must not exceed the film size (sqrt of the area, "
                      f"{math.sqrt(lx * ly):.4g} nm); got {g.raw('size')!r}", "size")
    cone = g.number("axis_cone_deg", default=0.0, lo=0.0, hi=180.0)
    bex = g.number("boundary_exchange", default=1.0, lo=0.0, hi=1.0)
    return GrainSpec(size_nm, cone, _spread(g, "anisotropy"), bex)


def _map(r, path, lattice):
    m = r.sub("map")
    m.check_keys({"file", "scale", "sets", "range", "threshold"})
    name = m.raw("file", required=True)
    if not isinstance(name, str) or not name:
        raise m.error(f"must be a file name, got {name!r}", "file")
    f = Path(name)
    if not f.is_absolute() and path and not str(path).startswith("<"):
        f = Path(str(path)).resolve().parent / f  # relative to the scenario file's folder
    if f.suffix.lower() not in (".png", ".tif", ".tiff", ".npy", ".jpg", ".jpeg", ".bmp"):
        raise m.error(f"must be a PNG, TIFF, JPEG, BMP image or a .npy array; got {name!r}",
                      "file")
    if not f.is_file():
        raise m.error(f"file {str(f)!r} does not exist", "file")
    try:
        img = read_map(f)
    except Exception as exc:  # imageio / tifffile / numpy raise many kinds
        raise m.error(f"cannot read {str(f)!r} as a map: {exc}", "file") from None
    scale_nm = m.quantity("scale", "length", required=True, positive=True) * 1e9
    sets = m.choice("sets", MAP_TARGETS, required=True)
    # the map covers the whole box of the film (of the largest film of a set)
    need_x, need_y = lattice.box_nm
    tol = 1 - 1e-12
    if img.shape[1] * scale_nm <= need_x * tol or img.shape[0] * scale_nm <= need_y * tol:
        raise m.error(f"the map ({img.shape[1]} x {img.shape[0]} pixels of {scale_nm:g} nm = "
                      f"{img.shape[1] * scale_nm:.4g} x {img.shape[0] * scale_nm:.4g} nm) must "
                      f"cover the film ({need_x:.4g} x {need_y:.4g} nm)", "scale")
    rng = m.raw("range", [0.0, 1.0])
    if (not isinstance(rng, (list, tuple)) or len(rng) != 2
            or not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in rng)
            or not all(math.isfinite(v) and v >= 0 for v in rng)):
        raise m.error(f"must be two non-negative numbers [low, high] (factors on the material "
                      f"value at pixel values 0 and 1); got {rng!r}", "range")
    if sets == "moment" and min(rng) <= 0:
        raise m.error(f"moment factors must be positive; got {rng!r}", "range")
    thr = m.number("threshold", default=0.5)
    if m.has("threshold") and sets != "vacancies":
        raise m.error("is used only with sets: vacancies", "threshold")
    return MapSpec(str(f), scale_nm, sets, (float(rng[0]), float(rng[1])), thr)


def parse_disorder(raw, path, lattice):
    """Validate the raw ``disorder`` mapping of a scenario.

    Parameters
    ----------
    raw : dict or None
        The mapping under the ``disorder`` key (None: a perfect film).
    path : str
        Scenario file (error messages; map files are relative to its folder).
    lattice : object with box_nm, spacing_nm and optionally smallest_box_nm
        The film geometry (nm): maps must cover box_nm (the largest film of a set), grains
        must fit in smallest_box_nm (default box_nm).

    Returns
    -------
    DisorderSpec

    Raises
    ------
    ScenarioError
        Naming the key, the value and what is allowed.
    """
    if raw is None:
        return DisorderSpec()
    r = Reader(raw, path, "disorder")
    r.check_keys({"seed", "realisations", "vacancies", "axis_cone_deg", "anisotropy",
                  "exchange", "moment", "grains", "map"})
    seed = r.number("seed", integer=True, lo=0)
    n_real = r.number("realisations", default=1, integer=True, lo=1, hi=10000)
    vac = r.number("vacancies", default=0.0, lo=0.0)
    if vac >= 1.0:
        raise r.error(f"must be below 1 (a fraction of the sites); got {r.raw('vacancies')!r}",
                      "vacancies")
    cone = r.number("axis_cone_deg", default=0.0, lo=0.0, hi=180.0)
    grains = _grains(r, lattice) if r.has("grains") else None
    mp = _map(r, path, lattice) if r.has("map") else None
    return DisorderSpec(seed, n_real, vac, cone, _spread(r, "anisotropy"),
                        _spread(r, "exchange"), _spread(r, "moment"), grains, mp)
