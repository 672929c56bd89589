"""One point of a temperature sweep: sample one (size, temperature), measure and analyse it.

The worker function :func:`compute_point` is a pure function of its :class:`PointTask`
(scenario, size, temperature, seed, starting spins): it returns the table row and every
array the point folder needs, and writes nothing. The caller (:mod:`thinfilm.sweep`) writes
the folder, so the same task gives bitwise the same point on a local process pool, a Dask
cluster without a shared disk, or in the calling process.

Units: temperatures in K, energies in meV per spin, lengths in nm, areas in nm^2.
"""

import time
import warnings
from dataclasses import dataclass, replace

import numba
import numpy as np

from thinfilm.analysis.correlation import (
    kmin_plan,
    kmin_power,
)
from thinfilm.analysis.thermo import thermodynamics
from thinfilm.engines.montecarlo import PARALLEL_MIN_SITES
from thinfilm.engines.select import make_llg, make_monte_carlo
from thinfilm.engines.stochastic_llg import initial_spins, stable_time_step
from thinfilm.input.errors import ScenarioError, ThinFilmWarning
from thinfilm.input.units import MEV_J
from thinfilm.model.disorder import scenario_site_parameters
from thinfilm.model.parameters import build_model
from thinfilm.runs.folder import SNAPSHOT_FORMAT
from thinfilm.runs.point_analysis import ORDERED_BINDER, _spatial
from thinfilm.runs.point_state import checkpoint_every_s, load_partial, save_partial

__all__ = ["PointTask", "compute_point", "point_seed", "point_name", "sized_scenario",
           "ROW_COLUMNS", "init_worker"]

#: Columns of ``observables.csv`` (one row per size and temperature), in order.
ROW_COLUMNS = (
    "size", "temperature_K", "m_abs", "m_abs_err", "m_norm", "m_norm_err",
    "susceptibility", "susceptibility_err", "susceptibility_norm", "susceptibility_norm_err",
    "specific_heat", "specific_heat_err", "energy_meV", "energy_meV_err", "binder", "binder_err",
    "tau_int", "n_effective", "n_samples",
    "correlation_length_nm", "correlation_length_nm_err",
    "correlation_length_fit_nm", "correlation_length_fit_nm_err",
    "correlation_length_sk_nm", "correlation_length_sk_nm_err",
    "correlation_length_instrument_nm", "correlation_length_instrument_nm_err",
    "correlation_length_full_nm", "correlation_length_full_nm_err",
    "correlation_length_connected_nm", "correlation_length_connected_nm_err",
    "second_moment_connected",
    "mean_domain_area_nm2", "mean_domain_area_nm2_err", "area_weighted_domain_area_nm2",
    "domain_count", "largest_domain_fraction",
    "stripe_period_nm", "stripe_order", "bubble_count",
    "wall_on_boundary_fraction", "wall_on_boundary_expected", "method", "seed",
)


def init_worker(n_threads):
    """Process-pool initializer: give each worker ``n_threads`` numba threads."""
    from thinfilm.config import set_threads

    set_threads(n_threads)


@dataclass(frozen=True)
class PointTask:
    """Everything one sweep point needs (picklable; sent to worker processes or Dask).

    Attributes
    ----------
    scenario : Scenario
        The resolved sweep scenario.
    size : int
        L of the L x L cells of this point.
    temperature_K : float
        Bath temperature (K).
    seed : int
        Seed of this point (see :func:`point_seed`).
    spins : ndarray (L, L, 3) or None
        Starting spins (heating/cooling chains); None starts from ``scenario.initial``.
    start : str
        Where the spins came from (for ``point.json``).
    checkpoint : str or None
        File for the state of an unfinished Monte Carlo point (:mod:`thinfilm.runs.point_state`:
        written by the worker, read back when the point is computed again after a kill); None
        (e.g. on a remote cluster) keeps no such state.
    """

    scenario: object
    size: int
    temperature_K: float
    seed: int
    spins: object = None
    start: str = "initial"
    checkpoint: object = None


