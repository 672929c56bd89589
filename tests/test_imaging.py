"""Tests of rasterising, the instrument view and the image loader / analyser."""

import json
import warnings

import imageio.v3 as iio
import numpy as np
import pytest
import tifffile

from thinfilm.analysis.correlation import second_moment_length, structure_factor
from thinfilm.analysis.imaging import analyse_image, load_image
from thinfilm.analysis.instrument import FWHM_PER_SIGMA, instrument_view, rasterise
from thinfilm.input.errors import InputError, ThinFilmWarning
from thinfilm.model.lattice import Lattice


def oz_field(n, xi, seed):
    """Gaussian field with the OZ spectrum 1/(khat^2 + xi^-2) on a periodic n x n grid."""
    k = 2 * np.pi * np.fft.fftfreq(n)
    kx, ky = np.meshgrid(k, k)
    spec = 1.0 / ((2 * np.sin(kx / 2)) ** 2 + (2 * np.sin(ky / 2)) ** 2 + xi**-2)
    w = np.random.default_rng(seed).standard_normal((n, n))
    return np.fft.ifft2(np.fft.fft2(w) * np.sqrt(spec)).real


def test_rasterise_square_identity_and_vectors():
    # exact: pixel centres coincide with the sites of a square lattice at its own spacing
    lat = Lattice("square", 7, 5, 2.0)
    vals = np.random.default_rng(0).standard_normal((5, 7, 3))
    out = rasterise(vals, lat.positions_nm, lat.box_nm, 2.0)
    np.testing.assert_array_equal(out, vals)


def test_rasterise_triangular_nearest_site():
    # reference: brute-force nearest site with periodic (minimum-image) distances
    lat = Lattice("triangular", 6, 6, 1.0)
    vals = np.arange(36.0).reshape(6, 6)
    img = rasterise(vals, lat.positions_nm, lat.box_nm, 0.37)
    ny, nx = img.shape
    box = np.asarray(lat.box_nm)
    gx, gy = np.meshgrid(np.arange(nx) * box[0] / nx, np.arange(ny) * box[1] / ny)
    d = np.stack([gx.ravel(), gy.ravel()], 1)[:, None] - lat.positions_nm.reshape(-1, 2)[None]
    d -= box * np.round(d / box)
    dist = np.hypot(d[..., 0], d[..., 1])
    best = dist.min(axis=1)
    chosen = dist[np.arange(dist.shape[0]), img.ravel().astype(int)]
    np.testing.assert_allclose(chosen, best, atol=1e-12)


def test_delta_blur_fwhm():
    # exact: a delta (one bright site, a 1 x 1 nm box after rasterising) blurred by a Gaussian of
    # sigma = FWHM / (2 sqrt(2 ln 2)) and averaged over 1 nm pixels has variance
    # sigma^2 + 2 * (1 nm)^2 / 12 (variances of convolved boxes add); the measured FWHM is within
    # 0.05 nm of that and within one pixel of the requested FWHM.
    lat = Lattice("square", 64, 64, 1.0)
    f = np.zeros((64, 64))
    f[32, 32] = 1.0
    fwhm = 6.0
    img, (px, py) = instrument_view(f, lat.positions_nm, lat.box_nm, pixel_nm=1.0, fwhm_nm=fwhm)
    assert (px, py) == (1.0, 1.0)
    assert img.sum() == pytest.approx(1.0, rel=1e-6)
    x = np.arange(64) - 32.0
    var = np.sum(img.sum(axis=0) * x**2) / img.sum()
    measured = FWHM_PER_SIGMA * np.sqrt(var)
    assert measured == pytest.approx(
        FWHM_PER_SIGMA * np.sqrt((fwhm / FWHM_PER_SIGMA) ** 2 + 2 / 12), abs=0.05
    )
    assert abs(measured - fwhm) < 1.0


def test_no_blur_reproduces_square_field():
    # exact: FWHM 0 at the lattice spacing returns the field unchanged
    lat = Lattice("square", 16, 16, 1.0)
    f = np.random.default_rng(1).standard_normal((16, 16))
    img, _ = instrument_view(f, lat.positions_nm, lat.box_nm, pixel_nm=1.0, fwhm_nm=0.0)
    np.testing.assert_allclose(img, f)


