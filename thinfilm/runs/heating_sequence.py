"""A quasi-static heating sequence: equilibrium states at rising temperatures, for a movie.

Each temperature continues from the last state of the previous one: ``warmup`` Monte Carlo
steps, then ``frames`` snapshots ``between`` steps apart. Every stretch between two snapshots
is sampled by its own MonteCarlo with a seed derived from (scenario seed, frame index), so an
interrupted sequence resumed from its last snapshot gives the same frames bit for bit.

The folder is a run folder (``manifest.json`` of kind ``sequence``, ``snapshots/*.npz`` with
``temperature_K`` and a ``label``) that :func:`thinfilm.render.movie.write_movie` reads. The
snapshots keep the order-axis component ``m_axis`` only (float32, a third of all three
components: what the movie and the domain analysis use); ``checkpoint.npz`` keeps the full state
after each frame for a resume and is removed when the sequence has finished.
"""

import numpy as np
from tqdm import tqdm

from thinfilm._io import write_npz
from thinfilm.analysis.thermo import integrated_autocorrelation_time
from thinfilm.engines.select import make_monte_carlo
from thinfilm.engines.stochastic_llg import initial_spins
from thinfilm.input.errors import InputError
from thinfilm.model.disorder import scenario_site_parameters
from thinfilm.model.parameters import build_model
from thinfilm.runs.folder import RunFolder
from thinfilm.runs.lifecycle import scenario_identity
from thinfilm.runs.sweep_point import sized_scenario

__all__ = ["run_heating_sequence"]


def _frame_name(k):
    return f"snap_{k:06d}"


def _last_frame(folder, n_frames):
    """Index, spins and Gaussian step width after the last frame written (resume): from the
    checkpoint, else (a sequence written before checkpoints) from the last float64 snapshot."""
    ck = folder.read_checkpoint()
    if ck is not None and "frame" in ck:
        k = int(ck["frame"])
        if (folder.path / "snapshots" / f"{_frame_name(k)}.npz").is_file():
            return k, np.array(ck["spins"], dtype=np.float64), float(ck["mc_sigma"])
    for k in range(n_frames - 1, -1, -1):
        p = folder.path / "snapshots" / f"{_frame_name(k)}.npz"
        if p.is_file():
            with np.load(p) as z:
                if "spins" in z.files and z["spins"].dtype == np.float64:
                    return k, np.array(z["spins"]), float(z["mc_sigma"])
            break
    return -1, None, 0.5


def _sampling(folder, temps, frames, between):
    """Per temperature: tau_int of the order parameter (sweeps, Sokal's window over the sweeps
    after the warm-up) and how many tau_int separate the frames; NaN where the series is too
    short to say (fewer than 20 sweeps, or tau_int above a fifth of the series)."""
    out = []
    for ti, t in enumerate(temps):
        x = []
        for fi in range(frames):
            p = folder.path / "snapshots" / f"{_frame_name(ti * frames + fi)}.npz"
            with np.load(p) as z:
                if "m_order_series" in z.files:
                    x.append(np.asarray(z["m_order_series"], dtype=np.float64))
        x = np.concatenate(x) if x else np.zeros(0)
        tau = integrated_autocorrelation_time(x) if x.size >= 20 else float("nan")
        if not tau <= x.size / 5:
            tau = float("nan")
        out.append({"temperature_K": t, "sweeps_sampled": int(x.size),
                    "tau_int_sweeps": tau, "sweeps_between_frames_over_tau": between / tau,
                    "mean_m_order": float(x.mean()) if x.size else float("nan")})
    return out


