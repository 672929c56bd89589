"""One coarse-film run (stochastic LLB on nm cells) into a run folder, resumable.

The film is held at each temperature of the scenario's schedule for ``hold``, each temperature
continuing from the state the previous one left (a slow heating or cooling schedule). The
folder has the layout of an atomistic run (manifest.json, timeseries.csv, snapshots/*.npz with
the reduced magnetisation m = M / Ms(0) of every cell as ``spins``, checkpoint.npz), plus the
parameter table it used (parameters.csv) and temperatures.csv (one row per temperature: the
mean |<m>| over the second half of the hold with its error from 10 blocks, and the cell
renormalisation). A checkpoint is written after every temperature and every 15 s (then with
the steps made at the current temperature); the noise is keyed by the step number and the
time step is a function of the temperature, so a resumed run repeats the uninterrupted one
bit for bit.

Where the engine refuses a temperature (the cell is not large against the correlation length,
:data:`thinfilm.engines.llb.MAX_CORRECTION`) the schedule stops there and the manifest says
why; the atomistic lattice is the tool at those temperatures.
"""

import time

import numpy as np
from tqdm import tqdm

from thinfilm._io import write_csv
from thinfilm.engines.llb import CoarseFilm
from thinfilm.input.coarse_spec import load_coarse
from thinfilm.input.units import MEV_J
from thinfilm.runs.folder import RunFolder
from thinfilm.runs.lifecycle import identity

__all__ = ["run_coarse", "grain_kscale", "initial_m"]

CHECKPOINT_EVERY_S = 15.0
ROWS_PER_TEMPERATURE = 20


def grain_kscale(sc, lattice):
    """K(T) factor per cell: 1 + spread g per Voronoi grain, g uniform in [-1, 1]."""
    if not sc.grain_size_nm:
        return None
    from thinfilm.model.grains import voronoi_grains

    rng = np.random.default_rng([sc.seed, 7])
    gid, centres = voronoi_grains(lattice, sc.grain_size_nm, rng)
    g = rng.uniform(-1.0, 1.0, size=len(centres))
    return 1.0 + sc.grain_spread * g[gid]


def initial_m(sc, lattice, me):
    shape = (sc.ny, sc.nx, 3)
    if sc.initial in ("up", "down"):
        m = np.zeros(shape)
        m[..., 2] = me if sc.initial == "up" else -me
        return m
    if sc.initial == "random":
        g = np.random.default_rng(sc.seed).normal(size=shape)
        return me * g / np.linalg.norm(g, axis=-1, keepdims=True)
    from thinfilm.model.labyrinth import labyrinth_spins

    return me * np.asarray(labyrinth_spins(lattice, sc.initial_width_nm, seed=sc.seed))


