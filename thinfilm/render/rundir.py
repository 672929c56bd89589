"""Read run folders: snapshot .npz files, sweep point folders, CSV tables and JSON side files."""

import csv
import json
import math
import re
from pathlib import Path

import numpy as np

from thinfilm.input.errors import InputError

__all__ = ["load_snapshot", "iter_snapshots", "sweep_points", "read_table", "read_json"]

POINT_RE = re.compile(r"^L(\d+)_T([-+0-9.eE]+)K$")


def load_snapshot(path):
    """Read one snapshot ``.npz`` into a dict (spins, positions_nm, box_nm, shape, ...).

    Raises
    ------
    InputError
        When the file is missing, unreadable or lacks the ``spins`` array.
    """
    from thinfilm.runs.folder import load_snapshot as read_snapshot

    path = Path(path)
    if not path.is_file():
        raise InputError(f"Snapshot file {path} does not exist.")
    try:
        data = read_snapshot(path)  # both snapshot layouts; positions from lattice.npz
    except InputError:
        raise
    except Exception as exc:  # zip/format errors from numpy
        raise InputError(
            f"Snapshot file {path} is not a readable .npz file ({exc}); snapshots are "
            "NumPy .npz archives with at least a 'spins' array of shape (ny, nx, 3)."
        ) from None
    out = {"spins": data["spins"], "source": path, "components": data["components"]}
    for key in ("positions_nm", "box_nm", "field_T"):
        if key in data:
            out[key] = np.asarray(data[key], dtype=np.float64)
    for key in ("time_ps", "temperature_K", "spacing_nm"):
        if key in data:
            out[key] = float(data[key])
    if "label" in data:
        out["label"] = str(data["label"])
    if "axis" in data:
        out["axis"] = np.asarray(data["axis"], dtype=np.float64)
    out["shape"] = str(data["shape"]) if "shape" in data else "square"
    out["periodic"] = bool(data["periodic"]) if "periodic" in data else True
    return out


def iter_snapshots(run_dir, *, source="auto", lattice_size=None):
    """Snapshot paths of a run folder in movie order.

    Parameters
    ----------
    run_dir : path
        Run folder.
    source : {"auto", "snapshots", "sweep"}
        ``"snapshots"``: ``snapshots/snap_*.npz`` sorted by name (= time order).
        ``"sweep"``: ``points/L{size}_T{T}K/final.npz`` sorted by temperature.
        ``"auto"``: snapshots when present, else the sweep points.
    lattice_size : int, optional
        Sweep size L to show (default: the largest).

    Returns
    -------
    list of Path
    """
    run_dir = Path(run_dir)
    if not run_dir.is_dir():
        raise InputError(
            f"Run folder {run_dir} does not exist or is not a folder; give the folder a "
            "simulation wrote (with manifest.json and snapshots/ or points/)."
        )
    if source not in ("auto", "snapshots", "sweep"):
        raise InputError(f"source must be 'auto', 'snapshots' or 'sweep'; got {source!r}.")
    snaps = sorted((run_dir / "snapshots").glob("snap_*.npz"))
    if source == "snapshots" or (source == "auto" and snaps):
        if not snaps:
            raise InputError(
                f"Run folder {run_dir} has no snapshots/snap_*.npz files; a movie over time "
                "needs at least one snapshot."
            )
        return snaps
    pts = sweep_points(run_dir, "final.npz")
    if pts:
        if lattice_size is None:
            lattice_size = max(pts)
        if lattice_size not in pts:
            raise InputError(
                f"Sweep folder {run_dir / 'points'} has no final.npz for size L={lattice_size}; "
                f"sizes present: {', '.join(map(str, sorted(pts)))}."
            )
        pts = pts[lattice_size]
    if not pts:
        raise InputError(
            f"Run folder {run_dir} has neither snapshots/snap_*.npz (dynamics run) nor "
            "points/L{size}_T{temperature}K/final.npz (sweep); nothing to put in a movie."
        )
    return [p for _, p in pts]


def read_table(path):
    """Read a CSV file into ``{column: float array}`` (empty cells become NaN).

    Raises
    ------
    InputError
        When the file is missing, empty or has non-numeric cells.
    """
    path = Path(path)
    if not path.is_file():
        raise InputError(f"Table {path} does not exist; it is written by the simulation run.")
    with open(path, newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    if not rows or not rows[0]:
        raise InputError(
            f"Table {path} is empty; it needs a header row of column names and data rows."
        )
    head = [h.strip() for h in rows[0]]
    data = {h: [] for h in head}
    for n, row in enumerate(rows[1:], start=2):
        if not row:
            continue
        if len(row) != len(head):
            raise InputError(
                f"Table {path} line {n} has {len(row)} cells but the header has {len(head)}; "
                "every row must have one cell per column."
            )
        for h, cell in zip(head, row, strict=True):
            cell = cell.strip()
            try:
                data[h].append(float(cell) if cell else math.nan)
            except ValueError:
                if h == "method":  # the sweep table's sampler name: text, read as NaN
                    data[h].append(math.nan)
                    continue
                raise InputError(
                    f"Table {path} line {n}, column {h!r}: {cell!r} is not a number; "
                    "all cells must be numbers (empty for missing)."
                ) from None
    return {h: np.asarray(v, dtype=np.float64) for h, v in data.items()}


def read_json(path):
    path = Path(path)
    if not path.is_file():
        return None
    try:
        return json.loads(path.read_text(encoding="utf-8"))
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise InputError(f"File {path} is not valid JSON ({exc}); fix or remove it.") from None


def sweep_points(run_dir, name):
    """{size: [(T, path)]} of points/L{size}_T{T}K/<name>, sorted by temperature."""
    out = {}
    for d in sorted((run_dir / "points").glob("L*_T*K")):
        m = POINT_RE.match(d.name)
        if m and (d / name).is_file():
            out.setdefault(int(m.group(1)), []).append((float(m.group(2)), d / name))
    return {k: sorted(v) for k, v in out.items()}