@pytest.mark.parametrize("seed", [2, 3, 4, 5])
def test_blurring_never_lowers_xi(seed):
    # exact: a periodic Gaussian PSF multiplies S(k) by |G(k)|^2 <= 1 (decreasing in |k|) and
    # leaves S(0), so S(k_min)/S(0) cannot rise and the Cooper-Freedman-Preston xi (Nucl. Phys.
    # B 210, 210, 1982) cannot drop as the FWHM grows (single fields may give nan at no blur,
    # when noise makes S(k_min) > S(0); once finite it stays finite)
    lat = Lattice("square", 48, 48, 1.0)
    f = oz_field(48, 4.0, seed)
    xis, ratios = [], []
    for fwhm in (0.0, 1.0, 2.0, 4.0, 8.0):
        img, _ = instrument_view(f, lat.positions_nm, lat.box_nm, pixel_nm=1.0, fwhm_nm=fwhm)
        xis.append(second_moment_length(img, lat.positions_nm, lat.box_nm))
        _, _, s = structure_factor(img, lat.positions_nm, lat.box_nm)
        ratios.append([s[0, 1] / s[0, 0], s[1, 0] / s[0, 0]])
    assert np.all(np.diff(np.array(ratios), axis=0) <= 1e-12)
    finite = np.isfinite(xis)
    assert np.all(np.diff(finite.astype(int)) >= 0)
    xs = np.array(xis)[finite]
    assert np.all(np.diff(xs) >= -1e-9)
    assert finite.sum() < 2 or xs[-1] > xs[0]


def test_noise_is_seeded():
    lat = Lattice("square", 8, 8, 1.0)
    f = np.zeros((8, 8))
    a, _ = instrument_view(
        f,
        lat.positions_nm,
        lat.box_nm,
        pixel_nm=1.0,
        fwhm_nm=1.0,
        noise=0.1,
        rng=np.random.default_rng(5),
    )
    b, _ = instrument_view(
        f,
        lat.positions_nm,
        lat.box_nm,
        pixel_nm=1.0,
        fwhm_nm=1.0,
        noise=0.1,
        rng=np.random.default_rng(5),
    )
    np.testing.assert_array_equal(a, b)
    # sample std of 64 N(0, 0.1) values: within 5 standard errors (0.1 / sqrt(2 * 63))
    assert abs(a.std(ddof=1) - 0.1) < 5 * 0.1 / np.sqrt(126)


def write_png(path, arr):
    iio.imwrite(path, arr)
    return path


def domain_image(n=96, seed=6):
    """8-bit image of smoothed-noise domains with a linear background ramp."""
    f = oz_field(n, 4.0, seed)
    gy, gx = np.indices(f.shape)
    g = np.tanh(3 * f / f.std()) + 0.01 * gx
    return np.clip(np.rint((g - g.min()) / np.ptp(g) * 255), 0, 255).astype(np.uint8)


def test_load_image_normalises_and_masks(tmp_path):
    img = domain_image()
    p = write_png(tmp_path / "a.png", img)
    mask = np.zeros_like(img)
    mask[:10, :10] = 255
    m = write_png(tmp_path / "m.png", mask)
    out, valid, pixel_nm = load_image(p, pixel_size="0.02 um", mask=m, background="plane")
    assert pixel_nm == pytest.approx(20.0)
    assert valid.sum() == img.size - 100 and np.all(out[:10, :10] == 0)
    assert np.max(np.abs(out[valid])) == pytest.approx(1.0)
    med, _, _ = load_image(p, pixel_size="20 nm", mask=m, background="plane",
                           threshold="median")
    assert np.median(med[valid]) == pytest.approx(0.0, abs=1e-12)
    rgb = write_png(tmp_path / "g.png", np.stack([img] * 3, -1))
    out2, _, _ = load_image(rgb, pixel_size="20 nm", mask=m, background="plane")
    np.testing.assert_allclose(out2, out)
    tifffile.imwrite(tmp_path / "a.tif", img.astype(np.float32))
    out3, _, _ = load_image(tmp_path / "a.tif", pixel_size="20 nm", mask=m, background="plane")
    np.testing.assert_allclose(out3, out, atol=1e-6)
    hp, _, _ = load_image(p, pixel_size="20 nm", background="highpass", highpass_length="400 nm")
    assert np.isfinite(hp).all()


