"""Fingerprints of short deterministic runs: SHA-256 of the spins and tables they write.

    python benchmarks/fingerprint.py [--demo]            # prints one line per run

Used to show that a change of layout or of the drivers leaves results bitwise the same: run it
before and after and compare the printed lines (`diff`). Uses only the public API, so it runs
unchanged on any version of the package. ``--demo`` adds the full embedded demo (about a minute).
"""

import argparse
import hashlib
import sys
import tempfile
from pathlib import Path

import numpy as np

import thinfilm

BASE = {
    "material": {"moment": "2 muB", "exchange": "2 meV",
                 "anisotropy": {"constant": "0.2 meV", "axis": [0, 0, 1]}},
    "field": {"value": [0, 0, 0.1], "unit": "T"},
    "seed": 11,
}


def llg(shape, edges):
    return dict(BASE, name=f"fp-llg-{shape}-{edges}",
                lattice={"shape": shape, "cells": [24, 20], "spacing": "0.4 nm", "edges": edges},
                temperature="15 K", initial="random",
                dynamics={"method": "llg", "damping": 0.1, "timestep": "1 fs",
                          "duration": "0.6 ps"},
                record={"every": "0.1 ps", "snapshots": "0.3 ps"})


def mc(shape):
    return dict(BASE, name=f"fp-mc-{shape}",
                lattice={"shape": shape, "cells": [16, 16], "spacing": "0.4 nm",
                         "edges": "periodic"},
                temperature={"start": "20 K", "stop": "30 K", "step": "5 K"}, sizes=[8, 16],
                initial="up",
                dynamics={"method": "monte-carlo", "sweeps": {"warmup": 50, "samples": 200}},
                sweep={"order": "heating", "snapshots": 4})


def digest(folder):
    """SHA-256 over every .npz array and .csv table of a run folder (wall times excluded)."""
    h = hashlib.sha256()
    for p in sorted(Path(folder).rglob("*")):
        if p.suffix == ".npz" and p.name != "checkpoint.npz":
            with np.load(p) as z:
                for k in sorted(z.files):
                    h.update(k.encode())
                    h.update(np.ascontiguousarray(z[k]).tobytes())
        elif p.suffix == ".csv":
            h.update(p.read_bytes())
    return h.hexdigest()[:16]


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--demo", action="store_true", help="also run the embedded demo")
    args = ap.parse_args()
    cases = [llg(s, e) for s in ("square", "triangular", "honeycomb") for e in ("periodic", "open")]
    cases += [mc(s) for s in ("square", "triangular", "honeycomb")]
    with tempfile.TemporaryDirectory() as tmp:
        for sc in cases:
            out = Path(tmp) / sc["name"]
            thinfilm.run(sc, out, progress=False)
            print(f"{sc['name']:28s} {digest(out)}", flush=True)
        if args.demo:
            out = Path(tmp) / "demo"
            thinfilm.demo(out, progress=False)
            print(f"{'demo':28s} {digest(out)}", flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
