"""Tests of thinfilm.render.frames: colours of known states, rasterisation rule, scale bar, text."""

import numpy as np
import pytest
from matplotlib import colormaps

from thinfilm.input.errors import InputError
from thinfilm.model.lattice import Lattice
from thinfilm.render.frames import (
    _nearest_site_raster,
    colour_frame,
    draw_label,
    draw_scale_bar,
    nice_length,
    site_index_map,
)

# Reference colours straight from matplotlib's colour maps (the library the frames use).
RED = np.round(np.array(colormaps["RdBu_r"](1.0)[:3]) * 255).astype(np.uint8)
BLUE = np.round(np.array(colormaps["RdBu_r"](0.0)[:3]) * 255).astype(np.uint8)
TWILIGHT_MID = np.round(np.array(colormaps["twilight"](128 / 255)[:3]) * 255).astype(np.uint8)


def uniform(ny, nx, v):
    s = np.zeros((ny, nx, 3))
    s[...] = np.asarray(v, float) / np.linalg.norm(v)
    return s


def test_all_up_all_down_square():
    up = colour_frame(uniform(6, 8, (0, 0, 1)))
    down = colour_frame(uniform(6, 8, (0, 0, -1)))
    assert up.shape == (6, 8, 3) and up.dtype == np.uint8
    assert (up == RED).all()
    assert (down == BLUE).all()
    assert RED[0] > RED[2] and BLUE[2] > BLUE[0]  # +1 red, -1 blue


def test_in_plane_state_is_mid_grey_of_diverging_map():
    img = colour_frame(uniform(4, 4, (1, 0, 0)))
    ref = np.round(np.array(colormaps["RdBu_r"](128 / 255)[:3]) * 255).astype(np.uint8)
    assert (img == ref).all()


def test_half_and_half_wall_square_blocks():
    s = uniform(10, 10, (0, 0, 1))
    s[:, 5:, 2] = -1.0  # right half (x >= 5 a) down
    a = 2.0
    img = colour_frame(s, box_nm=(10 * a, 10 * a), pixel_nm=a / 4)
    assert img.shape == (40, 40, 3)  # 4 x 4 pixel block per site
    assert (img[:, :20] == RED).all()
    assert (img[:, 20:] == BLUE).all()


def test_plus_y_points_up():
    s = uniform(10, 4, (0, 0, -1))
    s[5:, :, 2] = 1.0  # rows with large y up
    img = colour_frame(s)
    assert (img[:5] == RED).all()  # top of the picture = large y
    assert (img[5:] == BLUE).all()


def test_angle_colours():
    assert (colour_frame(uniform(3, 3, (1, 0, 0)), colour="angle") == TWILIGHT_MID).all()
    assert (colour_frame(uniform(3, 3, (0, 0, 1)), colour="angle") == 255).all()  # white
    assert (colour_frame(uniform(3, 3, (0, 0, -1)), colour="angle") == 0).all()  # black
    # opposite in-plane directions get different colours
    assert not np.array_equal(
        colour_frame(uniform(2, 2, (1, 0, 0)), colour="angle"),
        colour_frame(uniform(2, 2, (-1, 0.001, 0)), colour="angle"),
    )


def test_order_axis_projection():
    img = colour_frame(uniform(3, 3, (1, 0, 0)), axis=(1, 0, 0))
    assert (img == RED).all()


