"""Atomic file writes: write to a temporary file in the same folder, then rename."""

import csv
import io
import json
import os
import tempfile
from pathlib import Path

import numpy as np

__all__ = ["atomic_write_bytes", "atomic_write_text", "write_json", "write_npz", "write_csv"]


def atomic_write_bytes(path, data):
    """Write ``data`` (bytes) to ``path`` atomically; parent folders are created."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    return path


def atomic_write_text(path, text):
    """Write a UTF-8 text file atomically."""
    return atomic_write_bytes(path, text.encode("utf-8"))


def _default(obj):
    if isinstance(obj, np.generic):
        return obj.item()
    if isinstance(obj, np.ndarray):
        return obj.tolist()
    if isinstance(obj, Path):
        return str(obj)
    raise TypeError(f"cannot store {type(obj).__name__} in JSON")


def write_json(path, obj):
    """Write ``obj`` as indented JSON atomically (NumPy scalars and arrays allowed)."""
    return atomic_write_text(path, json.dumps(obj, indent=2, default=_default, allow_nan=True) + "\n")


def write_npz(path, *, compress=True, **arrays):
    """Write a NumPy .npz atomically (compressed unless ``compress=False``, which is faster)."""
    buf = io.BytesIO()
    (np.savez_compressed if compress else np.savez)(buf, **arrays)
    return atomic_write_bytes(path, buf.getvalue())


def write_csv(path, columns, rows):
    """Write a CSV table atomically.

    Parameters
    ----------
    columns : sequence of str
        Header; each name carries its unit (``temperature_K``).
    rows : iterable of sequences
        One sequence per row; floats are written with repr precision.
    """
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(columns)
    for row in rows:
        w.writerow(["" if v is None else (repr(float(v)) if isinstance(v, (float, np.floating)) else v) for v in row])
    return atomic_write_text(path, buf.getvalue())
