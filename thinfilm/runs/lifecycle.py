"""The life of a run folder: who may write it, what it holds, and how it is started afresh.

* **Identity.** A folder holds one scenario. Its identity is what determines the results (the
  resolved physics, dynamics, seeds, sizes and temperatures; not the scenario's name, the
  spelling of its path, the instrument or the movie settings, which only the plan and the
  renderers read). It is stored in ``manifest.json`` when a run starts; every resume, reuse and
  ensemble member compares it with the scenario at hand and refuses a mismatch, naming the keys
  that differ.
* **One writer at a time.** A run holds ``.thinfilm.lock`` (process id and host inside) for its
  whole life, with an advisory ``flock`` on it that the kernel drops when the process dies: a
  second process is refused, a lock left by a killed process is taken over.
* **No stray files.** Temporary files of writes that a kill interrupted (``.<name>.<random>.tmp``,
  :mod:`thinfilm._io`) are removed when the next run starts in the folder.
* **Overwrite empties first.** ``overwrite`` removes what the earlier run wrote (every file its
  manifest lists, and its snapshot, point and realisation folders) before the new run writes.
"""

import json
import os
import re
import shutil
import socket
import threading
import time
from pathlib import Path

from thinfilm._io import os_error
from thinfilm.input.errors import InputError, option

__all__ = ["LOCK_NAME", "FolderLock", "hold", "identity", "scenario_identity", "check_identity",
           "differences", "remove_stray_temps", "clear_run", "folder_files", "os_error",
           "prepare_folder", "read_manifest", "is_temp_name", "stored_identity"]

LOCK_NAME = ".thinfilm.lock"
MANIFEST = "manifest.json"
# names of the temporary files of thinfilm._io.atomic_write_bytes: .<final name>.<random>.tmp
_TEMP = re.compile(r"^\..+\.[A-Za-z0-9_]+\.tmp$")
# folders a run owns entirely (removed on overwrite even when an old manifest did not list them)
RUN_SUBFOLDERS = ("snapshots", "points", "realisations")
RUN_FILES = ("checkpoint.npz", "fluctuations.json")
# settings that do not change a result: names, path spelling, instrument, movie, plots
IGNORED_KEYS = ("name", "source", "instrument", "instruments", "movie")


def is_temp_name(name):
    """True for the name of a temporary file of an interrupted atomic write."""
    return bool(_TEMP.match(name))


def _mkdir(path):
    path = Path(path)
    if path.exists() and not path.is_dir():
        raise InputError(f"{path}: exists and is not a folder; choose another output folder "
                         f"({option('out_dir')})")
    try:
        path.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise os_error(exc, path, "create it as a folder") from None
    return path


# --- one writer at a time ----------------------------------------------------------------------

_held = {}  # resolved folder -> [FolderLock, depth]: the locks this process holds (re-entrant)
_held_guard = threading.Lock()


def _process_start(pid):
    """Start time of a process (clock ticks since boot, Linux), or None."""
    try:
        with open(f"/proc/{pid}/stat") as fh:
            return int(fh.read().rsplit(")", 1)[1].split()[19])
    except (OSError, ValueError, IndexError):
        return None


class FolderLock:
    """The lock file of a run folder, held for the life of a run (re-entrant in one process).

    Parameters
    ----------
    folder : str or Path
        An existing folder.
    """

    def __init__(self, folder):
        self.folder = Path(folder)
        self.path = self.folder / LOCK_NAME
        self._fd = None
        self.took_over = None  # the holder record of a stale lock that was taken over

    def _holder(self):
        try:
            return json.loads(self.path.read_text())
        except (OSError, ValueError):
            return {}

    def acquire(self):
        import fcntl

        for _ in range(20):
            try:
                fd = os.open(self.path, os.O_RDWR | os.O_CREAT, 0o666)
            except OSError as exc:
                raise os_error(exc, self.path, "create it (the lock file)") from None
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
            except OSError:
                os.close(fd)
                h = self._holder()
                since = h.get("started")
                when = time.strftime("%Y-%m-%d %H:%M:%S", time.localtime(since)) if since else "?"
                raise InputError(
                    f"{self.folder}: another thinfilm process is writing this folder (process "
                    f"{h.get('pid', '?')} on host {h.get('host', '?')}, since {when}, lock file "
                    f"{self.path}). Two writers would mix their files: wait for it to finish, "
                    f"stop it, or choose another folder ({option('out_dir')}).") from None
            try:
                same = os.fstat(fd).st_ino == os.stat(self.path).st_ino
            except OSError:
                same = False
            if not same:  # the previous holder removed the file between our open and flock
                os.close(fd)
                continue
            old = os.read(fd, 4096)
            if old.strip():
                try:
                    self.took_over = json.loads(old)
                except ValueError:
                    self.took_over = {}
            rec = {"pid": os.getpid(), "host": socket.gethostname(), "started": time.time(),
                   "process_start": _process_start(os.getpid())}
            try:
                os.ftruncate(fd, 0)
                os.pwrite(fd, (json.dumps(rec) + "\n").encode(), 0)
            except OSError as exc:
                os.close(fd)
                raise os_error(exc, self.path, "write it (the lock file)") from None
            self._fd = fd
            return self
        raise InputError(f"{self.folder}: could not take the lock file {self.path} (it kept "
                         f"changing); is another process starting runs in this folder?")

    def release(self):
        if self._fd is None:
            return
        try:
            os.unlink(self.path)  # while still locked: nobody else holds it
        except OSError:
            pass
        os.close(self._fd)  # closing drops the flock
        self._fd = None


