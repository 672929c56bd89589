"""Tests of domain labelling (grids and lattices, periodic joining) and domain statistics."""

import numpy as np
import pytest
from scipy import ndimage
from skimage import measure

from thinfilm.analysis.domains import domain_statistics, label_domains
from thinfilm.input.errors import InputError
from thinfilm.model.lattice import Lattice


def same_partition(a, b):
    """True when two label arrays define the same regions (labels may be permuted)."""
    pairs = np.unique(np.stack([a.ravel(), b.ravel()], 1), axis=0)
    return len(pairs) == len(np.unique(a)) == len(np.unique(b))


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_open_labels_match_scipy_and_skimage(seed):
    # reference libraries: scipy.ndimage.label and skimage.measure.label (connectivity=1) /
    # regionprops areas, applied to each phase of a random (smoothed) image with open edges
    rng = np.random.default_rng(seed)
    f = ndimage.gaussian_filter(rng.standard_normal((40, 50)), 1.5)
    labels, signs = label_domains(f)
    up = f > 0
    ref_up, n_up = ndimage.label(up)
    ref_dn, n_dn = ndimage.label(~up)
    ref = np.where(up, ref_up, ref_dn + n_up)
    assert labels.max() == n_up + n_dn
    assert same_partition(labels, ref)
    sk = np.where(up, measure.label(up, connectivity=1), measure.label(~up, connectivity=1) + n_up)
    assert same_partition(labels, sk)
    stats = domain_statistics(labels, 0.25, signs=signs)
    sk_areas = sorted([p.area * 0.25 for p in measure.regionprops(sk)], reverse=True)
    np.testing.assert_allclose(stats["all"]["areas_nm2"], sk_areas)
    assert stats["up"]["count"] == n_up and stats["down"]["count"] == n_dn
    assert np.all(signs[labels] == np.where(up, 1, -1))


def test_domain_wrapping_left_right_edge():
    # hand-built: one up domain crossing the left/right edge is one domain on a torus, two open
    f = -np.ones((5, 7))
    f[2, 0] = f[2, 1] = f[2, -1] = 1
    labels, signs = label_domains(f, periodic=True)
    assert labels.max() == 2 and labels[2, 0] == labels[2, -1]
    assert label_domains(f, periodic=False)[0].max() == 3


def test_corner_wrapping_domain():
    # hand-built: the four corner pixels touch through both periodic edges -> one domain
    f = -np.ones((6, 6))
    f[0, 0] = f[0, -1] = f[-1, 0] = f[-1, -1] = 1
    labels, _ = label_domains(f, periodic=True)
    assert labels.max() == 2
    assert len({labels[0, 0], labels[0, -1], labels[-1, 0], labels[-1, -1]}) == 1
    assert label_domains(f)[0].max() == 5


def test_triangular_checkerboard_follows_lattice_bonds():
    # hand-built: s = (-1)^(i+j) on the offset-row triangular lattice; the bonds (i+-1, j+s) join
    # like signs into nx vertical zigzag chains of ny sites each, while on a square grid every
    # site is its own domain. On the honeycomb (bipartite) every bond joins unlike signs.
    i, j = np.indices((8, 6))
    f = np.where((i + j) % 2 == 0, 1.0, -1.0)
    tri = Lattice("triangular", 6, 8, 1.0)
    labels, signs = label_domains(f, neighbours=tri.neighbours)
    assert labels.max() == 6
    assert np.all(np.bincount(labels.ravel())[1:] == 8)
    assert (signs[1:] > 0).sum() == 3
    assert label_domains(f, periodic=True)[0].max() == 48
    hc = Lattice("honeycomb", 6, 8, 1.0)
    assert label_domains(f, neighbours=hc.neighbours)[0].max() == 48


def test_lattice_route_equals_grid_route_on_square_lattice():
    # consistency: square-lattice neighbour table (periodic) == grid labelling with edge joining
    f = ndimage.gaussian_filter(
        np.random.default_rng(7).standard_normal((24, 30)), 2.0, mode="wrap"
    )
    lat = Lattice("square", 30, 24, 1.0)
    a, _ = label_domains(f, neighbours=lat.neighbours)
    b, _ = label_domains(f, periodic=True)
    assert same_partition(a, b)


def test_mask_and_smoothing():
    # reference: scipy.ndimage.gaussian_filter (constant-mode normalised convolution) before
    # thresholding, and masked pixels excluded from labels and connectivity
    rng = np.random.default_rng(8)
    f = rng.standard_normal((30, 30))
    valid = np.ones(f.shape, bool)
    valid[:, 15] = False
    labels, _ = label_domains(f, smoothing_nm=2.0, pixel_nm=0.5, valid=valid)
    assert np.all(labels[:, 15] == 0)
    assert not set(np.unique(labels[:, :15])) & set(np.unique(labels[:, 16:])) - {0}
    plain, _ = label_domains(
        ndimage.gaussian_filter(f, 4.0, mode="constant")
        / ndimage.gaussian_filter(np.ones_like(f), 4.0, mode="constant")
    )
    smoothed, _ = label_domains(f, smoothing_nm=2.0, pixel_nm=0.5)
    assert same_partition(plain, smoothed)


def test_statistics_single_domain_and_values():
    # exact: one domain covering a 4 x 4 grid of 2 nm^2 sites
    st = domain_statistics(np.ones((4, 4)), 2.0)
    assert st["all"]["count"] == 1 and st["down"]["count"] == 0
    assert st["all"]["mean_area_nm2"] == 32.0 and st["all"]["largest_fraction"] == 1.0
    assert st["all"]["equivalent_diameters_nm"][0] == pytest.approx(2 * np.sqrt(32 / np.pi))
    assert st["all"]["histogram"]["counts"].sum() == 1
    assert np.isnan(st["down"]["mean_area_nm2"])
    # exact: areas 1, 1, 2 -> mean 4/3, area-weighted mean (1+1+4)/4 = 1.5
    f = np.array([[1.0, -1.0, 1.0, 1.0]])
    st = domain_statistics(f, 1.0)
    assert st["all"]["mean_area_nm2"] == pytest.approx(4 / 3)
    assert st["all"]["area_weighted_mean_area_nm2"] == pytest.approx(1.5)
    assert st["up_area_fraction"] == pytest.approx(0.75)
    assert st["up"]["largest_fraction"] == pytest.approx(2 / 3)


def test_bad_input():
    with pytest.raises(InputError, match="2D"):
        label_domains(np.zeros(5))
    with pytest.raises(InputError, match="pixel_nm"):
        label_domains(np.zeros((4, 4)), smoothing_nm=1.0)
    with pytest.raises(InputError, match="signs"):
        domain_statistics(np.ones((3, 3), dtype=int), 1.0)
