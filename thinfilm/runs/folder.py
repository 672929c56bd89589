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

__all__ = ["RunFolder", "TIMESERIES_COLUMNS", "load_snapshot", "read_csv_table", "versions",
           "write_run_manifest", "refresh_file_list"]

TIMESERIES_COLUMNS = ("time_ps", "temperature_K", "field_T", "mx", "my", "mz", "m_axis",
                      "energy_meV", "bx_T", "by_T", "bz_T")


def versions():
    """Versions of Python and the numeric libraries (for manifests)."""
    import numba
    import scipy

    return {"thinfilm": __version__, "python": sys.version.split()[0], "numpy": np.__version__,
            "scipy": scipy.__version__, "numba": numba.__version__, "platform": platform.platform()}


def load_snapshot(path):
    """Read a snapshot .npz into a dict of arrays and scalars."""
    try:
        with np.load(path, allow_pickle=False) as d:
            out = {k: d[k] for k in d.files}
    except FileNotFoundError:
        raise InputError(f"{path}: snapshot file not found") from None
    except (OSError, ValueError) as exc:
        raise InputError(f"{path}: not a readable snapshot .npz ({exc})") from None
    for k in ("time_ps", "temperature_K", "spacing_nm", "periodic", "shape"):
        if k in out and out[k].ndim == 0:
            out[k] = out[k].item()
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

    def write_snapshot(self, name, spins, lattice, **scalars):
        """Write ``snapshots/<name>.npz`` with spins, positions and geometry."""
        p = self.file(f"snapshots/{name}.npz") if "/" not in name else self.file(name)
        # uncompressed: a snapshot costs a memory copy, not a zlib pass (float spins barely compress)
        write_npz(p, compress=False, spins=np.asarray(spins, dtype=np.float64),
                  positions_nm=lattice.positions_nm,
                  spacing_nm=lattice.spacing_nm, box_nm=np.asarray(lattice.box_nm),
                  shape=lattice.shape, periodic=lattice.periodic,
                  **{k: np.asarray(v) for k, v in scalars.items()})
        return p

    def write_checkpoint(self, **arrays):
        write_npz(self.path / "checkpoint.npz", compress=False, **arrays)

    def read_checkpoint(self):
        p = self.path / "checkpoint.npz"
        if not p.exists():
            return None
        with np.load(p, allow_pickle=False) as d:
            return {k: d[k] for k in d.files}
