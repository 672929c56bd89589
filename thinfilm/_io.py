"""Atomic file writes: write to a temporary file in the same folder, then rename.

A written file gets the permissions the user's umask gives any new file (``0o666 & ~umask``),
not the private 0o600 of a temporary file. A file-system error (no permission, disk full, a
file in the way) becomes one :class:`OutputError` paragraph.
"""

import csv
import errno
import io
import json
import os
import tempfile
import threading
from pathlib import Path

import numpy as np

__all__ = ["atomic_write_bytes", "atomic_write_text", "write_json", "write_npz", "write_csv",
           "os_error", "file_mode", "OutputError"]


class OutputError(OSError):
    """A file or folder cannot be written (no permission, disk full, a file in the way); the
    message is one paragraph naming the path, the reason and what to do."""

_umask_guard = threading.Lock()


def file_mode():
    """Permissions of a new file under the current umask (0o666 & ~umask)."""
    with _umask_guard:  # os.umask can only be read by setting it
        mask = os.umask(0o022)
        os.umask(mask)
    return 0o666 & ~mask


_ADVICE = {
    errno.EACCES: "you have no permission to write there; choose an output folder you own or "
                  "ask for write access",
    errno.EPERM: "the operation is not permitted there; choose an output folder you own",
    errno.ENOSPC: "the disk is full; free some space or choose a folder on another disk, then "
                  "resume the run: finished parts are kept",
    errno.EDQUOT: "your disk quota is used up; free some space or choose a folder on another "
                  "disk, then resume the run: finished parts are kept",
    errno.EROFS: "the file system is read-only; choose a writable output folder",
    errno.ENOTDIR: "a part of that path is a file, not a folder; choose another output folder",
    errno.EEXIST: "a file of that name is in the way; choose another output folder",
    errno.EISDIR: "a folder of that name is in the way; choose another output folder",
}


def os_error(exc, path=None, doing="write it"):
    """An :class:`OutputError` (one paragraph) for an OSError met while writing ``path``."""
    where = path or exc.filename or "the output folder"
    reason = exc.strerror or str(exc)
    advice = _ADVICE.get(exc.errno, "check the path and the disk, then try again")
    err = OutputError(f"{where}: cannot {doing} ({reason}); {advice}.")
    err.errno = exc.errno
    return err



def atomic_write_bytes(path, data):
    """Write ``data`` (bytes) to ``path`` atomically; parent folders are created.

    Raises
    ------
    OutputError
        When the file cannot be written (one paragraph naming the path and what to do).
    """
    path = Path(path)
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    except OSError as exc:
        raise os_error(exc, path) from None
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            try:
                os.fchmod(fh.fileno(), file_mode())
            except OSError:  # a file system without Unix permissions keeps its own
                pass
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException as exc:
        if os.path.exists(tmp):
            os.unlink(tmp)
        if isinstance(exc, OSError) and not isinstance(exc, OutputError):
            raise os_error(exc, path) from None
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
    text = json.dumps(obj, indent=2, default=_default, allow_nan=True)
    return atomic_write_text(path, text + "\n")


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
        w.writerow(["" if v is None else (repr(float(v)) if isinstance(v, (float, np.floating))
                                          else v) for v in row])
    return atomic_write_text(path, buf.getvalue())
