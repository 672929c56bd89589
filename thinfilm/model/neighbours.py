"""The one description of every lattice's nearest neighbours on the (ny, nx) index grid.

Each shape lists, per parity class of a site, the (di, dj) index offsets of its neighbours in a
fixed order, and one weight per bond (the exchange of that bond in units of J). Everything that
needs neighbours derives from these tables: :class:`thinfilm.model.lattice.Lattice` (offsets,
neighbour table, bonds), the scalar numba kernels (:mod:`thinfilm.engines._kernels.neighbours`,
used for energies, measurements and single-site Monte Carlo energy changes), the numpy
references of the tests and the domain labelling of the analysers. The vectorised row kernels
(fused Heun field, Metropolis sweeps) are specialised by hand for speed and are checked against
these tables by the kernel tests; a shape without a specialised path uses the generic one.

Parity classes:

* square: one class; neighbours (0, -1), (0, +1), (+1, 0), (-1, 0).
* triangular: class i % 2 (rows offset by half a spacing); the two extra neighbours are in the
  rows above and below, shifted by s = -1 on even rows and +1 on odd rows.
* honeycomb (brick wall): class (i + j) % 2; the vertical bond goes up on even sites, down on odd.

The order (left, right, up, down, up-shifted, down-shifted) is the order in which the scalar
kernels add the neighbour spins, so it fixes their round-off.
"""

import numpy as np

__all__ = ["OFFSETS", "COUNT", "CLASS_RULE", "BOND_WEIGHT", "neighbour_offsets", "SHAPE_CODE"]

SHAPE_CODE = {"square": 0, "triangular": 1, "honeycomb": 2}
# class rule: 0 one class, 1 class = i % 2, 2 class = (i + j) % 2
CLASS_RULE = np.array([0, 1, 2], dtype=np.int64)
COUNT = np.array([4, 6, 3], dtype=np.int64)  # neighbours per site
MAX_Z = 6
_TABLE = {
    "square": [[(0, -1), (0, 1), (1, 0), (-1, 0)]] * 2,
    "triangular": [[(0, -1), (0, 1), (1, 0), (-1, 0), (1, -1), (-1, -1)],
                   [(0, -1), (0, 1), (1, 0), (-1, 0), (1, 1), (-1, 1)]],
    "honeycomb": [[(0, -1), (0, 1), (1, 0)], [(0, -1), (0, 1), (-1, 0)]],
}
# OFFSETS[code, class, k] = (di, dj) of neighbour k; unused entries are (0, 0)
OFFSETS = np.zeros((3, 2, MAX_Z, 2), dtype=np.int64)
# BOND_WEIGHT[code, class, k]: exchange of that bond in units of J (1 for the uniform film)
BOND_WEIGHT = np.zeros((3, 2, MAX_Z), dtype=np.float64)
for _shape, _classes in _TABLE.items():
    for _c, _offs in enumerate(_classes):
        _code = SHAPE_CODE[_shape]
        OFFSETS[_code, _c, : len(_offs)] = _offs
        BOND_WEIGHT[_code, _c, : len(_offs)] = 1.0
for _a in (OFFSETS, BOND_WEIGHT, CLASS_RULE, COUNT):
    _a.setflags(write=False)


def parity_class(code, i, j):
    """Parity class of site (i, j) under the shape's rule."""
    rule = CLASS_RULE[code]
    return 0 if rule == 0 else (i % 2 if rule == 1 else (i + j) % 2)


def neighbour_offsets(shape, i, j):
    """List of (di, dj) offsets of the neighbours of site (i, j), before wrapping."""
    code = SHAPE_CODE[shape]
    c = parity_class(code, i, j)
    return [(int(di), int(dj)) for di, dj in OFFSETS[code, c, : COUNT[code]]]
