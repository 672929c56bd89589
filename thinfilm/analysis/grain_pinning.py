"""Are domain walls pinned at grain boundaries? Wall length on boundaries vs chance.

A wall bond joins two occupied sites of opposite domain sign; a boundary bond joins two sites of
different grains. On a regular lattice every bond crosses one dual edge of the same length, so
lengths are proportional to bond counts. If walls ignored the grains, the fraction of wall
bonds lying on boundaries would be, on average, the fraction of all bonds that are boundary
bonds; a larger fraction means walls sit preferentially on grain boundaries.
"""

import numpy as np

from thinfilm.analysis.domains import label_domains

__all__ = ["wall_on_boundary_fraction"]


def wall_on_boundary_fraction(field, grain_id, neighbours, *, occupied=None, level=0.0,
                              **label_options):
    """Fraction of domain-wall length on grain boundaries and the expectation for unpinned walls.

    Parameters
    ----------
    field : ndarray (ny, nx)
        Spin component along the anisotropy axis (dimensionless), e.g. S.n or m_z.
    grain_id : ndarray (ny, nx) int
        Grain of every site.
    neighbours : ndarray (ny * nx, z)
        Lattice neighbour table (flat indices, -1 for no bond), e.g. ``lattice.neighbours``.
    occupied : ndarray (ny, nx) bool, optional
        False on vacancies (their bonds are ignored).
    level : float
        Domain threshold: "up" where field > level.
    **label_options
        Passed to :func:`thinfilm.analysis.domains.label_domains` (e.g. smoothing_nm with
        positions_nm, box_nm, periodic) to decide the sign of each site.

    Returns
    -------
    dict
        fraction (wall bonds on boundaries / wall bonds; nan without walls), expected (boundary
        bonds / bonds), ratio (fraction / expected), n_wall_bonds, n_wall_on_boundary,
        n_boundary_bonds, n_bonds.
    """
    f = np.asarray(field, dtype=np.float64)
    g = np.asarray(grain_id).ravel()
    nb = np.asarray(neighbours)
    if g.size != f.size or nb.shape[0] != f.size:
        raise ValueError(f"field {f.shape}, grain_id ({g.size} sites) and neighbours "
                         f"{nb.shape} must describe the same sites")
    occ = np.ones(f.shape, bool) if occupied is None else np.asarray(occupied, bool)
    labels, signs = label_domains(np.where(occ, f, level), level=level, neighbours=nb,
                                  valid=occ, **label_options)
    sign = signs[labels].ravel()
    src = np.repeat(np.arange(f.size), nb.shape[1])
    dst = nb.ravel()
    keep = dst > src  # each bond once (tiny periodic grids: each listed pair once per bond)
    src, dst = src[keep], dst[keep]
    live = occ.ravel()[src] & occ.ravel()[dst]
    src, dst = src[live], dst[live]
    wall = sign[src] != sign[dst]
    bnd = g[src] != g[dst]
    n_b, n_wall = int(src.size), int(wall.sum())
    n_wb, n_bb = int((wall & bnd).sum()), int(bnd.sum())
    frac = n_wb / n_wall if n_wall else float("nan")
    exp = n_bb / n_b if n_b else float("nan")
    return {"fraction": frac, "expected": exp,
            "ratio": frac / exp if exp and np.isfinite(frac) else float("nan"),
            "n_wall_bonds": n_wall, "n_wall_on_boundary": n_wb, "n_boundary_bonds": n_bb,
            "n_bonds": n_b}
