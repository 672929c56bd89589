"""Wall-on-boundary analyser on walls placed by hand, and on walls that ignore the grains."""

import math

import numpy as np
import pytest

from thinfilm.analysis.ensemble import disorder_average, disorder_binder
from thinfilm.analysis.grain_pinning import wall_on_boundary_fraction
from thinfilm.model.grains import voronoi_grains
from thinfilm.model.lattice import Lattice


def _halves(wall_col, L=16):
    lat = Lattice("square", L, L, 0.3, periodic=False)
    j = np.arange(L)[None, :].repeat(L, axis=0)
    grains = (j >= L // 2).astype(int)
    field = np.where(j < wall_col, 1.0, -1.0)
    return lat, field, grains


def test_wall_on_the_boundary_and_off_it():
    lat, field, grains = _halves(8)
    r = wall_on_boundary_fraction(field, grains, lat.neighbours)
    # 16 boundary bonds of 2 * 16 * 15 = 480 open-lattice bonds
    assert r["n_bonds"] == 480 and r["n_boundary_bonds"] == 16
    assert r["fraction"] == 1.0 and r["expected"] == pytest.approx(1 / 30)
    lat, field, grains = _halves(4)
    r = wall_on_boundary_fraction(field, grains, lat.neighbours)
    assert r["n_wall_bonds"] == 16 and r["fraction"] == 0.0


def test_vacancies_cut_their_bonds():
    lat, field, grains = _halves(8)
    occ = np.ones(field.shape, bool)
    occ[:8, 7] = False  # half the sites left of the boundary
    r = wall_on_boundary_fraction(field, grains, lat.neighbours, occupied=occ)
    assert r["n_boundary_bonds"] == 8 and r["n_wall_bonds"] == 8 and r["fraction"] == 1.0


def test_walls_that_ignore_grains_sit_on_boundaries_by_chance():
    # independent random signs: each bond is a wall bond with probability 1/2 regardless of the
    # grains, so the wall fraction on boundaries is the boundary-bond fraction within the
    # binomial error (4 standard deviations)
    lat = Lattice("triangular", 128, 128, 0.3, periodic=True)
    grains, _ = voronoi_grains(lat, 4.0, np.random.default_rng(1))
    field = np.random.default_rng(2).choice([-1.0, 1.0], size=(128, 128))
    r = wall_on_boundary_fraction(field, grains, lat.neighbours)
    p = r["expected"]
    assert 0.05 < p < 0.5
    assert abs(r["fraction"] - p) < 4 * math.sqrt(p * (1 - p) / r["n_wall_bonds"])


def test_disorder_average_and_binder():
    res = [{"m_abs": 0.5, "m_abs_err": 0.01, "tag": "a"}, {"m_abs": 0.7, "m_abs_err": 0.03,
                                                           "tag": "b"}]
    a = disorder_average(res)
    assert set(a) == {"m_abs"}
    assert a["m_abs"]["mean"] == pytest.approx(0.6)
    assert a["m_abs"]["spread"] == pytest.approx(math.sqrt(0.02))
    assert a["m_abs"]["error"] == pytest.approx(0.1)
    assert a["m_abs"]["thermal_error"] == pytest.approx(math.sqrt(0.0005) / math.sqrt(2))
    # fully ordered realisations: m^4 = (m^2)^2 gives U = 2/3 with no spread
    u, e = disorder_binder([0.25, 0.25, 0.25], [0.0625, 0.0625, 0.0625])
    assert u == pytest.approx(2 / 3) and e == pytest.approx(0.0, abs=1e-15)
    rng = np.random.default_rng(0)
    m2 = rng.uniform(0.2, 0.4, 20)
    m4 = m2**2 * rng.uniform(1.2, 2.0, 20)
    u, e = disorder_binder(m2, m4)
    assert u == pytest.approx(1 - m4.mean() / (3 * m2.mean() ** 2))
    assert 0 < e < 0.1