def point_seed(seed, size, temperature_K):
    """Seed of one point: a deterministic hash of (seed, size, temperature index).

    The temperature index is the temperature in integer microkelvin, so points added by the
    ``near-tc`` refinement never collide with first-pass points and keep their seed whatever
    else is in the sweep.
    """
    key = [int(seed), int(size), int(round(float(temperature_K) * 1e6))]
    return int(np.random.SeedSequence(key).generate_state(1, np.uint64)[0] >> np.uint64(1))


def point_name(size, temperature_K):
    """Folder name of a point: ``L{size}_T{temperature:.3f}K``."""
    return f"L{int(size)}_T{float(temperature_K):.3f}K"


def sized_scenario(scenario, size):
    """The scenario with L x L cells (``size`` None keeps the scenario's own cells)."""
    if size is None:
        return scenario
    return scenario.with_changes(lattice=replace(scenario.lattice, nx=int(size), ny=int(size)))


def _start_spins(task, model):
    sc = task.scenario
    lat = model.lattice
    if task.spins is not None:
        return np.ascontiguousarray(np.asarray(task.spins, dtype=np.float64))
    try:
        return initial_spins(lat, sc.initial, seed=task.seed, axis=model.axis,
                             width_nm=sc.initial_width_nm)
    except ValueError as exc:
        raise ScenarioError(
            f"the saved initial state cannot start a sweep point of size L = {task.size}: {exc}. "
            f"A sweep over several sizes needs an initial state of random, up, down, stripes or "
            f"labyrinth",
            path=sc.source, key="initial") from None


def _order(model, mv):
    """Order parameter per sample: m along the axis (K > 0) or abs(m) (as MonteCarlo)."""
    return mv @ model.axis if model.anisotropy_J > 0 else np.linalg.norm(mv, axis=1)


def _split(n_samples, n_snap):
    n_snap = int(max(1, min(n_snap, n_samples)))
    return [len(c) for c in np.array_split(np.arange(n_samples), n_snap)]


#: S(k_min) probes per run at most (fewer on short runs: one per sample). A probe costs a
#: Python call and O(N) work, small beside a sweep except on the smallest lattices.
N_PROBES = 1000