def test_analyse_image_writes_outputs(tmp_path):
    p = write_png(tmp_path / "d.png", domain_image())
    res = analyse_image(p, pixel_size="5 nm", out_dir=tmp_path / "out", smoothing="5 nm")
    saved = json.loads((tmp_path / "out" / "image_analysis.json").read_text())
    assert saved == res
    for key in (
        "correlation_length_nm",
        "correlation_length_nm_err",
        "correlation_length_fit_nm",
        "mean_domain_area_nm2",
        "domain_count",
        "pixel_size_nm",
        "xi_error_method",
    ):
        assert res[key] is not None, key
    assert res["pixel_size_nm"] == 5.0 and res["domain_count"] >= 2
    assert 2 * 5.0 < res["correlation_length_nm"] < 96 * 5.0 / 2
    header = (tmp_path / "out" / "correlation.csv").read_text().splitlines()[0]
    assert header == "r_nm,C,pair_count"
    rows = (tmp_path / "out" / "domain_sizes.csv").read_text().splitlines()
    assert rows[0] == "domain_id,sign,area_nm2,equivalent_diameter_nm"
    assert len(rows) - 1 == res["domain_count"]
    areas = np.array([float(r.split(",")[2]) for r in rows[1:]])
    assert areas.sum() == pytest.approx(96 * 96 * 25.0)


@pytest.mark.parametrize(
    "make,kwargs,match",
    [
        (
            lambda d: write_png(
                d / "c.png",
                np.dstack(
                    [
                        np.zeros((16, 16), np.uint8),
                        np.full((16, 16), 9, np.uint8),
                        np.zeros((16, 16), np.uint8),
                    ]
                ),
            ),
            {},
            "colour",
        ),
        (lambda d: write_png(d / "k.png", np.full((16, 16), 7, np.uint8)), {}, "no contrast"),
        (lambda d: d / "missing.png", {}, "no such file"),
        (
            lambda d: write_png(d / "u.png", np.arange(256, dtype=np.uint8).reshape(16, 16)),
            {"pixel_size": "5 parsec/s"},
            "pixel_size",
        ),
        (
            lambda d: write_png(d / "u2.png", np.arange(256, dtype=np.uint8).reshape(16, 16)),
            {"pixel_size": "5 furlongs_of_nothing"},
            "pixel_size",
        ),
        (
            lambda d: (
                tifffile.imwrite(d / "n.tif", np.where(np.eye(16) > 0, np.nan, 1.0)),
                d / "n.tif",
            )[1],
            {},
            "NaN",
        ),
        (
            lambda d: (
                tifffile.imwrite(
                    d / "s.tif",
                    np.random.default_rng(0).random((5, 16, 16)).astype(np.float32),
                    photometric="minisblack",
                ),
                d / "s.tif",
            )[1],
            {},
            "2D greyscale",
        ),
        (
            lambda d: write_png(d / "t.png", np.arange(256, dtype=np.uint8).reshape(16, 16)),
            {"background": "wavelet"},
            "background",
        ),
    ],
)
def test_bad_images_raise_input_error(tmp_path, make, kwargs, match):
    path = make(tmp_path)
    kw = {"pixel_size": "5 nm", **kwargs}
    with pytest.raises(InputError, match=match) as info:
        load_image(path, **kw)
    assert "\n" not in str(info.value)