def _blocks_err(x, n=10):
    x = np.asarray(x)
    if len(x) < n:
        return float("nan")
    b = x[: len(x) // n * n].reshape(n, -1).mean(axis=1)
    return float(b.std(ddof=1) / np.sqrt(n))


def run_coarse(source, out_dir, *, resume=False, overwrite=False, progress=True):
    """Run a coarse-film scenario (path or dict) into out_dir; returns the RunFolder."""
    sc = load_coarse(source)
    table = sc.table()
    folder = RunFolder(out_dir, resume=resume, overwrite=overwrite, kind="coarse-film",
                       identity=identity(sc.describe(), table=table.describe()))
    try:
        return _run(sc, table, folder, resume, progress)
    finally:
        folder.close()


def _run(sc, table, folder, resume, progress):
    table.to_csv(folder.file("parameters.csv"))  # a lab table with its filled-in columns
    film = CoarseFilm(table, sc.cell_nm, sc.nx, sc.ny, periodic=sc.periodic, dipolar=sc.dipolar,
                      field_T=sc.field_T, coupling=sc.coupling, renormalise=sc.renormalise,
                      seed=sc.seed,
                      dipolar_precision="single" if min(sc.temperatures_K) > 0 else "double")
    ks = grain_kscale(sc, film.lattice)
    if ks is not None:
        film.kscale = np.ascontiguousarray(ks)
    lat = film.lattice
    temps = sc.temperatures_K
    ck = folder.read_checkpoint() if resume else None
    if ck is not None:
        film.m[...] = ck["m"]
        film.step = int(ck["step"])
        film.time_s = float(ck["time_s"])
        k0 = int(ck["next_temperature"])
        done0 = int(ck["done_steps"]) if "done_steps" in ck else 0
        m_abs0 = [float(v) for v in ck["m_abs_partial"]] if "m_abs_partial" in ck else []
        rows = [list(r) for r in ck["rows"]]
        per_t = [list(r) for r in ck["per_t"]]
        n_snap = int(ck["n_snapshots"])
    else:
        me0 = table.at(temps[0])["m_e"] if temps[0] > 0 else 1.0
        film.m[...] = initial_m(sc, lat, max(me0, 0.05))
        k0, rows, per_t, n_snap = 0, [], [], 0
        done0, m_abs0 = 0, []
    manifest = {"kind": "coarse-film", "scenario": sc.describe(), "lattice": lat.describe(),
                "table": table.describe(), "engine": "stochastic Landau-Lifshitz-Bloch",
                "columns": {"time_ps": "ps", "temperature_K": "K", "mx": "reduced M/Ms(0)",
                            "my": "reduced", "mz": "reduced", "m_axis": "reduced, along z",
                            "energy_meV": "free energy per cell (meV)"},
                "temperatures": []}
    folder.write_manifest(manifest)

    def save_ck(k_next, done=0, m_abs=()):
        """Checkpoint before temperature k_next, ``done`` of its steps made (0: not begun)."""
        folder.write_timeseries(rows)
        folder.write_checkpoint(m=film.m, step=film.step, time_s=film.time_s,
                                next_temperature=k_next, done_steps=done,
                                m_abs_partial=np.asarray(m_abs, dtype=float),
                                rows=np.asarray(rows, dtype=float).reshape(-1, 11),
                                per_t=np.asarray(per_t, dtype=float).reshape(-1, 6),
                                n_snapshots=n_snap)

    stopped = None
    bar = tqdm(total=len(temps), initial=k0, unit="T", disable=(not progress) or None,
               desc="coarse film", leave=False)
    last = time.time()
    cell_area = (sc.cell_nm * 1e-9) ** 2
    try:
        for k in range(k0, len(temps)):
            T = temps[k]
            try:
                p = film.parameters(T)
            except ValueError as exc:
                stopped = {"temperature_K": T, "reason": str(exc)}
                break
            dt = film.stable_time_step(p)
            n_steps = max(ROWS_PER_TEMPERATURE, int(round(sc.hold_s / dt)))
            every = max(1, n_steps // ROWS_PER_TEMPERATURE)
            snap_at = set(np.linspace(every, n_steps, sc.snapshots).astype(int) // every * every)
            done, m_abs = (done0, list(m_abs0)) if k == k0 else (0, [])
            while done < n_steps:
                n = min(every, n_steps - done)
                film.advance(n, T, dt=dt)
                done += n
                meas = film.measure()
                e = sum(film.energy_density(T).values()) * cell_area / MEV_J  # per cell
                mv = meas["m_vector"]
                rows.append([film.time_s * 1e12, T, sc.field_T[2], mv[0], mv[1], mv[2],
                             mv[2], e, *sc.field_T])
                if 2 * done > n_steps:
                    m_abs.append(meas["m_abs"])
                if done in snap_at or done == n_steps:
                    folder.write_snapshot(f"snap_{n_snap:06d}", film.m, lat,
                                          time_ps=film.time_s * 1e12, temperature_K=T,
                                          field_T=np.asarray(sc.field_T))
                    n_snap += 1
                if time.time() - last > CHECKPOINT_EVERY_S and done < n_steps:
                    save_ck(k, done, m_abs)
                    last = time.time()
            per_t.append([T, float(np.mean(m_abs)), _blocks_err(m_abs), p["mu"],
                          p["renormalisation"], dt])
            save_ck(k + 1)
            bar.update(1)
    finally:
        bar.close()
    write_csv(folder.file("temperatures.csv"),
              ["temperature_K", "m_abs", "m_abs_err", "cell_length_mu", "renormalisation",
               "time_step_s"], per_t)
    folder.write_snapshot("final", film.m, lat, time_ps=film.time_s * 1e12,
                          temperature_K=per_t[-1][0] if per_t else temps[0],
                          field_T=np.asarray(sc.field_T))
    manifest["temperatures"] = [{"temperature_K": r[0], "m_abs": r[1], "m_abs_err": r[2],
                                 "cell_length_mu": r[3], "renormalisation": r[4]} for r in per_t]
    if stopped:
        manifest["stopped"] = stopped
    manifest["summary"] = {"n_snapshots": n_snap, "duration_ps": film.time_s * 1e12,
                           "temperatures_done": len(per_t)}
    folder.write_manifest(manifest, finished=stopped is None)
    return folder
