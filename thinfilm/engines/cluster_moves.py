"""Which Wolff cluster moves are exact for a model: the move set and reflection directions."""

__all__ = ["MOVES", "CLUSTER_DIRECTIONS", "cluster_moves_exact"]

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
