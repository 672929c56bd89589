"""Stream spin snapshots (over time or over a temperature sweep) into an MP4 or GIF movie."""

import os
from collections.abc import Mapping
from pathlib import Path
from typing import NamedTuple

import numpy as np

from thinfilm.analysis.chirality import wall_label
from thinfilm.input.errors import InputError
from thinfilm.render.frames import (
    COLOURS,
    colour_frame,
    draw_label,
    draw_scale_bar,
    grey_frame,
    site_index_map,
)
from thinfilm.render.rundir import iter_snapshots, load_snapshot, read_json

__all__ = ["write_movie", "MovieInfo"]

SHAPES = ("square", "triangular", "honeycomb")
_MIN_WIDTH_PX = 256  # default smallest map width, so burned-in text stays legible
_GAP_PX = 4  # black gap between the map and the instrument view


class MovieInfo(NamedTuple):
    """What :func:`write_movie` wrote: path, frame count, frame size (px) and rate (1/s)."""

    path: Path
    n_frames: int
    width: int
    height: int
    fps: float


def _as_frame(item, spacing_nm):
    if isinstance(item, Mapping):
        if "spins" not in item:
            raise InputError(
                "Each frame given as a mapping needs a 'spins' array of shape (ny, nx, 3)."
            )
        fr = dict(item)
        fr["spins"] = np.asarray(fr["spins"], dtype=np.float64)
    else:
        fr = {"spins": np.asarray(item, dtype=np.float64)}
    s = fr["spins"]
    if s.ndim != 3 or s.shape[2] != 3:
        raise InputError(f"Frame spins must have shape (ny, nx, 3); got {s.shape}.")
    fr.setdefault("shape", "square")
    fr.setdefault("periodic", True)
    if fr["shape"] not in SHAPES:
        raise InputError(
            f"Frame lattice shape must be one of {', '.join(SHAPES)}; got {fr['shape']!r}."
        )
    if "box_nm" not in fr:
        if fr["shape"] != "square":
            raise InputError(f"A {fr['shape']} frame needs 'positions_nm' and 'box_nm'.")
        a = float(fr.get("spacing_nm", spacing_nm))
        fr["box_nm"] = np.array([s.shape[1] * a, s.shape[0] * a])
    return fr


