"""Wall type (Neel / Bloch) and sense of rotation of a perpendicular film's domain walls.

On a spin image m (ny, nx, 3) with pixels ``spacing`` apart (a simulated snapshot or a measured
vector image), with central differences in the plane (periodic or one-sided at the edges):

* Neel index  N = sum w / sum g,  w = m_z div m - (m.grad) m_z   (the interfacial-DMI density
  per D t; +g for a Neel wall of one sense, -g for the other, 0 for a Bloch wall)
* Bloch index B = sum b / sum g,  b = m.(curl m) with d/dz = 0   (+-g for Bloch walls, 0 Neel)

with g = sqrt(sum_c abs(grad m_c)^2), which is abs(d theta / dx) across a 1D wall, so N and B
lie in [-1, 1]. The type is "Neel" when abs(N) > abs(B), else "Bloch". Sense: with the wall
normal n pointing right and z up (the plane seen with z x n pointing away from the viewer), a
wall with N > 0 turns the moment clockwise as one goes along n, N < 0 anticlockwise. An
interfacial DMI E = sum D_ij.(S_i x S_j), D_ij = d (z x r_ij), with d > 0 favours N < 0.
Continuum forms: Thiaville et al., EPL 100, 57002 (2012) (the DMI energy density).
"""

import numpy as np

__all__ = ["wall_chirality", "wall_label"]


def _grad(a, axis, periodic):
    if periodic:
        return 0.5 * (np.roll(a, -1, axis=axis) - np.roll(a, 1, axis=axis))
    return np.gradient(a, axis=axis)


def wall_chirality(spins, *, periodic=True, spacing=1.0):
    """Neel and Bloch indices of the walls of a spin image, its wall type and sense.

    Parameters
    ----------
    spins : ndarray (ny, nx, 3)
        Unit vectors (zero on vacancies is allowed: they add no gradient weight of their own).
    periodic : bool
        Periodic edges (derivatives wrap) or not.
    spacing : float
        Pixel spacing (any unit; the indices are dimensionless).

    Returns
    -------
    dict
        neel_index, bloch_index (floats in [-1, 1]), wall_type ("Neel", "Bloch" or None when
        the image has no gradients), sense ("clockwise", "anticlockwise" or None; for Neel
        walls only).

    Example
    -------
    >>> x = np.arange(64) - 32.0
    >>> th = 2 * np.arctan(np.exp(x / 4))
    >>> m = np.zeros((4, 64, 3)); m[..., 0] = np.sin(th); m[..., 2] = np.cos(th)
    >>> wall_chirality(m, periodic=False)["wall_type"]
    'Neel'
    """
    m = np.asarray(spins, dtype=np.float64)
    dx = [_grad(m[..., c], 1, periodic) / spacing for c in range(3)]
    dy = [_grad(m[..., c], 0, periodic) / spacing for c in range(3)]
    mx, my, mz = m[..., 0], m[..., 1], m[..., 2]
    div = dx[0] + dy[1]
    w = mz * div - (mx * dx[2] + my * dy[2])
    curl = (dy[2], -dx[2], dx[1] - dy[0])
    b = mx * curl[0] + my * curl[1] + mz * curl[2]
    g = np.sqrt(sum(dx[c] ** 2 + dy[c] ** 2 for c in range(3)))
    total = float(g.sum()) * spacing
    if total <= 0:
        return {"neel_index": float("nan"), "bloch_index": float("nan"), "wall_type": None,
                "sense": None}
    n_idx = float(w.sum()) * spacing / total
    b_idx = float(b.sum()) * spacing / total
    kind = "Neel" if abs(n_idx) > abs(b_idx) else "Bloch"
    sense = None if kind != "Neel" else ("clockwise" if n_idx > 0 else "anticlockwise")
    return {"neel_index": n_idx, "bloch_index": b_idx, "wall_type": kind, "sense": sense}


def wall_label(spins, periodic=True):
    """'Neel walls, anticlockwise (N -0.97)', 'Bloch walls (B +0.98)', 'mixed walls (...)' when
    neither index reaches 0.5 in size, None without gradients (the movie's frame label)."""
    ch = wall_chirality(spins, periodic=periodic)
    n, b = ch["neel_index"], ch["bloch_index"]
    if ch["wall_type"] is None:
        return None
    if max(abs(n), abs(b)) < 0.5:
        return f"mixed walls (N {n:+.2f}, B {b:+.2f})"
    if ch["wall_type"] == "Neel":
        return f"Neel walls, {ch['sense']} (N {n:+.2f})"
    return f"Bloch walls (B {b:+.2f})"