def run_heating_sequence(scenario, out_dir, *, size, temperatures_K, frames=3, between=20,
                         warmup=100, resume=False, overwrite=False, progress=True,
                         **mc_options):
    """Equilibrium frames on an L x L lattice at rising temperatures; returns the RunFolder.

    Parameters
    ----------
    scenario : Scenario
        The film (material, field, lattice shape and spacing); its seed keys the frames.
    size : int
        L of the L x L lattice.
    temperatures_K : sequence of float
        Temperatures (K, > 0), visited in increasing order.
    frames : int
        Snapshots per temperature.
    between, warmup : int
        Monte Carlo steps between snapshots, and before the first snapshot of a temperature.
    mc_options
        Passed to :class:`thinfilm.engines.montecarlo.MonteCarlo`; the move set defaults to the
        scenario's ``dynamics.moves`` (Metropolis and cluster moves unless it says otherwise).
    """
    temps = sorted(float(t) for t in temperatures_K)
    if not temps or temps[0] <= 0 or frames < 1 or between < 1 or warmup < 0:
        raise InputError(f"heating sequence: needs temperatures above 0 K, frames >= 1, "
                         f"between >= 1, warmup >= 0; got {temps}, {frames}, {between}, {warmup}")
    sc = sized_scenario(scenario, size)
    mc_options = {"moves": sc.dynamics.moves, "cluster_direction": sc.dynamics.cluster_direction,
                  **mc_options}
    model = build_model(sc)
    params = scenario_site_parameters(sc, model)
    if params is not None:  # the per-site engine has Metropolis moves only
        mc_options = {k: v for k, v in mc_options.items()
                      if k not in ("moves", "cluster_direction")}
    lat = model.lattice
    opts = {k: (list(v) if isinstance(v, tuple) else v) for k, v in mc_options.items()}
    ident = scenario_identity(sc, temperatures_K=temps, frames_per_temperature=frames,
                              steps_between_frames=between, warmup_steps=warmup, monte_carlo=opts)
    folder = RunFolder(out_dir, resume=resume, overwrite=overwrite, kind="sequence",
                       identity=ident)
    try:
        _frames(sc, model, params, lat, folder, temps, frames, between, warmup, resume,
                progress, mc_options)
    finally:
        folder.close()
    return folder


def _frames(sc, model, params, lat, folder, temps, frames, between, warmup, resume, progress,
            mc_options):
    n_frames = len(temps) * frames
    manifest = {"kind": "sequence", "scenario": sc.describe(), "lattice": lat.describe(),
                "temperatures_K": temps, "frames_per_temperature": frames,
                "steps_between_frames": between, "warmup_steps": warmup,
                "monte_carlo": {k: (list(v) if isinstance(v, tuple) else v)
                                for k, v in mc_options.items()}}
    done, spins, sigma = _last_frame(folder, n_frames) if resume else (-1, None, 0.5)
    if spins is None:
        spins = initial_spins(lat, "up", axis=model.axis)
    if params is not None and params.grain_id is not None:  # for the movie's grain boundaries
        write_npz(folder.file("grains.npz"), grain_id=params.grain_id)
    folder.write_manifest(manifest)
    bar = tqdm(total=n_frames, initial=done + 1, unit="frame", desc="heating sequence",
               disable=(not progress) or None, leave=False)
    try:
        for k in range(done + 1, n_frames):
            ti, fi = divmod(k, frames)
            mc = make_monte_carlo(model, temps[ti], params, seed=int(sc.seed) * 100003 + k,
                                  initial_spins=spins, sigma=sigma, stream=5, **mc_options)
            if fi == 0:
                mc.warmup(int(warmup))
            # one sample per sweep: the order parameter's series for tau_int at this temperature
            series = mc.run(0, int(between), 1, tune=False)["m_order"]
            spins, sigma = mc.spins.copy(), mc.sigma
            # what the frame is: sweeps made at this temperature (not a claim of equilibrium)
            label = f"{int(warmup) + (fi + 1) * int(between)} MC sweeps at this T"
            folder.write_snapshot(_frame_name(k), spins, lat, components="axis",
                                  axis=model.axis, temperature_K=temps[ti], label=label,
                                  mc_sigma=sigma, m_order_series=series.astype(np.float32))
            folder.write_checkpoint(frame=k, spins=spins, mc_sigma=sigma)
            bar.update(1)
            folder.write_manifest(manifest)  # the wall time so far
    finally:
        bar.close()
    (folder.path / "checkpoint.npz").unlink(missing_ok=True)  # finished: nothing to resume
    manifest["sampling"] = _sampling(folder, temps, frames, between)
    folder.write_manifest(manifest, finished=True)
