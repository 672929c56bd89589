"""Stripe period and orientation from S(k), bubble counts and sizes, on synthetic patterns."""

import math

import numpy as np
import pytest

from thinfilm.analysis.patterns import bubble_statistics, stripe_orientation, stripe_period
from thinfilm.input.errors import InputError
from thinfilm.model.lattice import Lattice


def _stripes(pos, wavelength, angle_k, phase=0.3):
    """Square-wave stripes: sign(cos(k.r + phase)), k at angle_k, |k| = 2 pi / wavelength."""
    k = 2 * math.pi / wavelength * np.array([math.cos(angle_k), math.sin(angle_k)])
    return np.where(np.cos(pos @ k + phase) >= 0, 1.0, -1.0)


@pytest.mark.parametrize("wavelength_sites", [4, 8, 16, 32])
def test_commensurate_stripe_period_is_exact(wavelength_sites):
    # a period L/n puts all the weight of S(k) on |k| = 2 pi n / L (and odd harmonics)
    a = 0.4
    lat = Lattice("square", 128, 64, a, True)
    f = _stripes(lat.positions_nm, wavelength_sites * a, 0.0)
    out = stripe_period(f, a)
    assert out["period_nm"] == pytest.approx(wavelength_sites * a, rel=1e-12)
    # the mean over 0 < |k| <= 2 k*: the square wave's harmonics (3k*, 5k*, ...) lie outside
    assert out["mean_period_nm"] == pytest.approx(wavelength_sites * a, rel=1e-12)
    out = stripe_period(f.T.copy(), a)  # along y
    assert out["period_nm"] == pytest.approx(wavelength_sites * a, rel=1e-12)


def test_mean_period_is_the_s_weighted_mean_wavenumber():
    # exact: two cosines a1 cos(k1 x) + a2 cos(k2 y) put S = N a^2 / 4 on +-k each, so
    # k_centroid = (a1^2 k1 + a2^2 k2) / (a1^2 + a2^2) when k2 <= 2 k1 (k1 the peak)
    a = 0.5
    lat = Lattice("square", 96, 96, a, True)
    x, y = lat.positions_nm[..., 0], lat.positions_nm[..., 1]
    k1, k2 = 2 * math.pi / (12 * a), 2 * math.pi / (8 * a)
    f = 1.0 * np.cos(k1 * x) + 0.6 * np.cos(k2 * y)
    out = stripe_period(f, a)
    assert out["k_centroid_per_nm"] == pytest.approx((k1 + 0.36 * k2) / 1.36, rel=1e-12)
    assert out["period_nm"] == pytest.approx(12 * a, rel=1e-12)


@pytest.mark.parametrize("shape", ["square", "triangular", "honeycomb"])
def test_oblique_stripe_period_on_every_lattice(shape):
    # incommensurate, tilted stripes: resolved to about one ring width dk / k (here <= 10 %)
    lat = Lattice(shape, 128, 128, 0.3, True)
    lam = 3.7
    f = _stripes(lat.positions_nm, lam, 0.6)
    out = stripe_period(f, positions_nm=lat.positions_nm, box_nm=lat.box_nm, period=lat.period)
    tol = out["dk_per_nm"] / out["k_peak_per_nm"]
    assert out["period_nm"] == pytest.approx(lam, rel=tol)
    assert tol < 0.1


def test_stripe_orientation_order_and_angle():
    lat = Lattice("square", 128, 128, 0.5, True)
    for angle_k in (0.0, 0.4, 1.2, math.pi / 2):
        f = _stripes(lat.positions_nm, 6.0, angle_k)
        out = stripe_orientation(f, 0.5)
        assert out["order"] > 0.9
        stripe_dir = (angle_k + math.pi / 2) % math.pi
        diff = abs((out["angle_rad"] - stripe_dir + math.pi / 2) % math.pi - math.pi / 2)
        assert diff < 0.05


def test_labyrinth_has_low_orientation_order():
    # superposition of many stripe sets with uniformly spread directions: isotropic S(k)
    lat = Lattice("square", 128, 128, 0.5, True)
    rng = np.random.default_rng(4)
    pos = lat.positions_nm
    g = np.zeros(pos.shape[:2])
    for th in np.linspace(0, math.pi, 24, endpoint=False):
        k = 2 * math.pi / 6.0 * np.array([math.cos(th), math.sin(th)])
        g += np.cos(pos @ k + rng.uniform(0, 2 * math.pi))
    f = np.sign(g)
    assert stripe_orientation(f, 0.5)["order"] < 0.2
    assert stripe_period(f, 0.5)["period_nm"] == pytest.approx(6.0, rel=0.1)


def _disks(pos, centres, radius, box):
    f = np.ones(pos.shape[:2])
    for c in centres:
        d = pos - c
        d -= box * np.round(d / box)
        f[np.hypot(d[..., 0], d[..., 1]) < radius] = -1.0
    return f


def test_bubble_count_and_size_on_grid():
    a = 0.5
    n = 120
    box = np.array([n * a, n * a])
    lat = Lattice("square", n, n, a, True)
    centres = [(10.0, 10.0), (30.0, 12.0), (48.0, 40.0), (15.0, 45.0), (59.0, 25.0)]  # last wraps
    radius = 4.0
    f = _disks(lat.positions_nm, centres, radius, box)
    out = bubble_statistics(f, a * a, spacing_nm=a)
    assert out["count"] == 5 and out["sign"] == -1 and out["n_other"] == 0
    # pixelated disks: area within a few per cent of pi R^2, round (aspect ~ 1)
    np.testing.assert_allclose(out["equivalent_diameters_nm"], 2 * radius, rtol=0.03)
    np.testing.assert_allclose(out["gyration_radii_nm"], radius / math.sqrt(2), rtol=0.03)
    assert np.all(out["aspect_ratios"] < 1.1)
    found = sorted(map(tuple, np.round(out["centroids_nm"], 0)))
    assert found == sorted(centres)
    # open edges: the wrapped disk splits into two pieces (the thinner one is not round)
    cut = bubble_statistics(f, a * a, spacing_nm=a, periodic=False)
    assert (cut["count"], cut["n_other"]) == (5, 1)


def test_stripes_are_not_bubbles_on_a_lattice():
    lat = Lattice("triangular", 96, 96, 0.3, True)
    pos = lat.positions_nm
    box = np.array(lat.box_nm)
    f = _disks(pos, [(8.0, 8.0), (20.0, 15.0)], 2.0, box)
    f[(pos[..., 0] > 24.0) & (pos[..., 0] < 26.0)] = -1.0  # a stripe across the film
    out = bubble_statistics(f, lat.site_area_nm2, positions_nm=pos, box_nm=lat.box_nm,
                            neighbours=lat.neighbours)
    assert out["count"] == 2 and out["n_other"] == 1
    area = math.pi * 2.0**2
    np.testing.assert_allclose(out["areas_nm2"], area, rtol=0.1)


def test_uniform_field_is_rejected():
    with pytest.raises(InputError, match="uniform"):
        stripe_period(np.ones((16, 16)), 0.3)