class hold:  # noqa: N801 - used as a context manager, reads as a verb
    """Context manager: create ``folder`` if needed and hold its lock (re-entrant).

    Nested holds of the same folder in one process share one lock; it is released when the
    outermost hold exits.
    """

    def __init__(self, folder):
        self.created = not Path(folder).exists()
        self.folder = _mkdir(folder)
        self.key = os.path.realpath(self.folder)
        self.lock = None
        self.outermost = False

    def __enter__(self):
        with _held_guard:
            entry = _held.get(self.key)
            if entry is not None:
                entry[1] += 1
                self.lock = entry[0]
                return self
        lock = FolderLock(self.folder).acquire()
        with _held_guard:
            _held[self.key] = [lock, 1]
        self.lock, self.outermost = lock, True
        return self

    def __exit__(self, *exc):
        self.release()
        return False

    def release(self):
        if self.lock is None:
            return
        with _held_guard:
            entry = _held.get(self.key)
            if entry is None:
                return
            entry[1] -= 1
            last = entry[1] == 0
            if last:
                del _held[self.key]
        if last:
            entry[0].release()
            if self.created:  # a run refused before it wrote anything leaves no empty folder
                try:
                    self.folder.rmdir()
                except OSError:
                    pass
        self.lock = None


# --- identity ----------------------------------------------------------------------------------

def _jsonable(obj):
    return json.loads(json.dumps(obj, default=lambda o: o.tolist() if hasattr(o, "tolist")
                                 else str(o)))


def identity(described, snapshot_every_ps=None, **extra):
    """The identity of a scenario from its ``describe()`` dict: what determines its results.

    Drops the name, the source path, the instrument(s) and the movie settings; an ``initial``
    state read from a file is named by its resolved path. ``extra`` adds run settings that are
    not part of the scenario (e.g. a heating sequence's temperatures).
    """
    d = _jsonable(described)
    for k in IGNORED_KEYS:
        d.pop(k, None)
    ini = d.get("initial")
    if isinstance(ini, str) and os.sep in ini and os.path.exists(ini):
        d["initial"] = os.path.realpath(ini)
    if snapshot_every_ps is not None:
        d["snapshot_every_ps"] = snapshot_every_ps
    if extra:
        d["run"] = _jsonable(extra)
    return d


def scenario_identity(sc, **extra):
    """:func:`identity` of a Scenario."""
    snap = sc.snapshot_every_s * 1e12 if sc.snapshot_every_s else None
    return identity(sc.describe(), snap, **extra)


def _flatten(d, prefix=""):
    out = {}
    if isinstance(d, dict):
        for k, v in d.items():
            out.update(_flatten(v, f"{prefix}{k}."))
        if not d and prefix:
            out[prefix[:-1]] = {}
        return out
    out[prefix[:-1]] = d
    return out


def differences(old, new):
    """[(dotted key, old value, new value)] where two identities differ (missing: None)."""
    a, b = _flatten(old), _flatten(new)
    return [(k, a.get(k), b.get(k)) for k in sorted(set(a) | set(b)) if a.get(k) != b.get(k)]


def _show(v, digits=6):
    if isinstance(v, float):
        return f"{v:.{digits}g}"
    if isinstance(v, list) and all(isinstance(x, float) for x in v):
        return "[" + ", ".join(f"{x:.{digits}g}" for x in v) + "]"
    s = json.dumps(v) if not isinstance(v, str) else v
    return s if len(s) <= 40 else s[:37] + "..."


def _pair(a, b):
    """The two values as text, with enough digits to tell them apart."""
    for digits in (6, 12, 17):
        x, y = _show(a, digits), _show(b, digits)
        if x != y:
            return x, y
    return x, y


