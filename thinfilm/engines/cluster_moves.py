"""Which Wolff cluster moves are exact for a model: the move set and reflection directions."""

import numpy as np

from thinfilm.engines._kernels.wolff import N_STATS, make_cluster_work

__all__ = ["MOVES", "CLUSTER_DIRECTIONS", "cluster_moves_exact", "setup_clusters"]

MOVES = ("metropolis", "cluster")
# reflection direction r of the cluster moves: the anisotropy axis n, a random direction in the
# plane perpendicular to n, a random direction on the sphere; "auto" picks by the sign of K
CLUSTER_DIRECTIONS = ("auto", "axis", "plane", "sphere")
_MODE = {"axis": 0, "plane": 1, "sphere": 2}


def _direction(model, direction):
    if direction not in CLUSTER_DIRECTIONS:
        raise ValueError(f"cluster direction must be one of {', '.join(CLUSTER_DIRECTIONS)}; "
                         f"got {direction!r}")
    if direction != "auto":
        return direction
    k = model.anisotropy_J
    return "axis" if k > 0 else ("plane" if k < 0 else "sphere")


def cluster_moves_exact(model, direction="auto"):
    """Whether Wolff cluster moves sample exp(-E/kBT) of this model exactly.

    The cluster flip reflects the spin component along r, S -> S - 2 (S.r) r. Exchange enters
    the bond probabilities and the Zeeman change is accepted by Metropolis, both exact for any
    r; the anisotropy -K (S.n)^2 is unchanged only for r = n or r perpendicular to n (any r if
    K = 0).

    Parameters
    ----------
    model : Model
    direction : {"auto", "axis", "plane", "sphere"}
        Choice of r (see :data:`CLUSTER_DIRECTIONS`); "auto": axis for K > 0, plane for
        K < 0, sphere for K = 0.

    Returns
    -------
    (bool, str)
        Exactness and a one-sentence reason.
    """
    d = _direction(model, direction)
    if d == "axis":
        return True, "reflection along the anisotropy axis n keeps -K (S.n)^2 unchanged"
    if d == "plane":
        return True, ("reflection along a direction perpendicular to the anisotropy axis keeps "
                      "-K (S.n)^2 unchanged")
    if model.anisotropy_J == 0:
        return True, "without anisotropy any reflection direction is exact"
    return False, ("cluster moves along random directions change the anisotropy energy "
                   f"(K = {model.anisotropy_meV:g} meV != 0); use direction 'axis' or 'plane' "
                   "(or 'auto')")


def setup_clusters(mc, moves, direction, per_sweep):
    """Moves, cluster direction and cluster work arrays of a fused-path MonteCarlo ``mc``."""
    moves = (moves,) if isinstance(moves, str) else tuple(moves)
    bad = [m for m in moves if m not in MOVES]
    if bad or "metropolis" not in moves:
        raise ValueError(f"moves must be ('metropolis',) or ('metropolis', 'cluster'); got "
                         f"{moves!r} (cluster moves alone are not ergodic: they only flip "
                         "the spin component along the reflection direction)")
    mc.moves = tuple(m for m in MOVES if m in moves)
    mc.cluster_direction = _direction(mc.model, direction)
    mc._cl = None
    mc._cl_stats = np.zeros(N_STATS)
    mc.last_cluster_stats = None
    if "cluster" not in mc.moves:
        return
    ok, why = cluster_moves_exact(mc.model, mc.cluster_direction)
    if not ok:
        raise ValueError(why)
    mc._tune_clusters = per_sweep is None
    mc.clusters_per_sweep = 1 if per_sweep is None else int(per_sweep)
    if mc.clusters_per_sweep < 1:
        raise ValueError("clusters_per_sweep must be >= 1")
    lat = mc.model.lattice
    mc._cl = make_cluster_work(mc._work[3], mc._work[2], lat.periodic, lat.neighbours,
                               mc._axis, _MODE[mc.cluster_direction])
