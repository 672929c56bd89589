"""The one neighbour description: symmetric bonds, coordination, and every user derives from it."""

import numpy as np
import pytest

from tests.reference import random_spins
from thinfilm.engines._kernels.neighbours import site_neighbour_sum
from thinfilm.model.lattice import Lattice
from thinfilm.model.neighbours import COUNT, SHAPE_CODE, neighbour_offsets

# Coordination numbers: square 4, triangular 6, honeycomb 3
# (textbook lattice facts, common practice)
Z = {"square": 4, "triangular": 6, "honeycomb": 3}


@pytest.mark.parametrize("shape", sorted(Z))
def test_coordination(shape):
    assert COUNT[SHAPE_CODE[shape]] == Z[shape]
    assert all(len(neighbour_offsets(shape, i, j)) == Z[shape] for i in range(4) for j in range(4))


@pytest.mark.parametrize("shape", sorted(Z))
def test_every_bond_is_listed_from_both_ends(shape):
    lat = Lattice(shape, 8, 6, 0.3, periodic=True)
    nb = lat.neighbours
    for site in range(lat.n_sites):
        for other in nb[site]:
            assert site in nb[other], (shape, site, other)


@pytest.mark.parametrize("shape", sorted(Z))
@pytest.mark.parametrize("periodic", [True, False])
def test_scalar_kernel_sum_equals_the_table(shape, periodic):
    lat = Lattice(shape, 6, 4, 0.3, periodic=periodic)
    s = random_spins(np.random.default_rng(3), 4, 6)
    flat = s.reshape(-1, 3)
    for i in range(4):
        for j in range(6):
            idx = lat.neighbours[i * 6 + j]
            want = flat[idx[idx >= 0]].sum(axis=0)
            got = site_neighbour_sum(s, i, j, lat.code, periodic)
            np.testing.assert_allclose(got, want, rtol=0, atol=1e-14)
