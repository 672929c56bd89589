"""Universality class of the anisotropy, the nu check and the BKT essential-singularity fit."""

import numpy as np
import pytest

from thinfilm.analysis.universality import (
    bkt_fit,
    bkt_length,
    check_universality,
    universality_class,
)
from thinfilm.input.errors import InputError


def test_class_follows_the_sign_of_the_anisotropy():
    # easy axis: 2D Ising, nu = 1 exactly (Onsager, Phys. Rev. 65, 117, 1944)
    assert universality_class(0.5)["name"] == "2d_ising"
    assert universality_class(0.5)["nu"] == 1.0
    # easy plane: BKT, no power law (Kosterlitz 1974)
    assert universality_class(-0.5)["name"] == "bkt"
    assert universality_class(-0.5)["power_law"] is False
    # K = 0: no transition at T > 0 (Mermin & Wagner, Phys. Rev. Lett. 17, 1133, 1966)
    assert universality_class(0.0)["name"] == "o3_no_transition"
    with pytest.raises(InputError):
        universality_class(float("nan"))


def test_check_accepts_ising_nu_and_rejects_a_wrong_one():
    ok = check_universality({"nu": 1.03, "nu_err": 0.02}, 1.0)
    assert ok["consistent"] is True and abs(ok["deviation_sigma"] - 1.5) < 1e-9
    bad = check_universality({"nu": 0.63, "nu_err": 0.02}, 1.0)  # 3D-Ising-like, not 2D
    assert bad["consistent"] is False and "NOT consistent" in bad["verdict"]
    bkt = check_universality({"nu": 1.4, "nu_err": 0.1}, -1.0)
    assert bkt["consistent"] is None and np.isnan(bkt["deviation_sigma"])


def test_bkt_fit_recovers_t_bkt_from_its_own_form():
    # consistency check only: data generated with the fitted form itself,
    # xi = a exp(b / sqrt(T/T_BKT - 1)) (Kosterlitz 1974). T_BKT = 0.8929 J/kB is the planar
    # rotator value (Hasenbusch, J. Phys. A 38, 5869, 2005; digits from memory), used only as
    # a realistic number; b = 1.5 and a = 0.3 nm are arbitrary.
    tb, b, a = 0.8929, 1.5, 0.3
    T = np.linspace(0.95, 1.4, 14)
    xi = bkt_length(T, tb, b, a)
    z = []
    for seed in range(8):
        rng = np.random.default_rng(seed)
        r = bkt_fit(T, xi * (1 + 0.02 * rng.standard_normal(T.size)), 0.02 * xi)
        z.append((r["t_bkt_K"] - tb) / r["t_bkt_err_K"])
        assert r["t_bkt_err_K"] < 0.01 * tb
        assert abs(r["b"] - b) < 4 * r["b_err"]
    assert np.all(np.abs(z) < 4), z
    assert 0.3 < np.std(z) < 2.0  # the stated errors are of the right size


def test_bkt_fit_drops_points_with_xi_near_the_film_size_and_refuses_too_few():
    T = np.linspace(0.95, 1.4, 8)
    xi = bkt_length(T, 0.8929, 1.5, 0.3)
    side = 6.0 * np.median(xi)  # about half the points have film side < 6 xi
    with pytest.raises(InputError, match="needs at least 5"):
        bkt_fit(T, xi, 0.02 * xi, film_side_nm=side)


def test_bkt_fit_refuses_data_without_an_essential_singularity():
    # a length that grows with T (and one that is flat) shows no singularity below the data
    T = np.linspace(1.0, 2.0, 10)
    with pytest.raises(InputError, match="no essential singularity"):
        bkt_fit(T, 2.0 + T, np.full(T.size, 0.05))
    with pytest.raises(InputError, match="no essential singularity"):
        bkt_fit(T, np.full(T.size, 5.0), np.full(T.size, 0.05))
