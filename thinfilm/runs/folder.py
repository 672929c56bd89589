"""Run folder I/O: manifest, time series, snapshots and checkpoints, all written atomically."""

import csv
import json
import platform
import sys
import time
from pathlib import Path

import numpy as np

from thinfilm._io import write_csv, write_json, write_npz
from thinfilm._version import __version__
from thinfilm.input.errors import InputError
from thinfilm.runs.lifecycle import MANIFEST, folder_files, hold, prepare_folder

__all__ = ["RunFolder", "TIMESERIES_COLUMNS", "SNAPSHOT_FORMAT", "load_snapshot", "read_csv_table",
           "snapshot_arrays", "versions", "write_run_manifest", "refresh_file_list"]

TIMESERIES_COLUMNS = ("time_ps", "temperature_K", "field_T", "mx", "my", "mz", "m_axis",
                      "energy_meV", "bx_T", "by_T", "bz_T")


def versions():
    """Versions of Python and the numeric libraries (for manifests)."""
    import numba
    import scipy

    return {"thinfilm": __version__, "python": sys.version.split()[0], "numpy": np.__version__,
            "scipy": scipy.__version__, "numba": numba.__version__, "platform": platform.platform()}


#: Snapshot layout written by :meth:`RunFolder.write_snapshot`. 2: compressed, float32 spins (or
#: only the order-axis component ``m_axis``), the lattice once per folder in ``lattice.npz``
#: (with ``positions_nm`` for triangular and honeycomb lattices; a square lattice's site (i, j)
#: sits at (j a, i a)).
#: Files without ``format`` are the first layout (float64 spins and positions in every file);
#: :func:`load_snapshot` reads both.
SNAPSHOT_FORMAT = 2
LATTICE_FILE = "lattice.npz"


def snapshot_arrays(spins, lattice, *, components="all", axis=None, **scalars):
    """Arrays of one snapshot file (format :data:`SNAPSHOT_FORMAT`).

    ``components="all"``: ``spins`` (ny, nx, 3) as float32 (7 significant digits, far below
    any thermal fluctuation); ``"axis"``: only ``m_axis`` = S.axis (ny, nx) as float32 and the
    unit ``axis``, a third of the size, enough for an order-axis movie and domain analysis.
    """
    arrays = {"format": np.asarray(SNAPSHOT_FORMAT), "spacing_nm": lattice.spacing_nm,
              "box_nm": np.asarray(lattice.box_nm), "shape": lattice.shape,
              "periodic": lattice.periodic}
    s = np.asarray(spins, dtype=np.float64)
    if components == "all":
        arrays["spins"] = s.astype(np.float32)
    elif components == "axis":
        n = np.asarray(axis, dtype=np.float64)
        n = n / np.linalg.norm(n)
        arrays["m_axis"] = (s @ n).astype(np.float32)
        arrays["axis"] = n
    else:
        raise ValueError(f"snapshot components must be 'all' or 'axis'; got {components!r}")
    arrays.update({k: np.asarray(v) for k, v in scalars.items()})
    return arrays


def _positions(path, out):
    """Site positions of a snapshot without them: lattice.npz beside it, else rebuilt."""
    side = Path(path).parent / LATTICE_FILE
    if side.is_file():
        try:
            with np.load(side, allow_pickle=False) as d:
                pos = (np.asarray(d["positions_nm"], dtype=np.float64)
                       if "positions_nm" in d.files else None)
            if pos is not None and pos.shape[:2] == out["grid"]:
                return pos
        except (OSError, ValueError, KeyError):
            pass
    from thinfilm.model.lattice import Lattice

    ny, nx = out["grid"]
    return Lattice(str(out.get("shape", "square")), nx, ny, float(out["spacing_nm"]),
                   bool(out.get("periodic", True))).positions_nm


def load_snapshot(path):
    """Read a snapshot .npz into a dict of arrays and scalars.

    Reads both layouts (see :data:`SNAPSHOT_FORMAT`) into the same dict: ``spins`` (ny, nx, 3)
    float64 and ``positions_nm`` (ny, nx, 2). A file that kept only ``m_axis`` gives ``spins``
    = m_axis * axis (no in-plane part) and ``components`` = "axis"; otherwise "all".
    """
    try:
        with np.load(path, allow_pickle=False) as d:
            out = {k: d[k] for k in d.files}
    except FileNotFoundError:
        raise InputError(f"{path}: snapshot file not found") from None
    except (OSError, ValueError, EOFError) as exc:
        raise InputError(f"{path}: not a readable snapshot .npz ({exc})") from None
    for k in ("time_ps", "temperature_K", "spacing_nm", "periodic", "shape", "format"):
        if k in out and out[k].ndim == 0:
            out[k] = out[k].item()
    fmt = int(out.get("format", 1))
    if fmt > SNAPSHOT_FORMAT:
        raise InputError(f"{path}: snapshot layout {fmt} is newer than this thinfilm reads "
                         f"(up to {SNAPSHOT_FORMAT}); update thinfilm to read it")
    if "spins" in out:
        out["spins"] = np.asarray(out["spins"], dtype=np.float64)
        out["components"] = "all"
    elif "m_axis" in out and "axis" in out:
        n = np.asarray(out["axis"], dtype=np.float64)
        out["spins"] = np.asarray(out["m_axis"], dtype=np.float64)[..., None] * n
        out["components"] = "axis"
    else:
        raise InputError(f"{path}: snapshot has no 'spins' (nor 'm_axis' and 'axis'; found: "
                         f"{', '.join(out) or 'nothing'}); it is not a thinfilm snapshot")
    out["grid"] = out["spins"].shape[:2]
    if "positions_nm" not in out and "spacing_nm" in out:
        out["positions_nm"] = _positions(path, out)
    del out["grid"]
    return out


