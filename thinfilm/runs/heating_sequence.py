"""A quasi-static heating sequence: equilibrium states at rising temperatures, for a movie.

Each temperature continues from the last state of the previous one: ``warmup`` Monte Carlo
steps, then ``frames`` snapshots ``between`` steps apart. Every stretch between two snapshots
is sampled by its own MonteCarlo with a seed derived from (scenario seed, frame index), so an
interrupted sequence resumed from its last snapshot gives the same frames bit for bit.

The folder is a run folder (``manifest.json`` of kind ``sequence``, ``snapshots/*.npz`` with
``temperature_K`` and a ``label``) that :func:`thinfilm.render.movie.write_movie` reads.
"""

import numpy as np
from tqdm import tqdm

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
    """Index, spins and Gaussian step width of the last snapshot written (resume)."""
    for k in range(n_frames - 1, -1, -1):
        p = folder.path / "snapshots" / f"{_frame_name(k)}.npz"
        if p.is_file():
            with np.load(p) as z:
                return k, np.array(z["spins"]), float(z["mc_sigma"])
    return -1, None, 0.5


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
            mc.sweep(int(between))
            spins, sigma = mc.spins.copy(), mc.sigma
            label = f"frame {fi + 1}/{frames}, equilibrium (Monte Carlo)"
            folder.write_snapshot(_frame_name(k), spins, lat, temperature_K=temps[ti], label=label,
                                  mc_sigma=sigma)
            bar.update(1)
            folder.write_manifest(manifest)  # the wall time so far
    finally:
        bar.close()
    folder.write_manifest(manifest, finished=True)