@pytest.mark.parametrize("shape", ["triangular", "honeycomb"])
def test_true_position_wall_and_uniform(shape):
    lat = Lattice(shape, 12, 12, 1.0)
    pos, box = lat.positions_nm, lat.box_nm
    s = uniform(12, 12, (0, 0, 1))
    assert (colour_frame(s, shape=shape, positions_nm=pos, box_nm=box) == RED).all()
    s[pos[..., 0] >= box[0] / 2, 2] = -1.0
    img = colour_frame(s, shape=shape, positions_nm=pos, box_nm=box, pixel_nm=0.25)
    w = img.shape[1]
    assert img.shape[0] == round(box[1] / 0.25) and w == round(box[0] / 0.25)
    # well inside each half (a few pixels from the walls at x ~ 0 and x ~ Lx/2)
    assert (img[:, w // 4] == RED).all()
    assert (img[:, 3 * w // 4] == BLUE).all()


@pytest.mark.parametrize("own", [False, True])
@pytest.mark.parametrize("shape", ["triangular", "honeycomb"])
def test_each_pixel_takes_nearest_site(shape, own, rng):
    lat = Lattice(shape, 8, 6, 1.0)
    pos, (lx, ly) = lat.positions_nm, lat.box_nm
    pix = 0.3
    if own:  # the built-in fallback used when thinfilm.imaging is not importable
        idx = _nearest_site_raster(pos, (lx, ly), pix, True)
    else:
        idx = site_index_map(pos, (lx, ly), pix, periodic=True)
    h, w = idx.shape
    flat = pos.reshape(-1, 2)
    x0 = flat[:, 0].min() - 0.5 * lx / 8
    y0 = flat[:, 1].min() - 0.5 * ly / 6
    for r, c in zip(rng.integers(0, h, 40), rng.integers(0, w, 40), strict=True):
        centre = np.array([x0 + (c + 0.5) * lx / w, y0 + (r + 0.5) * ly / h])
        d = flat - centre
        d -= np.rint(d / (lx, ly)) * (lx, ly)  # minimum image on the torus
        dist = np.hypot(d[:, 0], d[:, 1])
        assert dist[idx[r, c]] == pytest.approx(dist.min(), abs=1e-9)


def test_nice_length():
    assert nice_length(100.0) == 20.0
    assert nice_length(512.0) == 100.0
    assert nice_length(3.0) == 0.5
    assert nice_length(37.0) == 10.0
    with pytest.raises(InputError):
        nice_length(0.0)


def longest_white_run(img):
    white = (img == 255).all(axis=2)
    best = 0
    for row in white:
        run = 0
        for v in row:
            run = run + 1 if v else 0
            best = max(best, run)
    return best


def test_scale_bar_length_matches_spacing():
    # 64 sites of spacing 0.5 nm, 4 pixels per site: pixel = 0.125 nm, width 32 nm
    s = uniform(64, 64, (0, 0, 1))
    img = colour_frame(s, box_nm=(32.0, 32.0), pixel_nm=0.125)
    assert img.shape[:2] == (256, 256)
    length, n = draw_scale_bar(img, 0.125)
    assert length == 5.0  # round number near a fifth of 32 nm
    assert n == 40  # 5 nm / 0.5 nm = 10 sites = 40 pixels
    assert longest_white_run(img) == 40
    img2 = colour_frame(s, box_nm=(32.0, 32.0), pixel_nm=0.125)
    draw_scale_bar(img2, 0.125, length_nm=2.0)
    assert longest_white_run(img2) == 16


def test_label_changes_only_its_box():
    img = np.zeros((64, 64, 3), np.uint8)
    w, h = draw_label(img, "T = 300.0 K", (2, 2), height_px=12)
    assert img.max() > 200  # white (anti-aliased) text drawn
    assert not img[2 + h + 1 :].any() and not img[:, 2 + w + 1 :].any()
    # text off the edge is clipped, not an error
    draw_label(img, "long text beyond the border", (50, 58), height_px=12)


def test_bad_inputs():
    with pytest.raises(InputError, match="shape"):
        colour_frame(np.zeros((4, 4)))
    with pytest.raises(InputError, match="colour"):
        colour_frame(uniform(2, 2, (0, 0, 1)), colour="hsv")
    with pytest.raises(InputError, match="positions_nm"):
        colour_frame(uniform(2, 2, (0, 0, 1)), shape="triangular")
    with pytest.raises(InputError, match="shape must be"):
        colour_frame(uniform(2, 2, (0, 0, 1)), shape="kagome")
    with pytest.raises(InputError, match="pixel_nm"):
        draw_scale_bar(np.zeros((8, 8, 3), np.uint8), 0.0)