class _Probes:
    """S(k_min) probes along a run, for the second-moment length (periodic lattices only):
    one after every ``every``-th sample."""

    def __init__(self, model, n_samples):
        lat = model.lattice
        self.axis = model.axis
        self.plan = kmin_plan(lat.positions_nm, lat.box_nm, lat.period) if lat.periodic else None
        self.every = max(1, -(-int(n_samples) // N_PROBES))
        self.values, self.at, self.done = [], [], 0

    def stretches(self, n):
        """Sample counts covering the next ``n`` samples, each ending where a probe is due."""
        if self.plan is None:
            return [n]
        pos, end, out = self.done, self.done + n, []
        while pos < end:
            nxt = min(end, (pos // self.every + 1) * self.every)
            out.append(nxt - pos)
            pos = nxt
        return out

    def after(self, spins, m):
        """``m`` more samples were taken; probe ``spins`` when a probe is due."""
        self.done += m
        if self.plan is not None and self.done % self.every == 0:
            self.values.append(kmin_power(spins @ self.axis, self.plan))
            self.at.append(self.done - 1)

    def result(self):
        if self.plan is None:
            return {}
        return {"s_kmin": np.asarray(self.values), "probe_at": np.asarray(self.at, float),
                "khat2_min": self.plan["khat2"], "n_sites": self.plan["n_sites"]}


def _sample_mc(task, model, spins):
    d = task.scenario.dynamics
    every = int(d.sample_every)
    n_samples = max(4, int(d.sweeps_samples) // every)
    params = scenario_site_parameters(task.scenario, model)
    extra = {} if params is not None else {"moves": d.moves,
                                           "cluster_direction": d.cluster_direction}
    mc = make_monte_carlo(model, task.temperature_K, params, seed=task.seed, initial_spins=spins,
                          **extra)
    chunks = _split(n_samples, task.scenario.sweep.snapshots)
    parts, snaps, acc, probes = [], [], [], _Probes(model, n_samples)
    every_s, last = checkpoint_every_s(), time.time()
    ck = load_partial(task, n_samples, len(chunks))
    if ck is None:
        mc.warmup(int(d.sweeps_warmup))
        first = 0
    else:  # continue a point a kill interrupted: its state after ck["done"] chunks
        state = {"spins": ck["spins"], "sweep": int(ck["sweep"]), "sigma": float(ck["sigma"])}
        if int(ck["clusters_per_sweep"]) >= 0:
            state["clusters_per_sweep"] = int(ck["clusters_per_sweep"])
        mc.state = state
        first = int(ck["done"])
        parts.append({"energy_J": ck["energy_J"], "m_vector": ck["m_vector"],
                      "sweep": ck["sweeps"]})
        acc.extend(float(a) for a in ck["acceptance"])
        snaps.extend(np.array(x) for x in ck["snaps"])
        probes.values = [float(v) for v in ck["probe_values"]]
        probes.at = [int(v) for v in ck["probe_at"]]
        probes.done = int(ck["probe_done"])
    for i, n in enumerate(chunks):
        if i < first:
            continue
        for m in probes.stretches(n):
            r = mc.run(0, m, every, tune=False)
            parts.append(r)
            acc.append(r["acceptance"]["gaussian"])
            probes.after(mc.spins, m)
        snaps.append(mc.spins @ model.axis)  # S.n only: 8 bytes per site and snapshot
        if task.checkpoint and i + 1 < len(chunks) and time.time() - last >= every_s:
            save_partial(task, mc, n_samples, len(chunks), i + 1, parts, acc, snaps, probes)
            last = time.time()
    series = {
        "energy_J": np.concatenate([p["energy_J"] for p in parts]),
        "m_vector": np.concatenate([p["m_vector"] for p in parts]),
        "clock": np.concatenate([p["sweep"] for p in parts]).astype(np.float64),
        **probes.result(),
    }
    details = {"sweeps_warmup": int(d.sweeps_warmup), "sample_every_sweeps": every,
               "n_samples": n_samples, "sigma": float(mc.sigma),
               "acceptance_gaussian": float(np.mean(acc)), "final_sweep": int(mc.sweep_count)}
    return series, snaps, mc.spins.copy(), details, 0.0


def _sample_llg(task, model, spins):
    d = task.scenario.dynamics
    dt = d.time_step_s
    dt_ok = stable_time_step(model, task.temperature_K, d.damping, d.gamma)
    if dt > dt_ok:
        warnings.warn(f"time step {dt * 1e15:g} fs is above the recommended {dt_ok * 1e15:.3g} fs "
                      f"at {task.temperature_K:g} K", ThinFilmWarning, stacklevel=2)
    every = int(d.sample_every)
    n_warm = int(round(d.warmup_s / dt))
    n_samples = max(4, int(round(d.duration_s / dt)) // every)
    sim = make_llg(model, scenario_site_parameters(task.scenario, model),
                   temperature_K=task.temperature_K, damping=d.damping,
                        time_step_s=dt, seed=task.seed, spins=spins, gamma=d.gamma)
    sim.advance(n_warm)
    chunks = _split(n_samples, task.scenario.sweep.snapshots)
    e = np.empty(n_samples)
    mv = np.empty((n_samples, 3))
    clock = np.empty(n_samples)
    snaps, k, probes = [], 0, _Probes(model, n_samples)
    for n in chunks:
        for _ in range(n):
            sim.advance(every)
            m, en = sim.measure()  # includes the dipolar energy when the model has it
            e[k], mv[k], clock[k] = en * MEV_J, m, (sim.step - n_warm) * dt * 1e12
            k += 1
            probes.after(sim.spins, 1)
        snaps.append(sim.spins @ model.axis)
    details = {"warmup_steps": n_warm, "sample_every_steps": every, "n_samples": n_samples,
               "time_step_fs": dt * 1e15, "damping": d.damping,
               "recommended_time_step_fs": dt_ok * 1e15}
    return {"energy_J": e, "m_vector": mv, "clock": clock, **probes.result()}, snaps, \
        sim.spins.copy(), details, \
        (sim.step - n_warm) * dt * 1e12


def compute_point(task):
    """Sample one sweep point and analyse it; writes nothing.

    Parameters
    ----------
    task : PointTask

    Returns
    -------
    dict
        ``row`` (observables.csv values, keys :data:`ROW_COLUMNS`), ``details`` (run details and
        recorded warnings for point.json), ``final`` (keyword arrays of ``final.npz``),
        ``final_spins`` (ndarray, the state a heating/cooling chain continues from),
        ``timeseries`` ((columns, rows)), ``correlation`` (rows r_nm, C, C_err) and
        ``domains`` (rows snapshot, area_nm2, diameter_nm, sign).
    """
    t0 = time.perf_counter()
    sc = sized_scenario(task.scenario, task.size)
    model = build_model(sc)
    lat = model.lattice
    method = sc.dynamics.method
    threads = numba.get_num_threads()
    if lat.n_sites < PARALLEL_MIN_SITES:
        numba.set_num_threads(1)  # thread wake-ups dominate on small lattices
    try:
        return _compute(task, sc, model, lat, method, t0)
    finally:
        numba.set_num_threads(threads)


def _compute(task, sc, model, lat, method, t0):
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        spins = _start_spins(task, model)
        sampler = _sample_mc if method == "monte-carlo" else _sample_llg
        series, snaps, final, details, time_ps = sampler(task, model, spins)
        mv = series["m_vector"]
        order = _order(model, mv)
        params = scenario_site_parameters(sc, model)
        n_spins = lat.n_sites if params is None else int(params.occupied.sum())  # occupied sites
        th = thermodynamics(series["energy_J"], order, mv, n_spins, task.temperature_K)
        ordered = th["binder"] > ORDERED_BINDER
        moments = {"moment_sum": (mv @ model.axis) * n_spins, "connected": bool(ordered),
                   **{k: series[k] for k in ("s_kmin", "probe_at", "khat2_min", "n_sites")
                      if k in series}}
        spatial, corr_rows, dom_rows, sm_why = _spatial(model, snaps, ordered, sc.instrument,
                                                        task.seed, sc.analysis, params, moments)
    row = {"size": int(task.size), "temperature_K": float(task.temperature_K)}
    for name in ROW_COLUMNS[2:19]:
        row[name] = float(th[name]) if name != "n_samples" else int(th[name])
    row.update({k: float(v) for k, v in spatial.items()})
    row["method"] = method
    row["seed"] = int(task.seed)
    clock = "sweep" if method == "monte-carlo" else "time_ps"
    ts_cols = ("sample", clock, "energy_meV", "m_axis", "m_norm", "mx", "my", "mz")
    m_axis = mv @ model.axis
    # per-sample values at 7 significant digits (float32 resolution, far below the sample's
    # own scatter): the table of a 4000-sample point is half its size at full repr
    ts_rows = [(k, series["clock"][k] if method != "monte-carlo" else int(series["clock"][k]),
                *(f"{v:.7g}" for v in (series["energy_J"][k] / MEV_J, m_axis[k],
                                       float(np.linalg.norm(mv[k])), mv[k, 0], mv[k, 1],
                                       mv[k, 2]))) for k in range(len(order))]
    details.update({"start": task.start, "n_snapshots": len(snaps), "n_sites": lat.n_sites,
                    "blocks": int(th["n_blocks"]),
                    "second_moment_form": "ordered" if ordered else "disordered",
                    "second_moment_undefined": sm_why,  # {form: reason, "" when defined}
                    "warnings": sorted({str(w.message) for w in caught}),
                    "compute_time_s": round(time.perf_counter() - t0, 3)})
    # float32 like every snapshot (the next point of a chain starts from it renormalised, read
    # back from the file both in a run and in a resumed one); no positions (rebuilt from shape,
    # spacing and grid by the snapshot reader)
    final_arrays = {"format": np.asarray(SNAPSHOT_FORMAT),
                    "spins": np.asarray(final, dtype=np.float32),
                    "spacing_nm": lat.spacing_nm, "box_nm": np.asarray(lat.box_nm),
                    "shape": lat.shape, "periodic": lat.periodic, "time_ps": np.asarray(time_ps),
                    "temperature_K": np.asarray(task.temperature_K),
                    "field_T": np.asarray(sc.field_T, dtype=np.float64)}
    return {"row": row, "details": details, "final": final_arrays, "final_spins": final,
            "timeseries": (ts_cols, ts_rows), "correlation": corr_rows, "domains": dom_rows}
