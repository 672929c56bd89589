"""The state of an unfinished Monte Carlo sweep point (``points/<point>/partial.npz``).

A worker saves the engine state (:attr:`MonteCarlo.state`), the samples, snapshots and
S(k_min) probes taken so far after a chunk of samples, at most every :data:`POINT_CHECKPOINT_S`;
a point computed again after a kill continues from there bit for bit (the Monte Carlo noise is
keyed by the sweep count). The sweep removes the file when the point has finished.
"""

import os

import numpy as np

from thinfilm._io import write_npz

__all__ = ["POINT_CHECKPOINT_S", "checkpoint_every_s", "load_partial", "save_partial"]

#: wall-clock seconds between the checkpoints of an unfinished Monte Carlo point
#: (THINFILM_POINT_CHECKPOINT_S overrides it)
POINT_CHECKPOINT_S = 10.0


def checkpoint_every_s():
    """Seconds between saves (THINFILM_POINT_CHECKPOINT_S, default POINT_CHECKPOINT_S)."""
    try:
        return float(os.environ.get("THINFILM_POINT_CHECKPOINT_S", POINT_CHECKPOINT_S))
    except ValueError:
        return POINT_CHECKPOINT_S


def load_partial(task, n_samples, n_chunks):
    """The saved state of this point's Monte Carlo sampling, or None."""
    if not task.checkpoint:
        return None
    try:
        with np.load(task.checkpoint, allow_pickle=False) as z:
            ck = {k: z[k] for k in z.files}
    except (OSError, ValueError):
        return None
    try:
        key = (int(ck["seed"]), int(ck["size"]), float(ck["temperature_K"]), int(ck["n_samples"]),
               int(ck["n_chunks"]))
    except KeyError:
        return None
    if key != (int(task.seed), int(task.size), float(task.temperature_K), n_samples, n_chunks) \
            or not 0 < int(ck["done"]) < n_chunks:
        return None
    return ck


def save_partial(task, mc, n_samples, n_chunks, done, parts, acc, snaps, probes):
    """Save the point's state after ``done`` of its ``n_chunks`` chunks."""
    st = mc.state
    write_npz(task.checkpoint, compress=False,
              seed=np.int64(task.seed), size=np.int64(task.size),
              temperature_K=np.float64(task.temperature_K), n_samples=np.int64(n_samples),
              n_chunks=np.int64(n_chunks),
              spins=st["spins"], sweep=st["sweep"], sigma=st["sigma"],
              clusters_per_sweep=st.get("clusters_per_sweep", -1), done=done,
              energy_J=np.concatenate([p["energy_J"] for p in parts]),
              m_vector=np.concatenate([p["m_vector"] for p in parts]),
              sweeps=np.concatenate([p["sweep"] for p in parts]),
              acceptance=np.asarray(acc, dtype=np.float64), snaps=np.asarray(snaps),
              probe_values=np.asarray(probes.values, dtype=np.float64),
              probe_at=np.asarray(probes.at, dtype=np.int64), probe_done=np.int64(probes.done))
