"""Image series against temperature: Ornstein-Zernike fields of known xi, stripes, bad inputs."""

import math

import numpy as np
import pytest
import tifffile

from thinfilm.analysis.image_series import (
    analyse_series,
    index_from_folder,
    read_index,
    wall_length_per_area,
)
from thinfilm.cli import main
from thinfilm.input.errors import InputError
from thinfilm.render.series_plot import write_image_series

PIX = 2.0  # nm


def oz_field(n, xi, seed):
    """Gaussian field with the 2D Ornstein-Zernike spectrum 1/(khat^2 + xi^-2) (Ornstein and
    Zernike 1914) on a periodic n x n grid; xi in pixels."""
    k = 2 * np.pi * np.fft.fftfreq(n)
    kx, ky = np.meshgrid(k, k)
    spec = 1.0 / ((2 * np.sin(kx / 2)) ** 2 + (2 * np.sin(ky / 2)) ** 2 + xi**-2)
    w = np.random.default_rng(seed).standard_normal((n, n))
    return np.fft.ifft2(np.fft.fft2(w) * np.sqrt(spec)).real


def _series(folder, xis, temps=(250.0, 270.0, 290.0), pixels=None, n=160):
    lines = ["file,temperature_K,pixel_size_nm"]
    for k, (t, xi) in enumerate(zip(temps, xis, strict=True)):
        name = f"img_{t:g}K.tif"
        tifffile.imwrite(folder / name, oz_field(n, xi, 10 + k).astype(np.float32))
        lines.append(f"{name},{t:g},{PIX if pixels is None else pixels[k]:g}")
    (folder / "index.csv").write_text("\n".join(lines) + "\n")
    return folder / "index.csv"


def test_series_of_oz_fields_recovers_xi_against_temperature(tmp_path):
    """xi = 2.5, 5, 10 px (5, 10, 20 nm): each second-moment estimate lies within 3 of its own
    quadrant-jackknife errors of the true length (the estimator's stated error), and the series
    rises with temperature; no period is claimed for an OZ field (no peak in S(k))."""
    xis = (2.5, 5.0, 10.0)
    idx = _series(tmp_path, xis)
    res = write_image_series(read_index(idx), tmp_path / "out")
    tab = res["table"]
    got = np.array(tab["correlation_length_nm"])
    err = np.array(tab["correlation_length_nm_err"])
    true = PIX * np.array(xis)
    assert np.all(np.abs(got - true) <= 3 * err), (got, err, true)
    assert np.all(np.diff(got) > 0)
    assert np.all(np.isnan(tab["period_nm"]))
    assert np.all(np.array(tab["stripe_order"]) < 0.2)
    for name in ("image_series.csv", "image_series.json", "image_series.png", "captions.md"):
        assert (tmp_path / "out" / name).is_file()
    assert (tmp_path / "out" / "images" / "img_250K" / "image_analysis.json").is_file()
    head = (tmp_path / "out" / "image_series.csv").read_text().splitlines()[0].split(",")
    assert head[0] == "temperature_K" and "wall_length_per_area_per_um_err" in head


def test_stripes_give_period_order_and_wall_length(tmp_path):
    """Straight stripes of period 16 px: period 32 nm exactly (commensurate), order Q = 1, and
    2 walls per period of length L: wall length per area 2 / (16 px) x pi/4 (the Crofton factor
    for random orientation underestimates axis-aligned walls by exactly pi/4)."""
    n = 128
    x = np.arange(n)
    img = np.tile(np.where((x // 8) % 2 == 0, 1.0, -1.0), (n, 1)).astype(np.float32)
    for t in (100, 200):
        tifffile.imwrite(tmp_path / f"s_{t}K.tif", img)
    rows = index_from_folder(tmp_path, "s_{T}K.tif", pixel_size="2 nm")
    res = analyse_series(rows, tmp_path / "out", background="none")
    tab = res["table"]
    assert tab["temperature_K"] == [100.0, 200.0]
    assert tab["period_nm"][0] == pytest.approx(32.0, rel=1e-9)
    assert tab["stripe_order"][0] == pytest.approx(1.0, abs=1e-9)
    walls = 15 * n  # pixel pairs: 15 walls inside the open image, each n pixels long
    expect = walls * PIX * math.pi / 4 / ((n * PIX) ** 2) * 1e3
    assert tab["wall_length_per_area_per_um"][0] == pytest.approx(expect, rel=1e-9)


def test_wall_length_of_a_checkerboard_quadrant():
    s = np.ones((4, 4), int)
    s[:, 2:] = -1
    v = np.ones((4, 4), bool)
    # one vertical wall of 4 pixels of 1 nm in 16 nm^2: 4 x pi/4 / 16 per nm = 1e3 x that per um
    assert wall_length_per_area(s, v, 1.0) == pytest.approx(4 * math.pi / 4 / 16 * 1e3)


def test_bad_inputs_give_one_paragraph_errors(tmp_path):
    idx = _series(tmp_path, (3, 4, 5), n=32)
    text = idx.read_text().replace("img_270K.tif", "img_275K.tif")
    idx.write_text(text)
    with pytest.raises(InputError, match="img_275K.tif' is listed in the index but missing"):
        read_index(idx)
    idx = _series(tmp_path, (3, 4, 5), pixels=(2, 2, 2.5), n=32)
    with pytest.raises(InputError, match="different pixel sizes"):
        read_index(idx)
    idx.write_text("file,temperature,pixel_size_nm\nimg_250K.tif,250,2\n")
    with pytest.raises(InputError, match="no unit"):
        read_index(idx)
    with pytest.raises(InputError, match=r"must contain \{T\}"):
        index_from_folder(tmp_path, "img.tif", pixel_size="2 nm")


def test_cli_image_series_reports_missing_image_in_one_paragraph(tmp_path, capsys):
    (tmp_path / "index.csv").write_text("file,temperature_K,pixel_size_nm\nnone.tif,250,2\n")
    assert main(["image-series", str(tmp_path / "index.csv"), "-o", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "missing" in err
