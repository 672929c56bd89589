"""Temperature sweeps: every (size, temperature) point on a process pool or a Dask cluster.

Each point is one task (:func:`thinfilm.sweep_point.compute_point`). Independent points are
all submitted at once; a heating or cooling chain (one per size) submits its next point when
the previous one has finished, with that point's final spins. The caller writes each point
folder, ``point.json`` last, so an interrupted sweep keeps every finished point and
``resume=True`` recomputes only the rest -- with the same seeds and starting states, so the
tables are bitwise those of an uninterrupted run.

Folder layout (DIR): ``observables.csv``, ``columns.json``, ``tc.json``, ``manifest.json``,
``points/L{size}_T{T:.3f}K/`` with ``final.npz``, ``timeseries.csv``, ``correlation.csv``,
``domain_sizes.csv`` and ``point.json``.
"""

import concurrent.futures as cf
import json
import multiprocessing
import os
import time
import warnings
from pathlib import Path

import numpy as np
from tqdm import tqdm

from thinfilm._io import write_csv, write_json, write_npz
from thinfilm.analysis.tc_rule import mode_keys
from thinfilm.input.errors import InputError, ScenarioError, ThinFilmWarning, option
from thinfilm.runs.folder import RunFolder
from thinfilm.runs.lifecycle import scenario_identity
from thinfilm.runs.sweep_point import (
    ROW_COLUMNS,
    PointTask,
    compute_point,
    init_worker,
    point_name,
    point_seed,
)
from thinfilm.runs.sweep_tables import (
    COLUMN_UNITS,
    TABLE_EXTRA,
    length_convergence,
    refine_temperatures,
    select_second_moment,
    tc_estimate,
)

__all__ = ["run_sweep", "sweep_plan", "available_cores", "CONNECT_TIMEOUT_S"]

CONNECT_TIMEOUT_S = 20  # seconds to wait for a Dask scheduler
PARTIAL = "partial.npz"  # state of an unfinished Monte Carlo point (removed when it finishes)


def available_cores():
    """Cores this process may run on."""
    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


def sweep_plan(scenario, temperatures=None):
    """Chains of (size, temperature) points in run order.

    Returns
    -------
    list of list of (int, float)
        'independent': one single-point chain per point; 'heating' / 'cooling': one chain per
        size in increasing / decreasing temperature.
    """
    sw = scenario.sweep
    sizes = sw.sizes or (scenario.lattice.nx,)
    temps = sorted(sw.temperatures_K if temperatures is None else temperatures)
    if sw.order == "independent":
        return [[(L, t)] for L in sizes for t in temps]
    if sw.order == "cooling":
        temps = temps[::-1]
    return [[(L, t) for t in temps] for L in sizes]


def _check(sc):
    if not sc.is_sweep:
        raise ScenarioError("has a single temperature and size; a sweep needs a list or a "
                            "{start, stop, step} range of temperatures, or several sizes",
                            path=sc.source, key="temperature")
    bad = [t for t in sc.sweep.temperatures_K if not t > 0]
    if bad:
        raise ScenarioError(f"sweep temperatures must be above 0 K (thermal averages divide by "
                            f"kB T); got {bad[0]!r} K", path=sc.source, key="temperature")
    sizes = sc.sweep.sizes
    if sizes is None and sc.lattice.nx != sc.lattice.ny:
        raise ScenarioError(f"a sweep runs L x L lattices; cells {[sc.lattice.nx, sc.lattice.ny]} "
                            f"are not square: make them square or give sizes: [L, ...]",
                            path=sc.source, key="lattice.cells")


class _Inline(cf.Executor):
    """Runs each task at submit time in this process (workers=1: no process start-up)."""

    def submit(self, fn, /, *args, **kwargs):
        fut = cf.Future()
        try:
            fut.set_result(fn(*args, **kwargs))
        except Exception as exc:  # noqa: BLE001 - delivered through the future
            fut.set_exception(exc)
        return fut


