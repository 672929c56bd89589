"""Grains: a Poisson-Voronoi tessellation of the film and random axes within a cone.

Grain centres are uniform in the film box (number = round(area / d^2), at least 1, d the mean
grain size), every site belongs to its nearest centre, found with ``scipy.spatial.cKDTree`` on
the true site positions; periodic films use the torus metric (``boxsize``), so grains wrap.
"""

import numpy as np
from scipy.spatial import cKDTree

__all__ = ["voronoi_grains", "cone_axes", "wrapped_positions", "boundary_bonds"]


def wrapped_positions(lattice):
    """Site positions (n, 2) in nm, wrapped into [0, Lx) x [0, Ly) when periodic."""
    pos = np.asarray(lattice.positions_nm, dtype=np.float64).reshape(-1, 2).copy()
    if lattice.periodic:
        box = np.asarray(lattice.box_nm, dtype=np.float64)
        pos = np.mod(pos, box)
        pos[pos >= box] = 0.0  # mod can round up to the period itself
    return pos


def voronoi_grains(lattice, grain_size_nm, rng):
    """Grain id (ny, nx) int64 of every site, ids 0 .. n_grains - 1, and the centres (m, 2) nm.

    Parameters
    ----------
    grain_size_nm : float
        Mean grain size d (nm): one centre per d^2 of film area.
    rng : numpy.random.Generator
    """
    lx, ly = lattice.box_nm
    pos = wrapped_positions(lattice)
    if lattice.periodic:
        lo = np.zeros(2)
        hi = np.array([lx, ly])
    else:
        lo = pos.min(axis=0)
        hi = pos.max(axis=0)
    area = float(np.prod(np.maximum(hi - lo, lattice.spacing_nm)))
    m = max(1, int(round(area / grain_size_nm**2)))
    centres = lo + rng.random((m, 2)) * (hi - lo)
    if lattice.periodic:
        tree = cKDTree(centres, boxsize=[lx, ly])
    else:
        tree = cKDTree(centres)
    _, idx = tree.query(pos)
    return np.asarray(idx, dtype=np.int64).reshape(lattice.ny, lattice.nx), centres


def cone_axes(mean_axis, cone_rad, n, rng):
    """n unit vectors uniform on the spherical cap of half-angle cone_rad around the unit axis
    mean_axis ((3,), or (n, 3): one cap per vector).

    cos(theta) is uniform in [cos(cone_rad), 1] and the azimuth uniform; for cone_rad = 0 every
    axis equals its mean axis bit for bit (n0 * 1.0 + 0.0 * (...)).
    """
    n0 = np.broadcast_to(np.asarray(mean_axis, dtype=np.float64), (n, 3))  # not renormalised
    helper = np.where((np.abs(n0[:, 0]) < 0.9)[:, None], [1.0, 0.0, 0.0], [0.0, 1.0, 0.0])
    e1 = np.cross(n0, helper)
    e1 /= np.linalg.norm(e1, axis=1, keepdims=True)
    e2 = np.cross(n0, e1)
    u = rng.random(n)
    phi = 2.0 * np.pi * rng.random(n)
    cos_t = 1.0 - u * (1.0 - np.cos(cone_rad))
    sin_t = np.sqrt(np.maximum(0.0, 1.0 - cos_t * cos_t))
    out = (cos_t[:, None] * n0
           + sin_t[:, None] * (np.cos(phi)[:, None] * e1 + np.sin(phi)[:, None] * e2))
    if cone_rad > 0:
        out /= np.linalg.norm(out, axis=1, keepdims=True)
    return out


def boundary_bonds(grain_id, neighbours):
    """(n, z) bool: True on bond slots whose two ends lie in different grains."""
    g = np.asarray(grain_id).ravel()
    nb = np.asarray(neighbours)
    ok = nb >= 0
    return ok & (g[:, None] != g[np.where(ok, nb, 0)])
