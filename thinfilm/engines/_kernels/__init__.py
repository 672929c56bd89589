"""numba kernels on plain arrays: no validation, no allocation inside step loops.

Compiled kernels are cached (``cache=True``). numba keys a cached compile by the source file of
the function alone, so a kernel that calls or inlines a function of another module (or reads
the neighbour tables of :mod:`thinfilm.model.neighbours`) would load a stale compile after that
other file is edited. To make the dependency explicit, every kernel of this package is cached
under a directory named by a hash of all the sources it may depend on (this package and the
neighbour tables): a clean checkout and an edited one each get their own, consistent cache.

Where the cache lives: ``<this folder>/__pycache__/k<hash>``; when that is not writable, or when
``NUMBA_CACHE_DIR`` is set, ``$NUMBA_CACHE_DIR/thinfilm-k<hash>`` (default ``~/.cache/thinfilm``).
Caches of other hashes are removed when a new one is made.
"""

import hashlib
import os
import shutil
from pathlib import Path

from numba.core import caching, config

_HERE = Path(__file__).resolve().parent
_SOURCES = sorted(_HERE.glob("*.py")) + [_HERE.parents[1] / "model" / "neighbours.py"]


def _source_key():
    h = hashlib.sha256()
    for p in _SOURCES:
        h.update(p.name.encode())
        h.update(p.read_bytes())
    return "k" + h.hexdigest()[:12]


KEY = _source_key()


def _cache_root():
    if config.CACHE_DIR:
        return Path(config.CACHE_DIR) / f"thinfilm-{KEY}", False
    intree = _HERE / "__pycache__"
    try:
        intree.mkdir(exist_ok=True)
        probe = intree / f".probe-{os.getpid()}"
        probe.touch()
        probe.unlink()
        return intree / KEY, True
    except OSError:
        return Path.home() / ".cache" / "thinfilm" / f"thinfilm-{KEY}", False


CACHE_DIR, _IN_TREE = _cache_root()


def _prune():
    """Remove caches of other source hashes next to ours (best effort)."""
    if not _IN_TREE or CACHE_DIR.exists():
        return
    for old in CACHE_DIR.parent.glob("k*"):
        if old.is_dir() and old.name != KEY:
            shutil.rmtree(old, ignore_errors=True)


class SourceKeyedLocator(caching._SourceFileBackedLocatorMixin, caching._CacheLocator):
    """numba cache locator for the kernels of this package: one directory per source hash."""

    def __init__(self, py_func, py_file):
        self._py_file = py_file
        self._lineno = py_func.__code__.co_firstlineno
        self._cache_path = str(CACHE_DIR)

    def get_cache_path(self):
        return self._cache_path

    @classmethod
    def from_function(cls, py_func, py_file):
        try:
            if Path(py_file).resolve().parent != _HERE:
                return None
        except OSError:
            return None
        self = cls(py_func, py_file)
        try:
            self.ensure_cache_path()
        except OSError:
            return None
        return self


_prune()
if SourceKeyedLocator not in caching.CacheImpl._locator_classes:
    caching.CacheImpl._locator_classes.insert(0, SourceKeyedLocator)
