"""Scalar neighbour sums on the (ny, nx, 3) grid, derived from :mod:`thinfilm.model.neighbours`.

The tables are module-level constants, so numba compiles them into the code (the cache key of
the kernels includes the tables' source, see :mod:`thinfilm.engines._kernels`).
"""

import numba as nb

from thinfilm.model.neighbours import BOND_WEIGHT, CLASS_RULE, COUNT, OFFSETS

__all__ = ["site_neighbour_sum"]

_OFFSETS = OFFSETS
_WEIGHT = BOND_WEIGHT
_RULE = CLASS_RULE
_COUNT = COUNT


@nb.njit(inline="always", cache=True)
def site_neighbour_sum(s, i, j, code, periodic):
    """Weighted sum of the neighbour spins of site (i, j) of s (ny, nx, 3): (hx, hy, hz).

    Neighbours outside open edges are skipped; periodic edges wrap. The order of the additions
    is the order of the neighbour table.
    """
    ny = s.shape[0]
    nx = s.shape[1]
    rule = _RULE[code]
    c = 0 if rule == 0 else ((i & 1) if rule == 1 else ((i + j) & 1))
    hx = 0.0
    hy = 0.0
    hz = 0.0
    for k in range(_COUNT[code]):
        ii = i + _OFFSETS[code, c, k, 0]
        jj = j + _OFFSETS[code, c, k, 1]
        if periodic:
            ii %= ny
            jj %= nx
        elif ii < 0 or ii >= ny or jj < 0 or jj >= nx:
            continue
        w = _WEIGHT[code, c, k]
        if w == 1.0:
            hx += s[ii, jj, 0]
            hy += s[ii, jj, 1]
            hz += s[ii, jj, 2]
        else:
            hx += w * s[ii, jj, 0]
            hy += w * s[ii, jj, 1]
            hz += w * s[ii, jj, 2]
    return hx, hy, hz
