"""Tests of thinfilm.render.movie: movies of tiny fake run folders read back with imageio."""

import json
import subprocess

import imageio.v3 as iio3
import imageio_ffmpeg
import numpy as np
import pytest
from imageio_ffmpeg._parsing import parse_ffmpeg_header

from thinfilm.input.errors import InputError
from thinfilm.model.lattice import Lattice
from thinfilm.render.movie import write_movie


def save_snapshot(path, spins, lat, *, time_ps=0.0, temperature_K=10.0):
    path.parent.mkdir(parents=True, exist_ok=True)
    np.savez(
        path,
        spins=spins,
        positions_nm=lat.positions_nm,
        time_ps=time_ps,
        temperature_K=temperature_K,
        field_T=np.zeros(3),
        spacing_nm=lat.spacing_nm,
        box_nm=np.array(lat.box_nm),
        shape=lat.shape,
        periodic=lat.periodic,
    )


def fake_dynamics_run(root, lat, n=5):
    """Run folder in which a down domain grows from the left edge, one column per frame."""
    (root / "snapshots").mkdir(parents=True)
    (root / "manifest.json").write_text(json.dumps({"kind": "dynamics", "lattice": lat.describe()}))
    for k in range(n):
        s = np.zeros((lat.ny, lat.nx, 3))
        s[..., 2] = 1.0
        s[:, : 2 * k, 2] = -1.0
        save_snapshot(root / "snapshots" / f"snap_{k:06d}.npz", s, lat, time_ps=0.5 * k)
    return root


def read_mp4(path):
    """(metadata, list of RGB frames) decoded by the ffmpeg that imageio-ffmpeg ships, the
    reference reader. Both ffmpeg calls are plain subprocess.run calls, which close their
    pipes: the streaming reader's generator leaves pipes to the garbage collector when it is
    closed early, a ResourceWarning (an error here) that appears only now and then."""
    exe = imageio_ffmpeg.get_ffmpeg_exe()
    probe = subprocess.run([exe, "-hide_banner", "-i", str(path)], capture_output=True,
                           text=True)  # exits 1 (no output file named); the header is on stderr
    meta = parse_ffmpeg_header(probe.stderr)
    w, h = meta["size"]
    raw = subprocess.run([exe, "-v", "error", "-i", str(path), "-f", "rawvideo", "-pix_fmt",
                          "rgb24", "-"], capture_output=True, check=True).stdout
    frames = list(np.frombuffer(raw, np.uint8).reshape(-1, h, w, 3))
    return meta, frames


def test_movie_of_short_run(tmp_path):
    lat = Lattice("square", 16, 16, 0.5)
    run = fake_dynamics_run(tmp_path / "run", lat)
    info = write_movie(run, tmp_path / "m.mp4", fps=12)
    meta, frames = read_mp4(tmp_path / "m.mp4")
    assert info.n_frames == len(frames) == 5
    assert meta["fps"] == pytest.approx(12.0)
    # 16 sites upscaled to the 256 px default width: 16 px per site
    assert frames[0].shape == (256, 256, 3) == (info.height, info.width, 3)
    first, last = frames[0].astype(int), frames[-1].astype(int)
    # column 3 of sites (pixels 48..63) flipped up -> down; column 12 never changed
    assert first[128, 56, 0] > first[128, 56, 2] + 60  # red
    assert last[128, 56, 2] > last[128, 56, 0] + 60  # blue
    assert np.abs(first[128, 200] - last[128, 200]).max() < 20
    assert not list(tmp_path.glob("*.tmp*"))  # temp file renamed away


def test_gif_frames_and_duration(tmp_path):
    lat = Lattice("square", 8, 8, 1.0)
    run = fake_dynamics_run(tmp_path / "run", lat, n=4)
    info = write_movie(run, tmp_path / "m.gif", fps=10, gif=True, size=64)
    frames = iio3.imread(tmp_path / "m.gif", index=None)
    assert frames.shape[:3] == (4, 64, 64) == (info.n_frames, info.height, info.width)
    # GIF delays are stored in 1/100 s; Pillow reports them in ms
    assert iio3.immeta(tmp_path / "m.gif")["duration"] == pytest.approx(100)
    assert not np.array_equal(frames[0], frames[-1])


def test_sweep_movie_sorted_by_temperature(tmp_path):
    lat = Lattice("square", 8, 8, 1.0)
    run = tmp_path / "sweep"
    # name order (T10 before T2) differs from temperature order
    for t, mz in ((10.0, -1.0), (2.0, 1.0), (5.0, 0.0)):
        s = np.zeros((8, 8, 3))
        s[..., 2] = mz
        s[..., 0] = 1.0 - abs(mz)
        save_snapshot(run / "points" / f"L8_T{t:.3f}K" / "final.npz", s, lat, temperature_K=t)
    s4 = np.zeros((4, 4, 3))
    s4[..., 2] = 1
    save_snapshot(run / "points" / "L4_T1.000K" / "final.npz", s4, Lattice("square", 4, 4, 1.0))
    write_movie(run, tmp_path / "s.mp4")
    _, frames = read_mp4(tmp_path / "s.mp4")
    assert len(frames) == 3  # only the largest size, L = 8
    assert frames[0][128, 128, 0] > frames[0][128, 128, 2] + 60  # T = 2 K, up, red
    assert frames[-1][128, 128, 2] > frames[-1][128, 128, 0] + 60  # T = 10 K, down, blue
    write_movie(run, tmp_path / "s4.mp4", lattice_size=4)
    assert len(read_mp4(tmp_path / "s4.mp4")[1]) == 1