def check_identity(folder, stored, current, *, doing="resume"):
    """Refuse (InputError, one paragraph) when the stored identity differs from the current."""
    diff = differences(stored, current)
    if not diff:
        return
    shown = "; ".join("{}: {} in the folder, {} now".format(k, *_pair(a, b))
                      for k, a, b in diff[:6])
    more = f" (and {len(diff) - 6} more)" if len(diff) > 6 else ""
    raise InputError(
        f"{folder}: cannot {doing} it with this scenario: the folder holds a run of a different "
        f"scenario, and mixing the two would give results of neither. What differs: {shown}"
        f"{more}. Either {doing} with the scenario that started the folder, write this one to "
        f"another folder ({option('out_dir')}), or replace the earlier run with "
        f"{option('overwrite')} (deletes its files).")


def read_manifest(folder):
    """The manifest dict of a folder, None when there is none; InputError when unreadable."""
    p = Path(folder) / MANIFEST
    if not p.is_file():
        return None
    try:
        m = json.loads(p.read_text())
    except (OSError, ValueError) as exc:
        raise InputError(f"{p}: unreadable manifest ({exc}); this folder cannot be resumed: "
                         f"choose another folder ({option('out_dir')})") from None
    if not isinstance(m, dict):
        raise InputError(f"{p}: not a thinfilm manifest; choose another folder "
                         f"({option('out_dir')})")
    return m


def stored_identity(manifest):
    """The identity a manifest stores (derived from its scenario for older folders)."""
    if manifest.get("identity") is not None:
        return manifest["identity"]
    sc = manifest.get("scenario")
    return None if sc is None else identity(sc)


# --- stray files and emptying ------------------------------------------------------------------

def remove_stray_temps(folder):
    """Remove temporary files of interrupted writes under ``folder``; returns how many.

    A subfolder that is a run folder of its own (it holds a lock file: a run is writing it, or
    one was killed there) is left to that run, which cleans it when it starts."""
    n = 0
    for root, dirs, files in os.walk(folder):
        dirs[:] = [d for d in dirs if not os.path.exists(os.path.join(root, d, LOCK_NAME))]
        for f in files:
            if is_temp_name(f):
                try:
                    os.unlink(os.path.join(root, f))
                    n += 1
                except FileNotFoundError:
                    pass
                except OSError as exc:
                    raise os_error(exc, os.path.join(root, f), "remove it") from None
    return n


def folder_files(folder):
    """Every file under ``folder`` (relative POSIX paths, sorted), without the lock file and
    temporary files of writes in progress."""
    folder = Path(folder)
    out = []
    for root, _dirs, files in os.walk(folder):
        for f in files:
            if f == LOCK_NAME or is_temp_name(f):
                continue
            out.append(Path(root, f).relative_to(folder).as_posix())
    return sorted(out)


def clear_run(folder, manifest):
    """Remove what the earlier run in ``folder`` wrote (its manifest's files, its run folders)."""
    folder = Path(folder).resolve()
    names = [n for n in (manifest or {}).get("files", []) if isinstance(n, str)]
    try:
        for sub in RUN_SUBFOLDERS:
            if (folder / sub).is_dir():
                shutil.rmtree(folder / sub)
        for name in [*names, *RUN_FILES, MANIFEST]:
            p = (folder / name).resolve()
            if folder not in p.parents or not p.is_file():
                continue  # never outside the folder
            p.unlink()
        for root, dirs, _files in os.walk(folder, topdown=False):  # folders the run left empty
            for d in dirs:
                try:
                    os.rmdir(os.path.join(root, d))
                except OSError:
                    pass
    except OSError as exc:
        raise os_error(exc, exc.filename or folder, "remove the earlier run from it") from None


def prepare_folder(folder, ident, *, kind, resume, overwrite):
    """Start a run in a held folder: clean, check and (on overwrite) empty it.

    Returns the earlier manifest that is continued (resume), else None.
    """
    folder = Path(folder)
    remove_stray_temps(folder)
    old = read_manifest(folder)
    if old is None:
        return None
    if overwrite and not resume:
        if "kind" not in old:
            raise InputError(f"{folder / MANIFEST}: not a thinfilm manifest, so "
                             f"{option('overwrite')} will not delete anything here; choose "
                             f"another folder "
                             f"({option('out_dir')})")
        clear_run(folder, old)
        return None
    if not resume:
        raise InputError(
            f"{folder}: already holds a run (manifest.json). Use {option('resume')} to continue "
            f"it, {option('overwrite')} to delete it and start afresh, or choose another folder "
            f"({option('out_dir')}).")
    if old.get("kind") not in (None, kind):
        raise InputError(f"{folder}: holds a {old.get('kind')!r} run, not a {kind!r} run; "
                         f"choose another folder ({option('out_dir')}), or "
                         f"{option('overwrite')} to replace it")
    stored = stored_identity(old)
    if stored is not None and ident is not None:
        check_identity(folder, stored, ident)
    return old
