"""Reading a measured table of temperature and a signal: CSV columns with units in their headers.

A header names its unit as ``temperature_K``, ``temperature (K)`` or ``temperature [K]``. The
first column is the temperature (K, mK or degC); the signal may be in any unit (the unit is only
a label); an error column, when present, must carry the signal's unit.
"""

import csv
import re
from pathlib import Path

import numpy as np

from thinfilm.input.errors import InputError

__all__ = ["split_header", "read_columns", "temperature_kelvin", "read_curve"]

_BRACKET = re.compile(r"^\s*(.*?)\s*[\[(]\s*([^\])]+?)\s*[\])]\s*$")
_TEMP_UNITS = {"k": 1.0, "kelvin": 1.0, "mk": 1e-3}
_CELSIUS = ("degc", "°c", "celsius", "c")
ERROR_WORDS = ("err", "sigma", "uncert", "std")


def split_header(name):
    """(quantity, unit) of a column header; unit None when the header carries none."""
    name = name.strip()
    m = _BRACKET.match(name)
    if m and m.group(1):
        return m.group(1), m.group(2)
    if "_" in name:
        head, _, unit = name.rpartition("_")
        if head and unit:
            return head, unit
    return name, None


def temperature_kelvin(values, unit, path, column):
    """Values in ``unit`` (K, mK, degC) -> K; InputError for other units."""
    u = unit.strip().lower()
    if u in _TEMP_UNITS:
        return np.asarray(values, dtype=float) * _TEMP_UNITS[u]
    if u in _CELSIUS:
        return np.asarray(values, dtype=float) + 273.15
    raise InputError(
        f"{path}: column {column!r}: unit {unit!r} is not a temperature unit; write the "
        "temperature column as temperature_K, temperature (K), temperature_mK or temperature_degC"
    )


def read_columns(path):
    """Header and float columns of a CSV file (lines starting with # are comments).

    Returns
    -------
    names : list of str
    data : ndarray (n_rows, n_columns)
    """
    path = Path(path)
    if not path.is_file():
        raise InputError(f"{path}: no such file; give a CSV file with a header row")
    try:
        text = path.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"{path}: cannot be read as text ({exc})") from None
    lines = [ln for ln in text.splitlines() if ln.strip() and not ln.lstrip().startswith("#")]
    if len(lines) < 2:
        raise InputError(f"{path}: needs a header row and at least one data row")
    rows = list(csv.reader(lines))
    names = [c.strip() for c in rows[0]]
    data = []
    for k, row in enumerate(rows[1:], start=2):
        if len(row) != len(names):
            raise InputError(f"{path}: data row {k} has {len(row)} fields but the header has "
                             f"{len(names)} ({', '.join(names)})")
        try:
            data.append([float(v) for v in row])
        except ValueError:
            raise InputError(f"{path}: data row {k} holds a field that is not a number: "
                             f"{row!r}") from None
    arr = np.asarray(data, dtype=float)
    if not np.all(np.isfinite(arr)):
        raise InputError(f"{path}: holds NaN or infinite values; remove those rows")
    return names, arr


def read_curve(path, *, signal=None, error=None, min_points=6):
    """A measured curve: temperature (K, increasing), signal, optional error.

    Parameters
    ----------
    path : str or Path
        CSV file; first column the temperature with its unit in the header.
    signal, error : str, optional
        Header of the signal and error columns (default: the second column, and a third column
        whose name contains err, sigma, uncert or std).
    min_points : int
        Fewest data rows accepted.

    Returns
    -------
    dict
        temperature_K, signal, signal_err (or None), signal_name, signal_unit, reversed (the
        file ran from high to low temperature).
    """
    names, arr = read_columns(path)
    units = [split_header(n) for n in names]
    missing = [n for n, (_, u) in zip(names, units, strict=True) if u is None]
    if missing:
        raise InputError(
            f"{path}: column {missing[0]!r} has no unit in its header; every column needs one, "
            "written as name_unit, name (unit) or name [unit] (for example temperature_K, "
            "kerr_signal (mrad), moment [emu]; a.u. is accepted for arbitrary units)")
    if len(names) < 2:
        raise InputError(f"{path}: needs a temperature column and a signal column; found "
                         f"{names}")
    t = temperature_kelvin(arr[:, 0], units[0][1], path, names[0])
    idx_s = 1 if signal is None else _column(names, signal, path)
    idx_e = None
    if error is not None:
        idx_e = _column(names, error, path)
    else:
        rest = [k for k in range(1, len(names)) if k != idx_s
                and any(w in units[k][0].lower() for w in ERROR_WORDS)]
        idx_e = rest[0] if rest else None
    if idx_e is not None and units[idx_e][1] != units[idx_s][1]:
        raise InputError(f"{path}: error column {names[idx_e]!r} is in {units[idx_e][1]!r} but "
                         f"the signal {names[idx_s]!r} is in {units[idx_s][1]!r}; give both in "
                         "one unit")
    if t.size < min_points:
        raise InputError(f"{path}: has {t.size} data rows; at least {min_points} are needed")
    d = np.diff(t)
    rev = bool(np.all(d < 0))
    if not (np.all(d > 0) or rev):
        k = int(np.argmax(d <= 0) if d[0] > 0 else np.argmax(d >= 0)) + 2
        raise InputError(
            f"{path}: the temperature column {names[0]!r} is not monotonic (it turns back or "
            f"repeats at data row {k}, {arr[k - 1, 0]:g} {units[0][1]}); give one heating or one "
            "cooling curve with each temperature once (split a heating-cooling loop into two "
            "files)")
    if np.any(t <= 0):
        raise InputError(f"{path}: temperatures must be above 0 K; the smallest is {t.min():g} K")
    order = np.argsort(t)
    s = arr[order, idx_s]
    e = None if idx_e is None else arr[order, idx_e]
    if e is not None and not np.all(e > 0):
        raise InputError(f"{path}: error column {names[idx_e]!r} must be positive in every row")
    return {"temperature_K": t[order], "signal": s, "signal_err": e,
            "signal_name": units[idx_s][0], "signal_unit": units[idx_s][1], "reversed": rev,
            "path": str(path)}


def _column(names, name, path):
    if name in names:
        return names.index(name)
    bare = [split_header(n)[0] for n in names]
    if name in bare:
        return bare.index(name)
    raise InputError(f"{path}: has no column {name!r}; the columns are {', '.join(names)}")
