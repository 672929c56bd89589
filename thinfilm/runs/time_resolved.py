"""One time-resolved stochastic LLG run of a scenario into a run folder (resumable)."""

import math
import time

import numpy as np
from tqdm import tqdm

from thinfilm.engines.select import make_llg
from thinfilm.engines.stochastic_llg import initial_spins, stable_time_step
from thinfilm.input.errors import ThinFilmWarning
from thinfilm.model.disorder import scenario_site_parameters
from thinfilm.model.parameters import build_model
from thinfilm.runs.folder import RunFolder
from thinfilm.runs.lifecycle import scenario_identity

__all__ = ["run_dynamics"]

CHECKPOINT_EVERY_S = 15.0  # at most this many wall-clock seconds between checkpoints
CHECKPOINTS_PER_RUN = 50  # and at least this many per run: a kill loses at most 2 % of the steps


def _row(sim, t_ps, temp, b, axis, direction):
    m, e = sim.measure(field_T=b)
    return [t_ps, temp, float(b @ direction), m[0], m[1], m[2], float(m @ axis), e,
            b[0], b[1], b[2]]


def run_dynamics(scenario, out_dir, *, resume=False, overwrite=False, progress=True):
    """Integrate the stochastic LLG equation for a scenario and write its run folder.

    Parameters
    ----------
    scenario : Scenario
    out_dir : str or Path
    resume : bool
        Continue from ``checkpoint.npz`` if present (bitwise identical to an uninterrupted run:
        the noise is keyed by step number).
    progress : bool
        Show a progress bar on a terminal.

    Returns
    -------
    RunFolder
        Closed (its lock released).
    """
    sc = scenario
    d = sc.dynamics
    model = build_model(sc)
    folder = RunFolder(out_dir, resume=resume, overwrite=overwrite, kind="dynamics",
                       identity=scenario_identity(sc))
    try:
        return _run(sc, d, model, folder, resume, progress)
    finally:
        folder.close()


