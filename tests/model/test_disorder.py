"""Disorder realisations: reproducible from a seed, clipping, grains, maps, scenario errors."""

import numpy as np
import pytest
import tifffile

from thinfilm.input.disorder_spec import DisorderSpec, GrainSpec, SpreadSpec, parse_disorder
from thinfilm.input.errors import ScenarioError
from thinfilm.input.units import MEV_J, MU_B_J_PER_T
from thinfilm.model.disorder import MIN_MOMENT_FACTOR, realise_disorder
from thinfilm.model.grains import cone_axes, voronoi_grains
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model
from thinfilm.runs.ensemble import run_ensemble


def _model(shape="square", L=24, periodic=True):
    return Model(Lattice(shape, L, L, 0.5, periodic), MU_B_J_PER_T, MEV_J, 0.2 * MEV_J,
                 (0.0, 0.0, 1.0))


def test_same_seed_same_realisation_other_seed_other():
    spec = DisorderSpec(vacancies=0.2, anisotropy=SpreadSpec(0.3), exchange=SpreadSpec(0.2),
                        grains=GrainSpec(3.0, 20.0, SpreadSpec(0.1), 0.5))
    m = _model()
    a, b, c = (realise_disorder(m, spec, s) for s in (5, 5, 6))
    for name in ("exchange_J", "anisotropy_J", "axis", "occupied"):
        assert np.array_equal(getattr(a, name), getattr(b, name))
    assert not np.array_equal(a.occupied, c.occupied)
    # switching the K spread off leaves the vacancies and grains unchanged (own streams)
    d = realise_disorder(m, DisorderSpec(vacancies=0.2, exchange=SpreadSpec(0.2),
                                         grains=GrainSpec(3.0, 20.0, SpreadSpec(0.1), 0.5)), 5)
    assert np.array_equal(a.occupied, d.occupied) and np.array_equal(a.grain_id, d.grain_id)


def test_vacancy_fraction_and_spreads_have_the_asked_statistics():
    m = _model(L=200)
    p = realise_disorder(m, DisorderSpec(vacancies=0.3, anisotropy=SpreadSpec(0.2, "uniform"),
                                         moment=SpreadSpec(0.1)), 1)
    n = m.lattice.n_sites
    assert abs((1 - p.occupied.mean()) - 0.3) < 4 * np.sqrt(0.21 / n)
    k = p.anisotropy_J[p.occupied] / m.anisotropy_J
    assert abs(k.std() - 0.2) < 0.005 and k.min() >= 1 - 0.2 * np.sqrt(3) - 1e-12
    mu = p.moment_J_per_T[p.occupied] / m.moment_J_per_T
    assert abs(mu.std() - 0.1) < 0.005


def test_clipping_keeps_signs_and_positive_moments():
    m = _model(L=64)
    p = realise_disorder(m, DisorderSpec(anisotropy=SpreadSpec(1.5), exchange=SpreadSpec(1.5),
                                         moment=SpreadSpec(1.5)), 2)
    assert p.anisotropy_J.min() == 0.0 and p.exchange_J.min() == 0.0
    assert p.moment_J_per_T.min() == pytest.approx(MIN_MOMENT_FACTOR * m.moment_J_per_T)


def test_grains_have_the_asked_size_and_weak_boundaries():
    m = _model("honeycomb", 64, True)
    lat = m.lattice
    ids, centres = voronoi_grains(lat, 4.0, np.random.default_rng(3))
    lx, ly = lat.box_nm
    assert len(centres) == round(lx * ly / 16.0)
    p = realise_disorder(m, DisorderSpec(grains=GrainSpec(4.0, 0.0, None, 0.25)), 3)
    j = p.exchange_J.reshape(-1, 3) / m.exchange_J
    g = p.grain_id.ravel()
    nb = lat.neighbours
    on_boundary = g[:, None] != g[nb]
    assert np.all(j[on_boundary] == 0.25) and np.all(j[~on_boundary] == 1.0)
    assert on_boundary.any()


def test_cone_axes_stay_in_the_cone_and_fill_it():
    n0 = np.array([0.0, 0.6, 0.8])
    ax = cone_axes(n0, np.deg2rad(10.0), 20000, np.random.default_rng(1))
    ang = np.degrees(np.arccos(np.clip(ax @ n0, -1, 1)))
    assert ang.max() <= 10.0 + 1e-9 and ang.max() > 9.9
    # uniform on the cap: cos(theta) uniform, mean (1 + cos 10deg)/2
    assert abs((ax @ n0).mean() - (1 + np.cos(np.deg2rad(10))) / 2) < 1e-4
    assert np.array_equal(cone_axes(n0, 0.0, 5, np.random.default_rng(1)), np.tile(n0, (5, 1)))
    many = cone_axes(n0, np.deg2rad(30.0), 50, np.random.default_rng(2))  # one cap per vector
    assert np.array_equal(cone_axes(many, 0.0, 50, np.random.default_rng(3)), many)
    around = cone_axes(many, np.deg2rad(5.0), 50, np.random.default_rng(3))
    ang = np.degrees(np.arccos(np.clip(np.einsum("ij,ij->i", around, many), -1, 1)))
    assert ang.max() <= 5.0 + 1e-9 and ang.min() >= 0.0


