"""The fixed geometry of one movie: turns a frame dict into an even-sized RGB array (the map,
grain boundaries, scale bar, colour key, text lines and an optional instrument view)."""

from collections.abc import Mapping

import numpy as np

from thinfilm.input.errors import InputError
from thinfilm.render.frames import (
    MIN_TEXT_PX,
    colour_frame,
    draw_colour_key,
    draw_label,
    draw_scale_bar,
    grey_frame,
    site_index_map,
)

__all__ = ["Painter", "frame_text"]

_MIN_WIDTH_PX = 256  # default smallest map width, so burned-in text stays legible
_GAP_PX = 4  # black gap between the map and the instrument view


def frame_text(fr):
    """Lines burned into a frame: time, temperature, its label, whether it is shown reversed."""
    out = []
    if fr.get("time_ps") is not None:
        out.append(f"t = {float(fr['time_ps']):.2f} ps")
    if fr.get("temperature_K") is not None:
        out.append(f"T = {float(fr['temperature_K']):.2f} K")
    if fr.get("label"):
        out.append(str(fr["label"]))
    if fr.get("reversed"):
        out.append("shown reversed (-S)")
    return out


class Painter:
    """Fixed geometry of one movie: turns a frame dict into an even-sized RGB array."""

    def __init__(self, first, *, colour, size, axis, scale_bar_nm, instrument, labels,
                 grain_id=None):
        s = first["spins"]
        self.grid = s.shape
        self.shape, self.periodic = first["shape"], bool(first["periodic"])
        self.box = np.asarray(first["box_nm"], dtype=np.float64)
        ny, nx = s.shape[:2]
        self.colour, self.axis, self.labels = colour, axis, labels
        n = np.asarray(axis, dtype=np.float64) / np.linalg.norm(axis)
        self.quantity = ("m_z" if np.allclose(n, (0, 0, 1)) else
                         "m along [" + " ".join(f"{v:.2g}" for v in n) + "]")
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
        self.boundary = None if grain_id is None else self._boundary_pixels(grain_id, nx)

    def _boundary_pixels(self, grain_id, nx):
        """(H, W) bool: pixels of sites with a neighbour (right or up, periodic) in another
        grain, drawn like the map (row 0 = largest y)."""
        g = np.asarray(grain_id)
        if g.shape != self.grid[:2]:
            raise InputError(f"grain map of shape {g.shape} does not match the frames "
                             f"{self.grid[:2]}")
        edge = (g != np.roll(g, -1, axis=1)) | (g != np.roll(g, -1, axis=0))
        if self.index_map is not None:
            px = edge.ravel()[self.index_map]
        else:
            k = max(1, int(round(self.box[0] / nx / self.pixel_nm)))
            px = np.repeat(np.repeat(edge, k, axis=0), k, axis=1)
        return np.ascontiguousarray(px[::-1])

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
        if self.boundary is not None:  # grain boundaries: the map darkened to 45 %
            img[self.boundary] = (img[self.boundary] * 0.45).astype(np.uint8)
        if self.scale_bar_nm is not False:
            draw_scale_bar(img, self.pixel_nm, length_nm=self.scale_bar_nm)
        if self.labels:
            draw_colour_key(img, self.colour, quantity=self.quantity)
            th = max(MIN_TEXT_PX, img.shape[0] // 24)
            y = max(4, th // 2)  # room above the first line for its box and accents
            for text in frame_text(fr):
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
            th = max(MIN_TEXT_PX, h // 24)
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