class _Painter:
    """Fixed geometry of one movie: turns a frame dict into an even-sized RGB array."""

    def __init__(self, first, *, colour, size, axis, scale_bar_nm, instrument, labels):
        s = first["spins"]
        self.grid = s.shape
        self.shape, self.periodic = first["shape"], bool(first["periodic"])
        self.box = np.asarray(first["box_nm"], dtype=np.float64)
        ny, nx = s.shape[:2]
        self.colour, self.axis, self.labels = colour, axis, labels
        self.scale_bar_nm = scale_bar_nm
        if size is not None and not (isinstance(size, (int, np.integer)) and size > 0):
            raise InputError(
                f"size must be a positive whole number of pixels (map width); got {size!r}."
            )
        self.index_map = None
        if self.shape == "square":
            k = max(1, round(size / nx)) if size else max(1, -(-_MIN_WIDTH_PX // nx))
            self.pixel_nm = self.box[0] / nx / k
        else:
            if "positions_nm" not in first:
                raise InputError(
                    f"A {self.shape} snapshot needs 'positions_nm' to be drawn at true positions."
                )
            self.pos = np.asarray(first["positions_nm"], dtype=np.float64)
            self.pixel_nm = (
                self.box[0] / size
                if size
                else min(0.5 * self.box[0] / nx, self.box[0] / _MIN_WIDTH_PX)
            )
            self.index_map = site_index_map(
                self.pos, self.box, self.pixel_nm, periodic=self.periodic
            )
        self.instrument = None
        if instrument is not None:
            self._setup_instrument(first, instrument)

    def _setup_instrument(self, first, inst):
        if not isinstance(inst, Mapping) or "fwhm_nm" not in inst:
            raise InputError(
                "instrument must be a dict with 'fwhm_nm' (resolution, nm) and optionally "
                "'pixel_nm' (nm), 'noise' (std of added noise, m_z units) and 'seed'; "
                f"got {inst!r}."
            )
        fwhm = float(inst["fwhm_nm"])
        pix = float(inst.get("pixel_nm", fwhm / 2))
        noise = float(inst.get("noise", 0.0))
        if not (fwhm > 0 and pix > 0 and noise >= 0):
            raise InputError(
                f"instrument needs fwhm_nm > 0, pixel_nm > 0 and noise >= 0; got {dict(inst)!r}."
            )
        if "positions_nm" in first:
            pos = np.asarray(first["positions_nm"], dtype=np.float64)
        else:
            ny, nx = self.grid[:2]
            a = self.box[0] / nx
            i, j = np.meshgrid(np.arange(ny), np.arange(nx), indexing="ij")
            pos = np.stack([j * a, i * a], axis=-1).astype(np.float64)
        self.inst_pos = pos
        self.instrument = {
            "fwhm_nm": fwhm,
            "pixel_nm": pix,
            "noise": noise,
            "rng": np.random.default_rng(int(inst.get("seed", 0))),
        }
        self.inst_map = None

    def _instrument_image(self, field):
        p = self.instrument
        try:
            from thinfilm.analysis.instrument import instrument_view
        except ImportError:
            instrument_view = None
        if instrument_view is not None:
            img, _ = instrument_view(
                field,
                self.inst_pos,
                self.box,
                pixel_nm=p["pixel_nm"],
                fwhm_nm=p["fwhm_nm"],
                noise=p["noise"],
                rng=p["rng"],
                periodic=self.periodic,
            )
            return np.asarray(img, dtype=np.float64)
        # fallback until thinfilm.imaging exists: nearest-site raster, Gaussian blur, noise.
        from scipy.ndimage import gaussian_filter

        if self.inst_map is None:
            self.inst_map = site_index_map(
                self.inst_pos, self.box, p["pixel_nm"], periodic=self.periodic
            )
        img = field.ravel()[self.inst_map]
        # Gaussian FWHM = 2 sqrt(2 ln 2) sigma (definition of the normal distribution's FWHM)
        sigma_px = p["fwhm_nm"] / (2.0 * np.sqrt(2.0 * np.log(2.0))) / p["pixel_nm"]
        img = gaussian_filter(img, sigma_px, mode="wrap" if self.periodic else "nearest")
        if p["noise"] > 0:
            img = img + p["rng"].normal(0.0, p["noise"], img.shape)
        return img

    def paint(self, fr):
        s = fr["spins"]
        if s.shape != self.grid:
            src = fr.get("source", "a frame")
            raise InputError(
                f"{src}: spins have shape {s.shape} but the first frame had {self.grid}; "
                "all frames of one movie must come from the same lattice."
            )
        img = colour_frame(
            s,
            colour=self.colour,
            shape=self.shape,
            box_nm=self.box,
            pixel_nm=self.pixel_nm if self.shape == "square" else None,
            index_map=self.index_map,
            axis=self.axis,
        )
        if self.scale_bar_nm is not False:
            draw_scale_bar(img, self.pixel_nm, length_nm=self.scale_bar_nm)
        if self.labels:
            th = max(10, img.shape[0] // 24)
            y = max(4, th // 2)  # room above the first line for its box and accents
            extra = [wall_label(s, self.periodic)] if self.colour == "angle" else []
            for text in [*_frame_text(fr), *[e for e in extra if e]]:
                _, h = draw_label(img, text, (max(2, th // 4), y), height_px=th)
                y += h + 1
        if self.instrument is not None:
            field = s @ (np.asarray(self.axis, float) / np.linalg.norm(self.axis))
            inst = grey_frame(self._instrument_image(field))
            h = img.shape[0]
            w = max(1, int(round(inst.shape[1] * h / inst.shape[0])))
            rows = np.minimum((np.arange(h) * inst.shape[0]) // h, inst.shape[0] - 1)
            cols = np.minimum((np.arange(w) * inst.shape[1]) // w, inst.shape[1] - 1)
            inst = np.ascontiguousarray(inst[rows][:, cols])
            if self.scale_bar_nm is not False:
                draw_scale_bar(inst, self.box[0] / w, length_nm=self.scale_bar_nm)
            th = max(10, h // 24)
            draw_label(
                inst,
                f"FWHM {self.instrument['fwhm_nm']:g} nm",
                (max(2, th // 4), max(2, th // 4)),
                height_px=th,
            )
            img = np.concatenate([img, np.zeros((h, _GAP_PX, 3), np.uint8), inst], axis=1)
        # H.264 with yuv420p needs even width and height: pad one black row/column if odd
        ph, pw = img.shape[0] % 2, img.shape[1] % 2
        if ph or pw:
            img = np.pad(img, ((0, ph), (0, pw), (0, 0)))
        return np.ascontiguousarray(img)


def _manifest_instrument(manifest, where):
    ins = manifest.get("instrument") or {}
    if "resolution_nm" not in ins:
        raise InputError(
            f"instrument=True takes the instrument from {where}/manifest.json, but that has no "
            "instrument.resolution_nm; pass instrument={'fwhm_nm': ..., 'pixel_nm': ...} instead."
        )
    out = {"fwhm_nm": ins["resolution_nm"], "noise": ins.get("noise", 0.0)}
    if "pixel_nm" in ins:
        out["pixel_nm"] = ins["pixel_nm"]
    return out


def _frame_text(fr):
    out = []
    if fr.get("time_ps") is not None:
        out.append(f"t = {float(fr['time_ps']):.2f} ps")
    if fr.get("temperature_K") is not None:
        out.append(f"T = {float(fr['temperature_K']):.1f} K")
    if fr.get("label"):
        out.append(str(fr["label"]))
    return out


def _encoder(tmp, width, height, fps, gif, quality):
    import imageio_ffmpeg

    if gif:
        # per-frame palette (ffmpeg palettegen stats_mode=single + paletteuse new=1) keeps the
        # GIF encoder streaming instead of buffering every frame for one global palette
        vf = "split[a][b];[a]palettegen=stats_mode=single[p];[b][p]paletteuse=new=1"
        kw = dict(codec="gif", pix_fmt_out="pal8", quality=None, output_params=["-vf", vf])
    else:
        kw = dict(codec="libx264", pix_fmt_out="yuv420p", quality=quality)
    gen = imageio_ffmpeg.write_frames(
        str(tmp),
        (width, height),
        fps=float(fps),
        macro_block_size=2,
        ffmpeg_log_level="error",
        **kw,
    )
    gen.send(None)
    return gen


def write_movie(
    run_dir_or_frames,
    out_path,
    *,
    fps=20,
    colour="mz",
    scale_bar_nm=None,
    size=None,
    instrument=None,
    gif=False,
    source="auto",
    lattice_size=None,
    axis=None,
    spacing_nm=1.0,
    labels=True,
    quality=7,
    progress=None,
):
    """Write a movie of spin states, one frame per snapshot, streamed to the encoder.

    Parameters
    ----------
    run_dir_or_frames : path or iterable
        A run folder (see :func:`iter_snapshots` for which files are used), or an iterable of
        frames: arrays of shape (ny, nx, 3) (square lattice, spacing ``spacing_nm``) or dicts
        with ``spins`` and optionally ``positions_nm``, ``box_nm`` (nm), ``shape``,
        ``periodic``, ``time_ps``, ``temperature_K``, ``note`` (a line of text burned in below
        the time and temperature). Iterables are consumed lazily.
    out_path : path
        Output file, ``.mp4`` (H.264, yuv420p) or, with ``gif=True``, ``.gif``.
    fps : float
        Frames per second of the movie.
    colour : {"mz", "angle"}
        Order-axis component on a diverging map, or in-plane angle on a cyclic map
        (see :func:`thinfilm.render.frames.colour_frame`).
    scale_bar_nm : float or False, optional
        Scale bar length in nm; None picks a round length near 1/5 of the width; False: none.
    size : int, optional
        Map width in pixels (square lattices: rounded to a whole number of pixels per site).
        Default: one pixel per site (square) or half a column pitch, at least 256 px wide.
    instrument : dict or True, optional
        ``{"fwhm_nm": .., "pixel_nm": .., "noise": .., "seed": ..}``: add a grey-scale
        simulated instrument image of the order component beside the map. ``True``: take
        ``resolution_nm``, ``pixel_nm`` and ``noise`` from ``manifest["instrument"]``.
    gif : bool
        Write an animated GIF instead of MP4.
    source : {"auto", "snapshots", "sweep"}
        Which frames of a run folder to use.
    lattice_size : int, optional
        Sweep size L (default: the largest).
    axis : sequence of 3 floats, optional
        Order axis for ``colour="mz"`` and the instrument view. Default: the anisotropy
        axis ``manifest["scenario"]["material"]["axis"]`` of a run folder, else z.
    spacing_nm : float
        Lattice spacing (nm) of frames given as bare arrays.
    labels : bool
        Burn time (ps) and temperature (K) into each frame when known.
    quality : float
        H.264 quality 1..10 (imageio-ffmpeg scale: CRF = int(51 (1 - quality / 10)), 7 = CRF 15).
    progress : callable, optional
        Called with the number of frames written so far after each frame.

    Returns
    -------
    MovieInfo
    """
    out_path = Path(out_path)
    want = ".gif" if gif else ".mp4"
    if out_path.suffix.lower() != want:
        raise InputError(
            f"Movie file {out_path} must end in {want} when gif={bool(gif)}; "
            "MP4 (H.264) files end in .mp4 and animated GIFs (gif=True) in .gif."
        )
    if colour not in COLOURS:
        raise InputError(f"colour must be one of {', '.join(COLOURS)}; got {colour!r}.")
    try:
        fps = float(fps)
    except (TypeError, ValueError):
        fps = float("nan")
    if not (0 < fps <= 240):
        raise InputError(
            f"fps must be a number of frames per second between 0 and 240; got {fps!r}."
        )
    if not gif and not (isinstance(quality, (int, float)) and 1 <= quality <= 10):
        raise InputError(
            f"quality must be a number from 1 (smallest file) to 10 (best); got {quality!r}."
        )
    if not out_path.parent.is_dir():
        raise InputError(
            f"Folder {out_path.parent} for the movie file does not exist; create it first."
        )

    manifest = {}
    if isinstance(run_dir_or_frames, (str, os.PathLike)):
        paths = iter_snapshots(run_dir_or_frames, source=source, lattice_size=lattice_size)
        manifest = read_json(Path(run_dir_or_frames) / "manifest.json") or {}
        frames = (load_snapshot(p) for p in paths)
    else:
        frames = iter(run_dir_or_frames)
    if axis is None:
        axis = ((manifest.get("scenario") or {}).get("material") or {}).get("axis", (0, 0, 1))
    axis = np.asarray(axis, dtype=np.float64)
    if axis.shape != (3,) or not np.linalg.norm(axis) > 0:
        raise InputError(f"axis must be a non-zero 3-vector (order axis); got {axis.tolist()!r}.")
    if instrument is True:
        instrument = _manifest_instrument(manifest, run_dir_or_frames)
    frames = (_as_frame(f, spacing_nm) for f in frames)
    try:
        first = next(frames)
    except StopIteration:
        raise InputError("No frames to write: the frame sequence is empty.") from None

    painter = _Painter(
        first,
        colour=colour,
        size=size,
        axis=axis,
        scale_bar_nm=scale_bar_nm,
        instrument=instrument,
        labels=labels,
    )
    img = painter.paint(first)
    height, width = img.shape[:2]
    tmp = out_path.with_name(f".{out_path.stem}.{os.getpid()}.tmp{want}")
    n = 0
    gen = None
    try:
        gen = _encoder(tmp, width, height, fps, gif, quality)
        while img is not None:
            gen.send(img)
            n += 1
            if progress is not None:
                progress(n)
            nxt = next(frames, None)
            img = None if nxt is None else painter.paint(nxt)
        gen.close()
        gen = None
        os.replace(tmp, out_path)
    finally:
        if gen is not None:
            gen.close()
        if tmp.exists():
            tmp.unlink()
    return MovieInfo(out_path, n, width, height, fps)