def test_per_site_axes_lie_in_the_cone_around_the_grain_axis():
    m = _model(L=32)
    g = GrainSpec(4.0, 30.0)
    grains_only = realise_disorder(m, DisorderSpec(grains=g), 4)
    both = realise_disorder(m, DisorderSpec(grains=g, axis_cone_deg=5.0), 4)
    assert np.array_equal(grains_only.grain_id, both.grain_id)
    cosang = np.einsum("ijc,ijc->ij", both.axis, grains_only.axis)
    ang = np.degrees(np.arccos(np.clip(cosang, -1, 1)))
    assert ang.max() <= 5.0 + 1e-9 and ang.mean() > 2.0


def test_map_sets_vacancies_and_anisotropy(tmp_path):
    m = _model("square", 8, False)  # sites at 0 .. 3.5 nm
    img = np.zeros((4, 4), dtype=np.uint8)
    img[:, 2:] = 255  # right half white; pixel 1 nm
    tifffile.imwrite(tmp_path / "k.tif", img)
    spec = parse_disorder({"map": {"file": "k.tif", "scale": "1 nm", "sets": "anisotropy",
                                   "range": [0.5, 2.0]}}, str(tmp_path / "s.yaml"), m.lattice)
    p = realise_disorder(m, spec, 0)
    k = p.anisotropy_J / m.anisotropy_J
    assert np.all(k[:, :4] == 0.5) and np.all(k[:, 4:] == 2.0)  # x = j * 0.5 nm
    np.save(tmp_path / "v.npy", np.where(np.arange(4)[:, None] < 1, 0.0, 1.0) * np.ones((4, 4)))
    spec = parse_disorder({"map": {"file": "v.npy", "scale": "1 nm", "sets": "vacancies"}},
                          str(tmp_path / "s.yaml"), m.lattice)
    p = realise_disorder(m, spec, 0)
    assert np.all(~p.occupied[:2]) and np.all(p.occupied[2:])  # row 0 of the array at y = 0


@pytest.mark.parametrize("raw, key, words", [
    ({"vacancies": 1.0}, "disorder.vacancies", "below 1"),
    ({"anisotropy": {"spread": -0.1}}, "disorder.anisotropy.spread", "at least"),
    ({"exchange": {"spread": 0.1, "distribution": "lorentz"}}, "disorder.exchange.distribution",
     "gaussian, uniform"),
    ({"grains": {"size": "0.1 nm"}}, "disorder.grains.size", "lattice spacing"),
    ({"grains": {"size": "5 nm", "boundary_exchange": 1.5}}, "disorder.grains.boundary_exchange",
     "at most 1"),
    ({"map": {"file": "nothere.png", "scale": "1 nm", "sets": "anisotropy"}}, "disorder.map.file",
     "does not exist"),
    ({"vacancy": 0.1}, "disorder.vacancy", "Did you mean 'vacancies'"),
])
def test_scenario_errors_name_the_key_and_the_rule(raw, key, words):
    with pytest.raises(ScenarioError) as info:
        parse_disorder(raw, "film.yaml", _model().lattice)
    assert info.value.key == key and words in str(info.value)


def test_map_must_cover_the_film(tmp_path):
    np.save(tmp_path / "small.npy", np.ones((2, 2)))
    with pytest.raises(ScenarioError, match="must cover the film"):
        parse_disorder({"map": {"file": str(tmp_path / "small.npy"), "scale": "1 nm",
                                "sets": "moment", "range": [1, 2]}}, "f.yaml", _model().lattice)


def test_ensemble_runs_distinct_seeds():
    m = _model(L=16)
    spec = DisorderSpec(seed=10, realisations=3, vacancies=0.2)
    out = run_ensemble(m, spec, lambda p, k, s: {"occ": p.occupied.mean()})
    assert [r["seed"] for r in out["realisations"]] == [10, 11, 12]
    occ = [r["occ"] for r in out["realisations"]]
    assert len(set(occ)) == 3
    assert out["average"]["occ"]["mean"] == pytest.approx(np.mean(occ))
