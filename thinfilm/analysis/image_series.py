"""A series of measured domain images against temperature, analysed into one table.

Each image goes through :func:`thinfilm.analysis.imaging.analyse_image` (same background, mask,
threshold and smoothing options as ``thinfilm image``; its files land in ``images/<stem>/``),
and the same normalised contrast and domain map give the period and stripe order
(:mod:`thinfilm.analysis.patterns`) and the wall length per area. Errors:

* correlation length: the quadrant jackknife of ``analyse_image``; the OZ fit: its covariance;
* mean domain area: standard error of the mean over the domains (edge domains included);
* period: half a ring of the structure factor, (dk / 2) / k_peak relative; not determined (NaN)
  unless the ring-averaged S(k) peaks beyond the two smallest rings at least 3 times as high as
  its mode-weighted mean below half the peak wavenumber (an Ornstein-Zernike field has no
  period);
* stripe order and wall length per area: standard error of the four image quadrants' values.

Wall length: the number of 4-neighbour pixel pairs of opposite sign times the pixel size times
pi/4 (the Cauchy-Crofton factor for walls of random orientation, common practice; walls along
the pixel axes are underestimated by that factor).
"""

import csv
import fnmatch
import math
import re
from pathlib import Path

import numpy as np

from thinfilm import _io
from thinfilm.analysis.domains import label_domains
from thinfilm.analysis.imaging import analyse_image, load_image
from thinfilm.analysis.mt_table import split_header, temperature_kelvin
from thinfilm.analysis.patterns import stripe_orientation, stripe_period
from thinfilm.input.errors import InputError
from thinfilm.input.units import parse_quantity

__all__ = ["read_index", "index_from_folder", "wall_length_per_area", "analyse_series",
           "SERIES_COLUMNS"]

SERIES_COLUMNS = [
    "temperature_K", "file", "correlation_length_nm", "correlation_length_nm_err",
    "correlation_length_fit_nm", "correlation_length_fit_nm_err", "domain_count",
    "mean_domain_area_nm2", "mean_domain_area_nm2_err", "typical_domain_area_nm2",
    "median_domain_area_nm2", "mean_equivalent_diameter_nm", "period_nm", "period_nm_err",
    "mean_period_nm", "stripe_order", "stripe_order_err", "wall_length_per_area_per_um",
    "wall_length_per_area_per_um_err", "up_area_fraction",
]


def read_index(path):
    """Rows (file Path, temperature K, pixel size text) of a CSV index.

    Columns: ``file``; a temperature with its unit (``temperature_K``, ``temperature (degC)``);
    a pixel size with its unit (``pixel_size_nm``, ``pixel_size (um)``). Files are relative to
    the index's folder. Every file must exist and all pixel sizes must agree.
    """
    path = Path(path)
    if not path.is_file():
        raise InputError(f"{path}: no such index file; give a CSV with columns file, "
                         "temperature_K and pixel_size_nm")
    with path.open(encoding="utf-8-sig") as fh:
        rows = [r for r in csv.reader(ln for ln in fh if ln.strip() and not ln.startswith("#"))]
    if len(rows) < 2:
        raise InputError(f"{path}: needs a header row and at least one image row")
    head = [h.strip() for h in rows[0]]
    parts = [split_header(h) for h in head]
    i_file = next((k for k, h in enumerate(head) if h.lower() == "file"
                   or parts[k][0].lower() == "file"), None)
    if i_file is None:
        raise InputError(f"{path}: has no 'file' column; the columns are {', '.join(head)}")
    i_t = next((k for k, (n, u) in enumerate(parts) if n.lower().startswith("temperature")),
               None)
    i_p = next((k for k, (n, u) in enumerate(parts) if n.lower().startswith("pixel")), None)
    if i_t is None or i_p is None:
        raise InputError(f"{path}: needs the columns file, temperature_<unit> and "
                         f"pixel_size_<unit>; found {', '.join(head)}")
    for k in (i_t, i_p):
        if parts[k][1] is None:
            raise InputError(f"{path}: column {head[k]!r} has no unit in its header; write it "
                             "as temperature_K / pixel_size_nm, or name (unit)")
    out = []
    for n, r in enumerate(rows[1:], start=2):
        if len(r) != len(head):
            raise InputError(f"{path}: line {n} has {len(r)} fields; the header has {len(head)}")
        f = (path.parent / r[i_file].strip()).resolve()
        if not f.is_file():
            raise InputError(f"{path}: line {n}: image {r[i_file].strip()!r} is listed in the "
                             f"index but missing ({f} does not exist); fix the name or remove "
                             "the row")
        try:
            t = float(temperature_kelvin([float(r[i_t])], parts[i_t][1], path, head[i_t])[0])
        except ValueError:
            raise InputError(f"{path}: line {n}: temperature {r[i_t]!r} is not a number") \
                from None
        out.append((f, t, f"{r[i_p].strip()} {parts[i_p][1]}"))
    return _checked(out, str(path))