def read_csv_table(path):
    """Read a CSV with a header into a dict of column name -> float array (or str array)."""
    path = Path(path)
    if not path.is_file():
        raise InputError(f"{path}: file not found")
    with path.open(newline="") as fh:
        rows = list(csv.reader(fh))
    if not rows:
        raise InputError(f"{path}: empty table")
    header, body = rows[0], rows[1:]
    out = {}
    for k, name in enumerate(header):
        col = [r[k] if k < len(r) else "" for r in body]
        try:
            out[name] = np.array([float(v) if v != "" else np.nan for v in col])
        except ValueError:
            out[name] = np.array(col)
    return out


def write_run_manifest(path, manifest, *, finished, identity, wall_time_s, processes):
    """Write ``path/manifest.json`` with the bookkeeping every kind of run folder shares."""
    m = dict(manifest)
    if identity is not None:
        m["identity"] = identity
    m["versions"] = versions()
    m["wall_time_s"] = round(wall_time_s, 3)
    m["processes"] = processes
    m["finished"] = bool(finished)
    m["files"] = sorted(set(folder_files(path)) | {MANIFEST})
    write_json(Path(path) / MANIFEST, m)


def refresh_file_list(path):
    """Rewrite the manifest's ``files`` with every file now in the folder (after figures,
    movies or a plan were added to a finished run); the caller holds the folder."""
    p = Path(path) / MANIFEST
    try:
        m = json.loads(p.read_text())
    except (OSError, ValueError):
        return
    m["files"] = sorted(set(folder_files(path)) | {MANIFEST})
    write_json(p, m)


class RunFolder:
    """A run folder: ``manifest.json``, ``timeseries.csv``, ``snapshots/``, ``checkpoint.npz``.

    Opening one takes the folder's lock (one writer at a time), removes temporary files of
    interrupted writes, and checks or empties what the folder holds
    (:mod:`thinfilm.runs.lifecycle`). Close it (or use it as a context manager) when the run
    ends; a killed process's lock is taken over by the next run.

    Parameters
    ----------
    path : str or Path
    resume : bool
        Keep existing contents (to continue from ``checkpoint.npz``); the folder must hold a run
        of the same identity. Otherwise the folder must not already hold a run, so nothing is
        overwritten by accident.
    overwrite : bool
        Delete an earlier run in the folder (its files) before this one writes.
    identity : dict, optional
        What determines the results (:func:`thinfilm.runs.lifecycle.scenario_identity`);
        stored in the manifest and compared on resume.
    kind : str, optional
        The manifest's ``kind``; a resume of another kind of run is refused.
    """

    def __init__(self, path, *, resume=False, overwrite=False, identity=None, kind=None):
        self.path = Path(path)
        self.started = time.time()
        self.identity, self.kind = identity, kind
        self._lattice_written = set()  # positions files written by this process
        self._hold = hold(self.path)
        self._hold.__enter__()
        try:
            old = prepare_folder(self.path, identity, kind=kind, resume=resume,
                                 overwrite=overwrite)
        except BaseException:
            self.close()
            raise
        self.resumed = old is not None
        self.earlier = old  # the manifest of the run that is continued, or None
        self.earlier_wall_s = float((old or {}).get("wall_time_s") or 0.0)
        self.processes = int((old or {}).get("processes") or (1 if old else 0)) + 1

    def close(self):
        """Release the folder's lock (idempotent)."""
        self._hold.release()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
        return False

    def file(self, name):
        """Path of a file in the folder (its parent folder created)."""
        p = self.path / name
        p.parent.mkdir(parents=True, exist_ok=True)
        return p

    def write_manifest(self, manifest, *, finished=False):
        """Write ``manifest.json``: ``manifest`` plus identity, versions, the wall time summed
        over every process that worked on the run, and every file of the folder."""
        write_run_manifest(self.path, manifest, finished=finished, identity=self.identity,
                           wall_time_s=self.earlier_wall_s + time.time() - self.started,
                           processes=self.processes)

    def write_timeseries(self, rows, name="timeseries.csv"):
        write_csv(self.file(name), TIMESERIES_COLUMNS, rows)

    def write_snapshot(self, name, spins, lattice, *, components="all", axis=None, **scalars):
        """Write ``snapshots/<name>.npz`` (:func:`snapshot_arrays`, compressed) and, once per
        folder, the site positions in ``lattice.npz`` beside it."""
        p = self.file(f"snapshots/{name}.npz") if "/" not in name else self.file(name)
        write_npz(p, compress=True, **snapshot_arrays(spins, lattice, components=components,
                                                      axis=axis, **scalars))
        side = p.parent / LATTICE_FILE
        if str(side) not in self._lattice_written or not side.is_file():
            geometry = {"spacing_nm": lattice.spacing_nm, "box_nm": np.asarray(lattice.box_nm),
                        "shape": lattice.shape, "periodic": lattice.periodic,
                        "cells": np.asarray([lattice.nx, lattice.ny])}
            if lattice.shape != "square":  # a square site (i, j) sits at (j a, i a) exactly
                geometry["positions_nm"] = lattice.positions_nm
            write_npz(self.file(str(side.relative_to(self.path))), compress=True, **geometry)
            self._lattice_written.add(str(side))
        return p

    def write_checkpoint(self, **arrays):
        write_npz(self.path / "checkpoint.npz", compress=False, **arrays)

    def read_checkpoint(self):
        p = self.path / "checkpoint.npz"
        if not p.exists():
            return None
        with np.load(p, allow_pickle=False) as d:
            return {k: d[k] for k in d.files}
