"""FFTW plans that stay the same from one process to the next: wisdom and plan choice on disk.

FFTW_MEASURE picks among algorithms by timing them, and different algorithms round differently
(about 1e-7 of the field in single precision), so a run resumed in a new process would see a
slightly different dipolar field. The first process that plans a grid stores FFTW's wisdom and
our choice between the batched and the per-grid plan (:mod:`.fft_plan`); later processes load
both and rebuild the same plans, so a resumed dipolar run continues bit for bit on the same
machine (same FFTW build and thread count).

Folder: ``$THINFILM_FFT_CACHE``, else ``$XDG_CACHE_HOME/thinfilm/fftw``, else
``~/.cache/thinfilm/fftw``; one file ``plans.json``, written atomically. A cache that cannot be
read or written is ignored: plans are then measured afresh, as without it.
"""

import json
import os
from pathlib import Path

from thinfilm._io import atomic_write_text

__all__ = ["cache_path", "load", "store"]

_VERSION = 1


def cache_path():
    """The plan cache file (it need not exist)."""
    root = os.environ.get("THINFILM_FFT_CACHE")
    if not root:
        base = os.environ.get("XDG_CACHE_HOME") or str(Path.home() / ".cache")
        root = str(Path(base) / "thinfilm" / "fftw")
    return Path(root) / "plans.json"


def load():
    """(wisdom: tuple of bytes or None, choices: dict) from the cache; empty when unreadable."""
    try:
        data = json.loads(cache_path().read_text())
        if data.get("version") != _VERSION:
            return None, {}
        wisdom = tuple(w.encode("ascii") for w in data["wisdom"])
        return wisdom, {str(k): int(v) for k, v in data["choices"].items()}
    except (OSError, ValueError, KeyError, TypeError, AttributeError):
        return None, {}


def store(wisdom, choices):
    """Write FFTW's wisdom (tuple of bytes) and the plan choices; False when it cannot."""
    text = json.dumps({"version": _VERSION, "wisdom": [w.decode("ascii") for w in wisdom],
                       "choices": choices}, indent=1, sort_keys=True)
    try:
        atomic_write_text(cache_path(), text)
    except OSError:
        return False
    return True