def index_from_folder(folder, pattern, *, pixel_size):
    """Rows of a series given as a folder and a file pattern with ``{T}`` at the temperature.

    ``pattern`` is a shell pattern in which ``{T}`` stands for the temperature in K, e.g.
    ``"film_{T}K.tif"``; all images share ``pixel_size`` (text with unit).
    """
    folder = Path(folder)
    if "{T}" not in pattern:
        raise InputError(f"pattern {pattern!r} must contain {{T}} where the temperature in K "
                         "stands in the file names, e.g. 'film_{T}K.tif'")
    if not folder.is_dir():
        raise InputError(f"{folder}: no such folder")
    glob = pattern.replace("{T}", "*")
    rx = re.compile("^" + re.escape(pattern).replace(r"\{T\}", r"([-+]?\d+(?:\.\d+)?)") + "$")
    rows = []
    for f in sorted(folder.iterdir()):
        if fnmatch.fnmatch(f.name, glob):
            m = rx.match(f.name)
            if m:
                rows.append((f.resolve(), float(m.group(1)), pixel_size))
    if not rows:
        raise InputError(f"{folder}: no file matches {pattern!r} with a number at {{T}}")
    return _checked(rows, f"{folder}/{pattern}")


def _length_nm(text, what, where):
    """A positive length with unit ("5 nm") in nm, or a one-paragraph InputError."""
    try:
        value = parse_quantity(text, "length") * 1e9
    except ValueError as exc:
        raise InputError(f"{where}: {what} {text!r} is not a length: {exc}") from None
    if not value > 0:
        raise InputError(f"{where}: {what} must be a positive length; got {text!r}")
    return value


def _checked(rows, where):
    sizes = {}
    for f, _, p in rows:
        sizes.setdefault(round(_length_nm(p, "pixel size", f), 9), []).append(f.name)
    if len(sizes) > 1:
        desc = "; ".join(f"{s:g} nm: {', '.join(n[:3])}{' ...' if len(n) > 3 else ''}"
                         for s, n in sorted(sizes.items()))
        raise InputError(f"{where}: the images have different pixel sizes ({desc}); a series "
                         "compares lengths only at one pixel size, so resample the images to one "
                         "pixel size or analyse each magnification as its own series")
    temps = [t for _, t, _ in rows]
    if len(set(temps)) != len(temps):
        raise InputError(f"{where}: two images share one temperature; give one image per "
                         "temperature (or average them first)")
    return sorted(rows, key=lambda r: r[1])


def wall_length_per_area(signs_map, valid, pixel_nm):
    """Wall length per area (1/um) of a +-1 map: opposite-sign 4-neighbour pairs x a x pi/4."""
    s, v = signs_map, valid
    h = (s[:, 1:] != s[:, :-1]) & v[:, 1:] & v[:, :-1]
    w = (s[1:, :] != s[:-1, :]) & v[1:, :] & v[:-1, :]
    area = v.sum() * pixel_nm**2
    return (h.sum() + w.sum()) * pixel_nm * (math.pi / 4) / area * 1e3 if area else math.nan


def _quadrants(a):
    ny, nx = a.shape[0] // 2, a.shape[1] // 2
    return [a[:ny, :nx], a[:ny, nx:2 * nx], a[ny:2 * ny, :nx], a[ny:2 * ny, nx:2 * nx]]


def _sem4(values):
    v = np.asarray([x for x in values if np.isfinite(x)], dtype=float)
    return float(np.std(v, ddof=1) / math.sqrt(v.size)) if v.size >= 2 else math.nan


