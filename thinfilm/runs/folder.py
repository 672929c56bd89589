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
from thinfilm.input.errors import InputError, option

__all__ = ["RunFolder", "TIMESERIES_COLUMNS", "load_snapshot", "read_csv_table", "versions"]

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


class RunFolder:
    """A run folder: ``manifest.json``, ``timeseries.csv``, ``snapshots/``, ``checkpoint.npz``.

    Parameters
    ----------
    path : str or Path
    resume : bool
        Keep existing contents (to continue from ``checkpoint.npz``); otherwise the folder must
        not already hold a run, so nothing is overwritten by accident.
    overwrite : bool
        Allow reusing a folder that holds an earlier run (its files are replaced one by one).
    """

    def __init__(self, path, *, resume=False, overwrite=False):
        self.path = Path(path)
        self.started = time.time()
        self.files = set()
        if self.path.exists() and not self.path.is_dir():
            raise InputError(f"{self.path}: exists and is not a folder; choose another output "
                             f"folder ({option('out_dir')})")
        if (self.path / "manifest.json").exists() and not (resume or overwrite):
            raise InputError(
                f"{self.path}: already holds a run (manifest.json). Use {option('resume')} to "
                f"continue it, {option('overwrite')} to replace it, or choose another folder "
                f"({option('out_dir')})")
        self.path.mkdir(parents=True, exist_ok=True)
        if resume and (self.path / "manifest.json").exists():
            try:
                self.files = set(json.loads((self.path / "manifest.json").read_text()).get("files", []))
            except (OSError, ValueError):
                self.files = set()

    def file(self, name):
        """Path of a file in the folder, remembered for the manifest's file list."""
        self.files.add(str(name))
        p = self.path / name
        p.parent.mkdir(parents=True, exist_ok=True)
        return p

    def write_manifest(self, manifest, *, finished=False):
        m = dict(manifest)
        m["versions"] = versions()
        m["wall_time_s"] = round(time.time() - self.started, 3)
        m["finished"] = bool(finished)
        self.files.add("manifest.json")
        m["files"] = sorted(self.files)
        write_json(self.path / "manifest.json", m)

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
