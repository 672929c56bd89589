"""Stream spin snapshots (over time or over a temperature sweep) into an MP4 or GIF movie."""

import os
from collections.abc import Mapping
from pathlib import Path
from typing import NamedTuple

import numpy as np

from thinfilm.input.errors import InputError
from thinfilm.render.frames import COLOURS
from thinfilm.render.painter import Painter
from thinfilm.render.rundir import iter_snapshots, load_snapshot, read_json

__all__ = ["write_movie", "MovieInfo"]

SHAPES = ("square", "triangular", "honeycomb")


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


REVERSE_OVERLAP = 0.1


def _continuous_sign(frames, axis):
    """Frames with the sign of the picture kept from frame to frame: a frame whose order-axis
    field overlaps the previous shown frame negatively (normalised overlap sum_i f_prev,i f_i /
    (|f_prev| |f|) below -REVERSE_OVERLAP: the net magnetisation changed sign, as after a cluster
    move that reverses the film) is shown as -S, the state of the same energy in zero field, and
    marked ``reversed``. Uncorrelated frames (overlap ~ 1/sqrt(N)) are left as they are."""
    n = np.asarray(axis, dtype=np.float64) / np.linalg.norm(axis)
    prev = None
    for fr in frames:
        f = fr["spins"] @ n
        norm = float(np.linalg.norm(prev) * np.linalg.norm(f)) if prev is not None else 0.0
        if (prev is not None and prev.shape == f.shape and norm > 0
                and float(np.vdot(prev, f)) < -REVERSE_OVERLAP * norm):
            fr = dict(fr, spins=-fr["spins"], reversed=True)
            f = -f
        prev = f
        yield fr


def _with_in_plane(fr):
    if fr.get("components") == "axis":
        raise InputError(f"{fr.get('source', 'a snapshot')}: keeps only the order-axis component "
                         f"of the spins (a heating sequence's frames), so it has no in-plane "
                         f"angle; use colour='mz'")
    return fr


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
    continuous_sign=None,
    grain_boundaries=False,
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
    continuous_sign : bool, optional
        Keep the picture's sign from frame to frame: a frame whose order component overlaps
        the previous one negatively (a cluster move or an independent sample reversed the
        film) is shown as -S and labelled "shown reversed (-S)". Only in zero field, where -S
        has the same energy. Default: on for Monte Carlo frames (a sweep or a heating
        sequence) in zero field, off for dynamics.
    grain_boundaries : bool
        Darken the sites at grain boundaries (a run folder with ``grains.npz``, written by a
        heating sequence of a film with grains).

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
    monte_carlo = False
    grain_id = None
    if isinstance(run_dir_or_frames, (str, os.PathLike)):
        paths = iter_snapshots(run_dir_or_frames, source=source, lattice_size=lattice_size)
        manifest = read_json(Path(run_dir_or_frames) / "manifest.json") or {}
        kind = manifest.get("kind")
        sweep_frames = bool(paths) and paths[0].name == "final.npz"
        monte_carlo = kind == "sequence" or (sweep_frames and manifest.get("method") != "llg")
        frames = (load_snapshot(p) for p in paths)
        if monte_carlo:  # Monte Carlo frames have no physical time
            frames = ({k: v for k, v in fr.items() if k != "time_ps"} for fr in frames)
        if grain_boundaries:
            gp = Path(run_dir_or_frames) / "grains.npz"
            if not gp.is_file():
                raise InputError(f"grain_boundaries: {gp} does not exist; it is written by a "
                                 f"heating sequence of a film with grains")
            with np.load(gp) as z:
                grain_id = np.asarray(z["grain_id"])
        if continuous_sign is None:
            field = np.asarray((manifest.get("scenario") or {}).get("field_T", (0, 0, 0)),
                               dtype=np.float64)
            continuous_sign = (monte_carlo or sweep_frames) and not np.any(field)
    else:
        frames = iter(run_dir_or_frames)
        if grain_boundaries:
            raise InputError("grain_boundaries needs a run folder (with grains.npz), not frames")
    if axis is None:
        axis = ((manifest.get("scenario") or {}).get("material") or {}).get("axis", (0, 0, 1))
    axis = np.asarray(axis, dtype=np.float64)
    if axis.shape != (3,) or not np.linalg.norm(axis) > 0:
        raise InputError(f"axis must be a non-zero 3-vector (order axis); got {axis.tolist()!r}.")
    if instrument is True:
        instrument = _manifest_instrument(manifest, run_dir_or_frames)
    frames = (_as_frame(f, spacing_nm) for f in frames)
    if colour == "angle":
        frames = (_with_in_plane(f) for f in frames)
    if continuous_sign:
        frames = _continuous_sign(frames, axis)
    try:
        first = next(frames)
    except StopIteration:
        raise InputError("No frames to write: the frame sequence is empty.") from None

    painter = Painter(
        first,
        colour=colour,
        size=size,
        axis=axis,
        scale_bar_nm=scale_bar_nm,
        instrument=instrument,
        labels=labels,
        grain_id=grain_id,
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