def _extras(path, pixel_size, out_dir, level, smoothing, background, mask, highpass_length):
    img, valid, pixel_nm = load_image(path, pixel_size=pixel_size, mask=mask,
                                      background=background, highpass_length=highpass_length)
    sm = None if smoothing is None else _length_nm(smoothing, "smoothing", path)
    labels, signs = label_domains(img, level=level, smoothing_nm=sm, pixel_nm=pixel_nm,
                                  valid=valid)
    smap = np.where(valid, signs[labels], 0)
    field = np.where(valid, img, 0.0)
    per = stripe_period(field, pixel_nm)
    q = stripe_orientation(field, pixel_nm)
    qs = [stripe_orientation(f, pixel_nm)["order"] for f in _quadrants(field)]
    wall = wall_length_per_area(smap, valid, pixel_nm)
    ws = [wall_length_per_area(a, b, pixel_nm)
          for a, b in zip(_quadrants(smap), _quadrants(valid), strict=True)]
    areas = np.array([])
    sizes = Path(out_dir) / "domain_sizes.csv"  # written by analyse_image
    if sizes.is_file():
        with sizes.open() as fh:
            areas = np.array([float(r["area_nm2"]) for r in csv.DictReader(fh)])
    # a period only where S(k) peaks away from the smallest rings (else: not determined)
    kb, sr = per["k_bins_per_nm"], per["s_radial"]
    sel = (kb > 0) & (kb < 0.5 * per["k_peak_per_nm"])
    # mean over modes below half the peak: rings weighted by their mode count (~ k)
    low = np.sum(sr[sel] * kb[sel]) / np.sum(kb[sel]) if sel.any() else 0.0
    peaked = per["k_peak_per_nm"] >= 2.5 * per["dk_per_nm"] and sr.max() >= 3.0 * low
    nan = math.nan
    return {
        "period_nm": per["period_nm"] if peaked else nan,
        "period_nm_err": (per["period_nm"] * 0.5 * per["dk_per_nm"] / per["k_peak_per_nm"]
                          if peaked else nan),
        "mean_period_nm": per["mean_period_nm"] if peaked else nan, "stripe_order": q["order"],
        "stripe_order_err": _sem4(qs), "wall_length_per_area_per_um": wall,
        "wall_length_per_area_per_um_err": _sem4(ws),
        "mean_domain_area_nm2_err": (float(areas.std(ddof=1) / math.sqrt(areas.size))
                                     if areas.size >= 2 else math.nan),
    }


def analyse_series(rows, out_dir, *, level=0.0, smoothing=None, background="plane", mask=None,
                   highpass_length=None, source=""):
    """Analyse every image of a series; write ``image_series.csv`` and ``image_series.json``
    into ``out_dir`` (the figure: :func:`thinfilm.render.series_plot.write_image_series`).

    Parameters
    ----------
    rows : list of (Path, temperature_K, pixel size text)
        From :func:`read_index` or :func:`index_from_folder`.
    level, smoothing, background, mask, highpass_length
        As in :func:`thinfilm.analysis.imaging.analyse_image`, the same for every image.

    Returns
    -------
    dict
        columns (list of str) and table (dict column -> list).
    """
    out = Path(out_dir)
    table = {c: [] for c in SERIES_COLUMNS}
    for f, t, pix in rows:
        sub = out / "images" / f.stem
        res = analyse_image(f, pixel_size=pix, out_dir=sub, level=level, smoothing=smoothing,
                            background=background, mask=mask, highpass_length=highpass_length)
        ext = _extras(f, pix, sub, level, smoothing, background, mask, highpass_length)
        row = {"temperature_K": t, "file": f.name,
               "typical_domain_area_nm2": res.get("area_weighted_mean_domain_area_nm2"), **res,
               **ext}
        for c in SERIES_COLUMNS:
            v = row.get(c)
            table[c].append(math.nan if v is None else v)
    _io.write_csv(out / "image_series.csv", SERIES_COLUMNS,
                  [[table[c][k] for c in SERIES_COLUMNS] for k in range(len(rows))])
    _io.write_json(out / "image_series.json", {
        "source": source, "n_images": len(rows), "pixel_size": rows[0][2],
        "options": {"level": level, "smoothing": smoothing, "background": background,
                    "mask": None if mask is None else str(mask),
                    "highpass_length": highpass_length},
        "errors": __doc__.split("Errors:")[1].split("Wall length:")[0].strip(),
        "table": "image_series.csv"})
    return {"columns": SERIES_COLUMNS, "table": table}