def _run(sc, d, model, folder, resume, progress):
    import warnings

    dt = d.time_step_s
    dt_ok = stable_time_step(model, max(sc.temperature_K, d.ramp_temperature_K or 0.0),
                             d.damping, d.gamma)
    if dt > dt_ok:
        warnings.warn(f"time step {dt * 1e15:g} fs is above the recommended {dt_ok * 1e15:.3g} fs; "
                      f"results may be inaccurate", ThinFilmWarning, stacklevel=3)
    n_warm = int(round(d.warmup_s / dt))
    n_run = max(1, int(round(d.duration_s / dt)))
    every = (max(1, int(round(sc.record_every_s / dt))) if sc.record_every_s
             else max(1, n_run // 200))
    snap_every = (max(every, int(round(sc.snapshot_every_s / dt))) if sc.snapshot_every_s
                  else max(every, (n_run // 40 // every) * every or every))
    t0 = sc.temperature_K
    t1 = t0 if d.ramp_temperature_K is None else d.ramp_temperature_K
    b0 = np.asarray(sc.field_T, dtype=np.float64)
    b1 = b0 if d.ramp_field_T is None else np.asarray(d.ramp_field_T, dtype=np.float64)
    bdir = b1 - b0 if np.linalg.norm(b1 - b0) > 0 else (
        b0 if np.linalg.norm(b0) > 0 else np.array([0, 0, 1.0]))
    bdir = bdir / np.linalg.norm(bdir)
    lat = model.lattice

    ck = folder.read_checkpoint() if resume else None
    if ck is not None:
        spins, step, rows = ck["spins"], int(ck["step"]), [list(r) for r in ck["rows"]]
        n_snap = int(ck["n_snapshots"])
    else:
        spins = initial_spins(lat, sc.initial, seed=sc.seed, axis=model.axis,
                               width_nm=sc.initial_width_nm)
        step, rows, n_snap = 0, [], 0
    sim = make_llg(model, scenario_site_parameters(sc, model), temperature_K=t0,
                   damping=d.damping, time_step_s=dt, seed=sc.seed, spins=spins, gamma=d.gamma,
                   step=step)
    manifest = {"kind": "dynamics", "scenario": sc.describe(), "lattice": lat.describe(),
                "steps": {"warmup": n_warm, "run": n_run, "record_every": every,
                          "snapshot_every": snap_every},
                "recommended_time_step_fs": dt_ok * 1e15,
                "instrument": sc.instrument, "columns": {
                    "time_ps": "ps", "temperature_K": "K",
                    "field_T": "T (along the field direction)",
                    "mx": "per spin", "my": "per spin", "mz": "per spin",
                    "m_axis": "per spin, along the anisotropy axis", "energy_meV": "meV per spin"}}
    folder.write_manifest(manifest)

    def protocol(k):
        """Temperature (K) and field (T) at run step k (after the warm-up)."""
        f = min(max(k / n_run, 0.0), 1.0)
        return t0 + (t1 - t0) * f, b0 + (b1 - b0) * f

    total = n_warm + n_run
    bar = tqdm(total=total, initial=sim.step, unit="step", disable=(not progress) or None,
               desc="sLLG", mininterval=1.0, leave=False)
    last_ck, last_ck_step = time.time(), sim.step
    ck_every = max(every, (total // CHECKPOINTS_PER_RUN // every) * every)
    try:
        while sim.step < total:
            if sim.step < n_warm:
                n = min(every, n_warm - sim.step)
                sim.advance(n, temperature_K=t0, field_T=b0)
            else:
                k = sim.step - n_warm
                if k == 0 and not rows:
                    temp, b = protocol(0)
                    rows.append(_row(sim, 0.0, temp, b, model.axis, bdir))
                    folder.write_snapshot(f"snap_{0:06d}", sim.spins, lat, time_ps=0.0,
                                          temperature_K=temp, field_T=b)
                    n_snap = 1
                n = min(every - k % every, total - sim.step)
                temp, b = protocol(k)
                sim.advance(n, temperature_K=temp, temperature_rate_K_per_step=(t1 - t0) / n_run,
                            field_T=b, field_rate_T_per_step=(b1 - b0) / n_run)
                k += n
                temp, b = protocol(k)
                t_ps = k * dt * 1e12
                rows.append(_row(sim, t_ps, temp, b, model.axis, bdir))
                if k % snap_every == 0 or sim.step == total:
                    folder.write_snapshot(f"snap_{n_snap:06d}", sim.spins, lat, time_ps=t_ps,
                                          temperature_K=temp, field_T=b)
                    n_snap += 1
            bar.update(n)
            if (sim.step - last_ck_step >= ck_every or time.time() - last_ck > CHECKPOINT_EVERY_S) \
                    and sim.step < total:
                folder.write_timeseries(rows)
                folder.write_checkpoint(spins=sim.spins, step=sim.step,
                                        rows=np.asarray(rows, dtype=float).reshape(-1, 11),
                                        n_snapshots=n_snap)
                folder.write_manifest(manifest)  # the wall time so far
                last_ck, last_ck_step = time.time(), sim.step
    finally:
        bar.close()
        if rows:
            folder.write_timeseries(rows)
        folder.write_checkpoint(spins=sim.spins, step=sim.step,
                                rows=np.asarray(rows, dtype=float).reshape(-1, 11),
                                n_snapshots=n_snap)
    folder.write_snapshot("final", sim.spins, lat, time_ps=n_run * dt * 1e12, temperature_K=t1,
                          field_T=b1)
    arr = np.asarray(rows)
    half = arr[len(arr) // 2:]
    manifest["summary"] = {
        "mean_m_axis_second_half": float(np.mean(half[:, 6])),
        "mean_abs_m_axis_second_half": float(np.mean(np.abs(half[:, 6]))),
        "mean_energy_meV_second_half": float(np.mean(half[:, 7])),
        "n_snapshots": n_snap, "duration_ps": n_run * dt * 1e12,
    }
    if not math.isfinite(manifest["summary"]["mean_energy_meV_second_half"]):
        manifest["summary"]["mean_energy_meV_second_half"] = None
    folder.write_manifest(manifest, finished=True)
    return folder