def two_level_image(n=128, bright=0.38, noise=20.0, seed=3):
    """8-bit image of bright discs (grey 180) on a dark film (grey 60) plus Gaussian noise;
    returns the image and the exact bright fraction of the construction."""
    rng = np.random.default_rng(seed)
    gy, gx = np.indices((n, n))
    up = np.zeros((n, n), dtype=bool)
    while up.mean() < bright:
        cx, cy, rad = rng.uniform(0, n), rng.uniform(0, n), rng.uniform(5, 12)
        up |= (gx - cx) ** 2 + (gy - cy) ** 2 < rad**2
    img = np.where(up, 180.0, 60.0) + rng.normal(0.0, noise, (n, n))
    return np.clip(np.rint(img), 0, 255).astype(np.uint8), float(up.mean())


def test_otsu_threshold_measures_the_bright_fraction(tmp_path):
    # exact: the bright fraction of the construction; two grey levels 6 noise widths apart are
    # misread on P(|z| > 3) = 0.27 % of the pixels at most (normal distribution), so 0.01
    img, truth = two_level_image()
    p = write_png(tmp_path / "b.png", img)
    res = analyse_image(p, pixel_size="5 nm", out_dir=tmp_path / "o", background="none")
    assert res["threshold_method"] == "otsu"
    assert res["up_area_fraction"] == pytest.approx(truth, abs=0.01)
    assert not res["warnings"]
    # the median threshold calls half of any film bright: the bias the default avoids (its
    # level lies inside the dark film's noise, which then breaks up into specks: a warning)
    with pytest.warns(ThinFilmWarning, match="smaller than 4 pixels"):
        med = analyse_image(p, pixel_size="5 nm", out_dir=tmp_path / "m", background="none",
                            threshold="median")
    assert med["up_area_fraction"] == pytest.approx(0.5, abs=0.01)


def test_pixel_noise_domains_warn_and_smoothing_removes_them(tmp_path):
    # noise of half the level spacing misreads P(z > 1) = 16 % of pixels (normal distribution):
    # thousands of one-pixel domains beside a few real ones
    img, _ = two_level_image(noise=60.0)
    p = write_png(tmp_path / "n.png", img)
    with pytest.warns(ThinFilmWarning, match="smaller than 4 pixels"):
        res = analyse_image(p, pixel_size="5 nm", out_dir=tmp_path / "o", background="none")
    assert res["warnings"] and res["small_domain_count"] > res["domain_count"] / 2
    with warnings.catch_warnings():
        warnings.simplefilter("error", ThinFilmWarning)
        smooth = analyse_image(p, pixel_size="5 nm", out_dir=tmp_path / "s", background="none",
                               smoothing="10 nm")
    assert not smooth["warnings"] and smooth["domain_count"] < res["domain_count"] / 10


def test_level_outside_the_range_is_refused(tmp_path, capsys):
    from thinfilm.cli import main

    p = write_png(tmp_path / "d.png", domain_image())
    with pytest.raises(InputError, match=r"level 2\.0 is outside -1 \.\. 1"):
        analyse_image(p, pixel_size="5 nm", out_dir=tmp_path / "o", level=2)
    assert main(["image", str(p), "--pixel-size", "5 nm", "-o", str(tmp_path / "c"),
                 "--level", "2"]) == 2
    assert "--level 2.0 is outside" in capsys.readouterr().err


def test_corrupt_image_is_not_readable(tmp_path):
    p = write_png(tmp_path / "d.png", domain_image())
    p.write_bytes(p.read_bytes()[:60])  # a truncated PNG
    with pytest.raises(InputError, match="not a readable image") as info:
        load_image(p, pixel_size="5 nm")
    assert "plugin" not in str(info.value) and "\n" not in str(info.value)


def test_figure_with_outlines_and_fit(tmp_path):
    from thinfilm.render.image_plot import analyse_image_with_figure

    p = write_png(tmp_path / "d.png", domain_image())
    res = analyse_image_with_figure(p, pixel_size="5 nm", out_dir=tmp_path / "o",
                                    smoothing="5 nm")
    assert res == json.loads((tmp_path / "o" / "image_analysis.json").read_text())
    png = tmp_path / "o" / "image_analysis.png"
    assert png.is_file() and png.stat().st_size > 10_000
    assert "## image_analysis.png" in (tmp_path / "o" / "captions.md").read_text()
