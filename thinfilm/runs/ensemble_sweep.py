"""An equilibrium set over several disorder realisations: one sweep each, and their average.

Realisation k (disorder seed + k) is a complete sweep folder ``realisations/r<k>/``. The folder
itself then holds the disorder average in the usual form, so figures and the heating plan read
it unchanged:

* ``observables.csv``: per size and temperature the mean over realisations of every numeric
  column; an ``*_err`` column is the error of that mean, sqrt(spread^2 + mean thermal error^2)
  / sqrt(n), with spread the sample-to-sample standard deviation;
* ``ensemble.csv``: the spread (``<column>_spread``) of every numeric column;
* ``tc.json``: Tc of the averaged curves, and ``tc_realisations_K``, ``tc_spread_K`` (standard
  deviation over realisations); the mean of the per-realisation Tc values is listed among the
  cross-checks, not as a second Tc;
* ``manifest.json`` of kind ``sweep`` listing the realisations.

A realisation folder that finished is reused on ``resume``.
"""

import json
import math
import warnings
from pathlib import Path

import numpy as np

from thinfilm._io import write_csv, write_json
from thinfilm.runs.folder import RunFolder, read_csv_table
from thinfilm.runs.lifecycle import (
    check_identity,
    read_manifest,
    scenario_identity,
    stored_identity,
)
from thinfilm.runs.sweep import run_sweep
from thinfilm.runs.sweep_point import ROW_COLUMNS
from thinfilm.runs.sweep_tables import COLUMN_UNITS, tc_estimate

__all__ = ["run_ensemble_sweep"]


def _finished(folder):
    m = folder / "manifest.json"
    try:
        return m.is_file() and json.loads(m.read_text()).get("finished")
    except (OSError, ValueError):
        return False


def _average(tables):
    """{column: averaged array}, {column_spread: array} over tables with the same rows."""
    n = len(tables)
    avg, spread = {}, {}
    for c in ROW_COLUMNS:
        if c in ("method",) or not np.issubdtype(np.asarray(tables[0][c]).dtype, np.number):
            avg[c] = tables[0][c]
            continue
        v = np.array([t[c] for t in tables], dtype=np.float64)
        if c in ("size", "temperature_K"):
            avg[c] = v[0]
            continue
        if c.endswith("_err"):
            continue
        with np.errstate(invalid="ignore"), warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)  # all-NaN columns give NaN
            mean = np.nanmean(v, axis=0)
            sd = np.nanstd(v, axis=0, ddof=1) if n > 1 else np.zeros(v.shape[1])
        avg[c], spread[f"{c}_spread"] = mean, sd
        if f"{c}_err" in ROW_COLUMNS:
            e = np.array([t[f"{c}_err"] for t in tables], dtype=np.float64)
            with np.errstate(invalid="ignore"), warnings.catch_warnings():
                warnings.simplefilter("ignore", RuntimeWarning)
                therm = np.sqrt(np.nanmean(e**2, axis=0))
            avg[f"{c}_err"] = np.sqrt(sd**2 + therm**2) / math.sqrt(n)
    return avg, spread


def run_ensemble_sweep(scenario, out_dir, *, resume=False, overwrite=False, workers=None,
                       cluster=None, progress=True):
    """Run one sweep per disorder realisation and write their average; returns the folder.

    The folder's manifest (with the identity of the scenario) is written first, so an
    interrupted set is recognised and resumed; a finished realisation is reused on resume only
    after its own identity matched.
    """
    sc = scenario
    out = Path(out_dir)
    folder = RunFolder(out, resume=resume, overwrite=overwrite, kind="sweep",
                       identity=scenario_identity(sc))
    try:
        _ensemble(sc, out, folder, resume, workers, cluster, progress)
    finally:
        folder.close()
    return out


def _member(sc, f, resume):
    """True when realisation folder f is finished and may be reused (same identity)."""
    if not (resume and _finished(f)):
        return False
    m = read_manifest(f)
    stored = stored_identity(m)
    if stored is not None:
        check_identity(f, stored, scenario_identity(sc))
    return True


def _ensemble(sc, out, folder, resume, workers, cluster, progress):
    n = sc.disorder.realisations
    manifest = {"kind": "sweep", "ensemble": True, "scenario": json.loads(json.dumps(
        sc.describe(), default=lambda o: o.tolist() if hasattr(o, "tolist") else str(o))),
        "realisations": [f"realisations/r{k:02d}" for k in range(n)]}
    folder.write_manifest(manifest)
    folders = []
    for k in range(n):
        f = out / "realisations" / f"r{k:02d}"
        sck = sc.with_changes(disorder_realisation=k)
        if not _member(sck, f, resume):
            if progress:
                print(f"disorder realisation {k + 1}/{n}")
            run_sweep(sck, f, resume=resume, overwrite=not resume, workers=workers,
                      cluster=cluster, progress=progress)
        folders.append(f)
        folder.write_manifest(manifest)  # the wall time so far
    tables = [read_csv_table(f / "observables.csv") for f in folders]
    avg, spread = _average(tables)
    rows = list(zip(*[avg[c] for c in ROW_COLUMNS], strict=True))
    write_csv(out / "observables.csv", ROW_COLUMNS, rows)
    write_csv(out / "ensemble.csv", ["size", "temperature_K", *spread],
              list(zip(avg["size"], avg["temperature_K"], *spread.values(), strict=True)))
    write_json(out / "columns.json", COLUMN_UNITS | {f"{c}_spread": "sample-to-sample standard "
                                                     "deviation over disorder realisations"
                                                     for c in COLUMN_UNITS})
    tcs = [json.loads((f / "tc.json").read_text()).get("tc_K") for f in folders]
    good = [t for t in tcs if t is not None]
    by_point = {(int(r[0]), float(r[1])): dict(zip(ROW_COLUMNS, r, strict=True)) for r in rows}
    tc = dict(tc_estimate(by_point, sc.material.anisotropy_J), tc_realisations_K=tcs,
              tc_spread_K=float(np.std(good, ddof=1)) if len(good) > 1 else None)
    if good:  # the mean over realisations is a cross-check of the Tc of the averaged curves
        tc["cross_checks"] = [*tc.get("cross_checks", []), {
            "method": "realisation_mean", "label": f"mean Tc of {len(good)} realisations",
            "sizes": tc.get("sizes"), "tc_K": float(np.mean(good)),
            "tc_err_K": float(np.std(good, ddof=1) / np.sqrt(len(good))) if len(good) > 1
            else None, "bracketed": False, "in_error": False,
            "note": "each realisation's own Tc; their spread is the sample-to-sample spread"}]
    write_json(out / "tc.json", tc)
    manifest.update({"tc_K": tc.get("tc_K"), "tc_spread_K": tc["tc_spread_K"]})
    folder.write_manifest(manifest, finished=True)