def test_honeycomb_movie_even_size_and_instrument_panel(tmp_path):
    lat = Lattice("honeycomb", 10, 10, 1.0)
    run = fake_dynamics_run(tmp_path / "run", lat, n=3)
    info = write_movie(run, tmp_path / "h.mp4", size=101, colour="angle")
    assert info.width % 2 == 0 and info.height % 2 == 0
    assert info.width == 102  # 101 px map padded to even
    both = write_movie(
        run,
        tmp_path / "i.mp4",
        size=100,
        instrument={"fwhm_nm": 2.0, "pixel_nm": 0.5, "noise": 0.05, "seed": 1},
    )
    assert both.width > 2 * 100 and both.width % 2 == 0 and both.height % 2 == 0
    _, frames = read_mp4(tmp_path / "i.mp4")
    assert frames[0].shape == (both.height, both.width, 3)


def test_frames_from_iterable_are_streamed(tmp_path):
    produced = []

    def frames():
        for k in range(6):
            produced.append(k)
            s = np.zeros((32, 32, 3))
            s[..., 2] = np.cos(0.3 * k)
            s[..., 0] = np.sin(0.3 * k)
            yield s

    seen = []
    info = write_movie(
        frames(), tmp_path / "g.mp4", progress=lambda n: seen.append((n, len(produced)))
    )
    assert info.n_frames == 6
    # when frame n is written, at most one frame beyond it has been generated
    assert all(p <= n + 1 for n, p in seen)


def test_bad_inputs(tmp_path):
    lat = Lattice("square", 4, 4, 1.0)
    with pytest.raises(InputError, match="does not exist"):
        write_movie(tmp_path / "nope", tmp_path / "a.mp4")
    (tmp_path / "empty").mkdir()
    with pytest.raises(InputError, match="neither snapshots"):
        write_movie(tmp_path / "empty", tmp_path / "a.mp4")
    run = fake_dynamics_run(tmp_path / "run", lat, n=2)
    with pytest.raises(InputError, match=r"\.gif"):
        write_movie(run, tmp_path / "a.mp4", gif=True)
    with pytest.raises(InputError, match="fps"):
        write_movie(run, tmp_path / "a.mp4", fps=0)
    with pytest.raises(InputError, match="colour"):
        write_movie(run, tmp_path / "a.mp4", colour="rainbow")
    with pytest.raises(InputError, match="instrument"):
        write_movie(run, tmp_path / "a.mp4", instrument={"noise": 0.1})
    (run / "snapshots" / "snap_000009.npz").write_bytes(b"not a zip")
    with pytest.raises(InputError, match="snap_000009.npz"):
        write_movie(run, tmp_path / "a.mp4")
    np.savez(run / "snapshots" / "snap_000009.npz", other=np.zeros(3))
    with pytest.raises(InputError, match="no 'spins'"):
        write_movie(run, tmp_path / "a.mp4")
    save_snapshot(
        run / "snapshots" / "snap_000009.npz", np.zeros((2, 2, 3)), Lattice("square", 2, 2, 1.0)
    )
    with pytest.raises(InputError, match="same lattice"):
        write_movie(run, tmp_path / "a.mp4")
    assert not (tmp_path / "a.mp4").exists()
    assert not list(tmp_path.glob(".*tmp*"))  # no temp file left behind after a failure


def test_order_axis_and_instrument_from_manifest(tmp_path):
    lat = Lattice("square", 8, 8, 1.0)
    run = tmp_path / "run"
    s = np.zeros((8, 8, 3))
    s[..., 0] = 1.0  # in-plane order along +x
    save_snapshot(run / "snapshots" / "snap_000000.npz", s, lat)
    manifest = {"kind": "dynamics", "scenario": {"material": {"axis": [1.0, 0.0, 0.0]}}}
    (run / "manifest.json").write_text(json.dumps(manifest))
    write_movie(run, tmp_path / "x.mp4")
    frame = read_mp4(tmp_path / "x.mp4")[1][0].astype(int)
    assert frame[128, 128, 0] > frame[128, 128, 2] + 60  # +1 along the order axis: red
    with pytest.raises(InputError, match="resolution_nm"):
        write_movie(run, tmp_path / "y.mp4", instrument=True)
    manifest["instrument"] = {"resolution_nm": 2.0, "pixel_nm": 1.0, "noise": 0.0}
    (run / "manifest.json").write_text(json.dumps(manifest))
    info = write_movie(run, tmp_path / "y.mp4", instrument=True)
    assert info.width > 2 * info.height  # map + gap + instrument panel side by side
    with pytest.raises(InputError, match="axis"):
        write_movie(run, tmp_path / "z.mp4", axis=(0, 0, 0))


def test_monte_carlo_frames_keep_their_sign(tmp_path):
    """A frame whose film reversed (as a cluster move does) is shown as -S and says so."""
    from thinfilm.render.movie import _continuous_sign

    up = np.zeros((8, 8, 3))
    up[..., 2] = 1.0
    up[0, :4, 2] = -1.0
    noise = np.random.default_rng(0).choice([-1.0, 1.0], (8, 8))
    disordered = np.zeros((8, 8, 3))
    disordered[..., 2] = noise
    frames = [{"spins": up}, {"spins": -up}, {"spins": up}, {"spins": disordered}]
    out = list(_continuous_sign(frames, (0, 0, 1)))
    assert [bool(f.get("reversed")) for f in out] == [False, True, False,
                                                      bool(np.vdot(up[..., 2], noise) < -6.4)]
    assert all(f["spins"][..., 2].mean() > 0.8 for f in out[:3])