def _warm_kernels(sc):
    """Compile the point's kernels once here (a tiny 4 x 4 point) so that the worker processes
    load them from numba's on-disk cache instead of each compiling them at the same time."""
    from dataclasses import replace

    d = replace(sc.dynamics, sweeps_warmup=2, sweeps_samples=20,
                duration_s=20 * sc.dynamics.time_step_s, warmup_s=0.0, sample_every=1)
    tiny = sc.with_changes(dynamics=d, sweep=replace(sc.sweep, snapshots=2))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        compute_point(PointTask(tiny, 4, float(sc.sweep.temperatures_K[-1]), 0))


def _executor(n_tasks, workers, cluster):
    """(executor, description, closer) for local processes, a Dask scheduler or inline."""
    if cluster:
        try:
            from distributed import Client
        except ImportError:
            raise InputError(f"{option('cluster', repr(cluster))}: the Dask client is not "
                             f"installed; install thinfilm[cluster] (dask[distributed])") from None
        try:
            client = Client(cluster, timeout=f"{CONNECT_TIMEOUT_S}s")
        except (OSError, TimeoutError) as exc:
            raise InputError(f"{option('cluster', repr(cluster))}: cannot reach a Dask "
                             f"scheduler there ({exc}); give the address a running scheduler "
                             f"prints, e.g. "
                             f"tcp://host:8786") from None
        slots = sum(client.nthreads().values())
        return client.get_executor(pure=False), {"kind": "dask", "address": cluster,
                                                 "worker_threads": slots,
                                                 "window": max(4, 2 * slots)}, client.close
    cores = available_cores()
    if workers is not None and (isinstance(workers, bool) or int(workers) < 1):
        raise InputError(f"{option('workers', None)} must be a positive integer, got "
                         f"{workers!r}")
    n = min(int(workers) if workers else cores, max(1, n_tasks))
    if n == 1:
        return _Inline(), {"kind": "inline", "workers": 1, "window": 1}, lambda: None
    methods = multiprocessing.get_all_start_methods()
    ctx = multiprocessing.get_context("forkserver" if "forkserver" in methods else "spawn")
    threads = max(1, cores // n)
    ex = cf.ProcessPoolExecutor(max_workers=n, mp_context=ctx, initializer=init_worker,
                                initargs=(threads,))
    return ex, {"kind": "processes", "workers": n, "threads_per_worker": threads,
                "window": 2 * n}, \
        lambda: ex.shutdown(wait=True, cancel_futures=True)


def _write_point(out, res, name):
    """Write a point folder; ``point.json`` last (the 'finished' mark). Returns the point's
    compute time (s), which goes to the manifest: the point's files hold results only, so an
    interrupted and resumed sweep writes them byte for byte as an uninterrupted one."""
    d = out / "points" / name
    details = dict(res["details"])
    seconds = details.pop("compute_time_s", None)
    write_npz(d / "final.npz", **res["final"])
    write_csv(d / "timeseries.csv", *res["timeseries"])
    write_csv(d / "correlation.csv", ("r_nm", "C", "C_err"), res["correlation"])
    write_csv(d / "domain_sizes.csv", ("snapshot", "area_nm2", "diameter_nm", "sign"),
              res["domains"])
    write_json(d / "point.json", {"row": res["row"], "details": details})
    (d / PARTIAL).unlink(missing_ok=True)  # the point is finished
    return seconds


def _read_point(out, name):
    p = out / "points" / name / "point.json"
    if not p.is_file():
        return None
    try:
        return json.loads(p.read_text())["row"]
    except (OSError, ValueError, KeyError):
        return None  # a damaged mark: the point is recomputed


def _final_spins(out, name):
    """The final state of a point, renormalised (snapshots keep float32 spins)."""
    with np.load(out / "points" / name / "final.npz", allow_pickle=False) as d:
        s = np.array(d["spins"], dtype=np.float64)
    norm = np.linalg.norm(s, axis=-1, keepdims=True)
    return np.divide(s, norm, out=np.zeros_like(s), where=norm > 0)  # vacancies stay empty


def _run_chains(sc, out, chains, rows, executor, bar, window, start_from=None, on_point=None,
                local=True):
    """Run the chains; fill rows {(L, T): row}; at most ``window`` tasks in flight.

    start_from: {chain index: (spins, label)} for chains that continue another state;
    on_point: called after each point is written; local: the workers share this file system
    (they keep the state of an unfinished Monte Carlo point in ``points/<name>/partial.npz``).
    """
    pending = {}
    ready = []  # (chain, point index, spins, start label) waiting for a slot

    def advance(ci, k):
        """Queue point k of chain ci, skipping finished points (their final state is reused)."""
        spins, start = (start_from or {}).get(ci, (None, "initial")) if k == 0 else (None, None)
        while k < len(chains[ci]):
            L, t = chains[ci][k]
            row = _read_point(out, point_name(L, t))
            if row is None:
                if k > 0:
                    prev = point_name(*chains[ci][k - 1])
                    spins, start = _final_spins(out, prev), f"points/{prev}/final.npz"
                ready.append((ci, k, spins, start))
                return
            rows[(L, t)] = row
            bar.update(1)
            k += 1

    def fill():
        while ready and len(pending) < window:
            ci, k, spins, start = ready.pop(0)
            L, t = chains[ci][k]
            partial = (str((out / "points" / point_name(L, t) / PARTIAL).resolve())
                       if local else None)
            task = PointTask(sc, L, t, point_seed(sc.seed, L, t), spins, start, partial)
            pending[executor.submit(compute_point, task)] = (ci, k)

    for ci in range(len(chains)):
        advance(ci, 0)
    fill()
    while pending:
        done, _ = cf.wait(list(pending), return_when=cf.FIRST_COMPLETED)
        for fut in sorted(done, key=lambda f: pending[f]):
            ci, k = pending.pop(fut)
            res = fut.result()
            L, t = chains[ci][k]
            name = point_name(L, t)
            seconds = _write_point(out, res, name)
            rows[(L, t)] = _read_point(out, name)
            bar.update(1)
            if on_point is not None:
                on_point(name, seconds)
            if k + 1 < len(chains[ci]):
                advance(ci, k + 1)
        fill()


def _refine_chains(sc, chains, extra):
    """Chains of the refinement points; a heating/cooling chain starts from the nearest
    first-pass point before it in chain order. Returns (chains, {chain: first-pass name})."""
    if sc.sweep.order == "independent":
        return sweep_plan(sc, extra), {}
    new, parents = [], {}
    for chain in chains:
        L = chain[0][0]
        temps = sorted(extra, reverse=sc.sweep.order == "cooling")
        before = [t for _, t in chain if (t < temps[0] if sc.sweep.order == "heating"
                                          else t > temps[0])]
        if before:
            parents[len(new)] = point_name(L, before[-1])
        new.append([(L, t) for t in temps])
    return new, parents


def _jsonable(obj):
    """Round-trip through JSON (arrays to lists) so manifests compare equal after reading."""
    return json.loads(json.dumps(obj, default=lambda o: o.tolist() if hasattr(o, "tolist")
                                 else str(o)))


def run_sweep(scenario, out_dir, *, resume=False, overwrite=False, workers=None, cluster=None,
              progress=True):
    """Run every (size, temperature) point of a sweep scenario and write the sweep folder.

    Parameters
    ----------
    scenario : Scenario
        With a ``sweep`` (several temperatures and/or sizes), temperatures > 0 K.
    out_dir : str or Path
        Sweep folder (see the module docstring).
    resume : bool
        Keep finished points (those with ``point.json``) and compute only the others.
    overwrite : bool
        Reuse a folder that holds an earlier run; every point is recomputed.
    workers : int, optional
        Local worker processes (default: all cores, capped by the number of tasks that can
        run at once; 1 runs in this process).
    cluster : str, optional
        Dask scheduler address (``tcp://host:port``); the points run there instead.
    progress : bool
        Progress bar over points.

    Returns
    -------
    Path
        The sweep folder.
    """
    sc = scenario
    _check(sc)
    out = Path(out_dir)
    folder = RunFolder(out, resume=resume, overwrite=overwrite, kind="sweep",
                       identity=scenario_identity(sc))
    try:
        _sweep(sc, out, folder, resume, workers, cluster, progress)
    finally:
        folder.close()
    return out


def _sweep(sc, out, folder, resume, workers, cluster, progress):
    chains = sweep_plan(sc)
    n_parallel = len(chains)
    manifest = {"kind": "sweep", "scenario": _jsonable(sc.describe()), "order": sc.sweep.order,
                "method": sc.dynamics.method, "sizes": sorted({c[0][0] for c in chains}),
                "temperatures_K": list(sc.sweep.temperatures_K), "refine": sc.sweep.refine,
                "snapshots_per_point": sc.sweep.snapshots, "seed": sc.seed,
                "instrument": sc.instrument}
    executor, how, close = _executor(n_parallel, workers, cluster)
    if how["kind"] == "processes":
        _warm_kernels(sc)
    manifest["executor"] = how
    window = how.pop("window")
    manifest["point_compute_time_s"] = dict((folder.earlier or {}).get("point_compute_time_s")
                                            or {})
    folder.write_manifest(manifest)
    last = [time.time()]

    def saved(name, seconds):
        """After each finished point: its compute time, the manifest's wall time and file list
        (written at most once a second)."""
        manifest["point_compute_time_s"][name] = seconds
        if time.time() - last[0] > 1.0:
            folder.write_manifest(manifest)
            last[0] = time.time()

    rows = {}
    if not resume:
        _clear_marks(out, chains)
    bar = tqdm(total=sum(map(len, chains)), unit="point", desc="sweep",
               disable=(not progress) or None, leave=False)
    try:
        local = how["kind"] != "dask"
        _run_chains(sc, out, chains, rows, executor, bar, window, on_point=saved, local=local)
        extra = []
        if sc.sweep.refine == "near-tc":
            extra = refine_temperatures(rows, sc.sweep.temperatures_K,
                                            anisotropy=sc.material.anisotropy_J)
            manifest["refined_temperatures_K"] = extra
            if extra:
                rchains, parents = _refine_chains(sc, chains, extra)
                if not resume:
                    _clear_marks(out, rchains)
                bar.total += sum(map(len, rchains))
                bar.refresh()
                start = {ci: (_final_spins(out, p), f"points/{p}/final.npz")
                         for ci, p in parents.items()}
                _run_chains(sc, out, rchains, rows, executor, bar, window, start, on_point=saved,
                            local=local)
    finally:
        bar.close()
        close()
    _finish(out, sc, folder, manifest, rows)


def _clear_marks(out, chains):
    """Without resume every point is recomputed: drop stale 'finished' marks and states of
    unfinished points first."""
    for chain in chains:
        for L, t in chain:
            for name in ("point.json", PARTIAL):
                (out / "points" / point_name(L, t) / name).unlink(missing_ok=True)


def _film_side(sc):
    """Shorter side (nm) of the film of size L, as a function of L."""
    from thinfilm.model.lattice import Lattice

    lat = sc.lattice

    def side(size):
        return float(min(Lattice(lat.shape, int(size), int(size), lat.spacing_nm,
                                 lat.periodic).box_nm))
    return side


def _finish(out, sc, folder, manifest, rows):
    keys = sorted(rows)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        tc = tc_estimate(rows, anisotropy=sc.material.anisotropy_J)
    tc["warnings"] = sorted({str(w.message) for w in caught})
    select_second_moment(rows, tc.get("tc_K"))
    length_convergence(rows, _film_side(sc))
    columns = ROW_COLUMNS + TABLE_EXTRA
    table = [[rows[k][c] for c in columns] for k in keys]
    write_csv(out / "observables.csv", columns, table)
    write_json(out / "columns.json", COLUMN_UNITS)
    write_json(out / "tc.json", tc)
    manifest["points"] = [point_name(*k) for k in keys]
    manifest["tc_K"] = tc.get("tc_K")
    low = sorted(point_name(*k) for k in keys if rows[k]["n_effective"] < 50)
    manifest["points_with_few_samples"] = low
    folder.write_manifest(manifest, finished=True)
    if low:
        warnings.warn(f"{len(low)} of {len(keys)} sweep points have fewer than 50 effectively "
                      f"independent samples (e.g. {low[0]}); their error bars are unreliable: "
                      f"raise {mode_keys(sc.mode)['samples']}", ThinFilmWarning, stacklevel=3)
