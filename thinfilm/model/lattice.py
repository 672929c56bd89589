"""2D lattices stored on an (ny, nx) index grid: square, triangular and honeycomb.

Every lattice keeps its spins in one C-contiguous array of shape ``(ny, nx, 3)``:

* square: site (i, j) at (j, i) * a; neighbours (i, j +- 1), (i +- 1, j).
* triangular: rows offset by half a spacing (site at ((j + (i % 2) / 2) a, i a sqrt(3)/2));
  neighbours (i, j +- 1), (i +- 1, j), (i +- 1, j + s) with s = -1 on even rows, +1 on odd rows.
* honeycomb: the brick-wall form of the honeycomb graph. Row i is a zigzag chain; site (i, j)
  bonds to (i, j +- 1) and vertically to (i + 1, j) when (i + j) is even, (i - 1, j) when odd.
  True positions (nearest-neighbour distance a): x = j a sqrt(3)/2, y = 3 a i / 2 + a/4 for
  "up" sites and - a/4 for "down" sites.

In every case the nearest-neighbour distance is the spacing a. Periodic edges need ny even
for the triangular lattice and nx, ny even for the honeycomb lattice.
"""

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from thinfilm.input.spec import SHAPES, box_nm
from thinfilm.model.neighbours import COUNT, SHAPE_CODE
from thinfilm.model.neighbours import neighbour_offsets as _offsets

__all__ = ["Lattice", "SHAPES", "SHAPE_CODE", "COORDINATION"]

COORDINATION = {s: int(COUNT[c]) for s, c in SHAPE_CODE.items()}
# Sites per rectangular Bravais cell along (rows, columns): the grid repeats exactly with it.
PERIOD = {"square": (1, 1), "triangular": (2, 1), "honeycomb": (2, 2)}
SQ3 = np.sqrt(3.0)


@dataclass(frozen=True)
class Lattice:
    """Geometry of a 2D spin lattice.

    Parameters
    ----------
    shape : {"square", "triangular", "honeycomb"}
    nx, ny : int
        Columns and rows of the index grid.
    spacing_nm : float
        Nearest-neighbour distance a in nm.
    periodic : bool
        Periodic (torus) or open edges.
    """

    shape: str
    nx: int
    ny: int
    spacing_nm: float
    periodic: bool = True

    def __post_init__(self):
        if self.shape not in SHAPES:
            raise ValueError(f"shape must be one of {', '.join(SHAPES)}; got {self.shape!r}")
        if self.nx < 1 or self.ny < 1:
            raise ValueError(f"cells must be positive; got [{self.nx}, {self.ny}]")
        if self.periodic:
            if self.shape == "triangular" and self.ny % 2:
                raise ValueError("a periodic triangular lattice needs an even number of rows")
            if self.shape == "honeycomb" and (self.nx % 2 or self.ny % 2):
                raise ValueError("a periodic honeycomb lattice needs even numbers of rows and "
                                 "columns")

    @property
    def code(self):
        """Integer lattice code read by the kernels (0 square, 1 triangular, 2 honeycomb)."""
        return SHAPE_CODE[self.shape]

    @property
    def n_sites(self):
        return self.nx * self.ny

    @property
    def coordination(self):
        """Number of nearest neighbours of a bulk site."""
        return COORDINATION[self.shape]

    @property
    def period(self):
        """(rows, columns) of the rectangular Bravais cell in index units."""
        return PERIOD[self.shape]

    @property
    def site_area_nm2(self):
        """Area per site in nm^2 (square a^2, triangular sqrt3 a^2/2, honeycomb 3 sqrt3 a^2/4)."""
        a2 = self.spacing_nm**2
        return {"square": a2, "triangular": SQ3 / 2 * a2, "honeycomb": 3 * SQ3 / 4 * a2}[self.shape]

    @property
    def box_nm(self):
        """(Lx, Ly) in nm: the periods of the torus (also the extent for open edges)."""
        return box_nm(self.shape, self.nx, self.ny, self.spacing_nm)

    @cached_property
    def positions_nm(self):
        """Site positions, shape (ny, nx, 2), (x, y) in nm."""
        a = self.spacing_nm
        i, j = np.meshgrid(np.arange(self.ny), np.arange(self.nx), indexing="ij")
        if self.shape == "square":
            x, y = j * a, i * a
        elif self.shape == "triangular":
            x, y = (j + 0.5 * (i % 2)) * a, i * a * SQ3 / 2
        else:
            up = (i + j) % 2 == 0
            x = j * a * SQ3 / 2
            y = 1.5 * a * i + np.where(up, 0.25 * a, -0.25 * a)
        pos = np.stack([x, y], axis=-1).astype(np.float64)
        pos.setflags(write=False)
        return pos

    def neighbour_offsets(self, i, j):
        """List of (di, dj) index offsets of the neighbours of site (i, j), before wrapping.

        From the one neighbour description, :mod:`thinfilm.model.neighbours`.
        """
        return _offsets(self.shape, i, j)

    @cached_property
    def neighbours(self):
        """Neighbour table, shape (n_sites, z), flat site index i * nx + j; -1 marks no bond.

        For tiny periodic grids a neighbour may appear twice (e.g. nx = 2); each entry is one
        bond end, exactly as the kernels count them.
        """
        z = self.coordination
        table = -np.ones((self.n_sites, z), dtype=np.int64)
        for i in range(self.ny):
            for j in range(self.nx):
                for k, (di, dj) in enumerate(self.neighbour_offsets(i, j)):
                    ii, jj = i + di, j + dj
                    if self.periodic:
                        ii %= self.ny
                        jj %= self.nx
                    elif not (0 <= ii < self.ny and 0 <= jj < self.nx):
                        continue
                    table[i * self.nx + j, k] = ii * self.nx + jj
        table.setflags(write=False)
        return table

    def bonds(self):
        """Each bond once: array (n_bonds, 2) of flat site indices with first < second entry."""
        nb = self.neighbours
        src = np.repeat(np.arange(self.n_sites), nb.shape[1])
        dst = nb.ravel()
        keep = dst >= 0
        pairs = np.stack([src[keep], dst[keep]], axis=1)
        # each bond is listed from both ends; keep one copy of each end pair
        pairs = pairs[pairs[:, 0] < pairs[:, 1]] if len(pairs) else pairs
        return pairs

    def describe(self):
        """Dictionary of the geometry in physical units (for manifests)."""
        return {
            "shape": self.shape,
            "cells": [self.nx, self.ny],
            "spacing_nm": self.spacing_nm,
            "edges": "periodic" if self.periodic else "open",
            "n_sites": self.n_sites,
            "site_area_nm2": self.site_area_nm2,
            "box_nm": list(self.box_nm),
        }
