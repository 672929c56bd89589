"""Pure functions that turn spin arrays into RGB frames and draw scale bars and text on them."""

from functools import lru_cache

import numpy as np

from thinfilm.input.errors import InputError

__all__ = [
    "COLOURS",
    "site_index_map",
    "colour_frame",
    "grey_frame",
    "nice_length",
    "draw_scale_bar",
    "draw_label",
    "draw_colour_key",
    "MIN_TEXT_PX",
]

#: Smallest burned-in text line (px). At 10 px a decimal point was one grey pixel that the
#: H.264 encoder smoothed away at the saved size ("1152 00 ps"); 14 px bold keeps it 2 x 2.
MIN_TEXT_PX = 14

COLOURS = ("mz", "angle")
DIVERGING_CMAP = "RdBu_r"  # -1 blue .. +1 red, colour-blind safe (ColorBrewer)
CYCLIC_CMAP = "twilight"  # cyclic: phi = -pi and +pi share one colour
WHITE = (255, 255, 255)
BLACK = (0, 0, 0)


@lru_cache(maxsize=4)
def _lut(name):
    """256-entry uint8 RGB look-up table of a matplotlib colour map."""
    from matplotlib import colormaps

    rgba = colormaps[name](np.linspace(0.0, 1.0, 256))
    lut = np.round(rgba[:, :3] * 255).astype(np.uint8)
    lut.setflags(write=False)
    return lut


def _grid(positions_nm, box_nm, pixel_nm):
    """(w, h, x0, y0): pixel counts and the centre (nm) of pixel (0, 0).

    The image starts half a column/row pitch before the first site, so a square lattice with
    pixel_nm = spacing puts every pixel centre exactly on a site.
    """
    ny, nx = positions_nm.shape[:2]
    lx, ly = float(box_nm[0]), float(box_nm[1])
    w = max(1, int(round(lx / pixel_nm)))
    h = max(1, int(round(ly / pixel_nm)))
    pts = positions_nm.reshape(-1, 2)
    x0 = pts[:, 0].min() - 0.5 * lx / nx + 0.5 * lx / w
    y0 = pts[:, 1].min() - 0.5 * ly / ny + 0.5 * ly / h
    return w, h, x0, y0


def _nearest_site_raster(positions_nm, box_nm, pixel_nm, periodic):
    """Own nearest-site rasteriser: (H, W) flat site index, row 0 = smallest y."""
    from scipy.spatial import cKDTree

    lx, ly = float(box_nm[0]), float(box_nm[1])
    w, h, x0, y0 = _grid(positions_nm, box_nm, pixel_nm)
    pts = positions_nm.reshape(-1, 2)
    xc = x0 + np.arange(w) * lx / w
    yc = y0 + np.arange(h) * ly / h
    gx, gy = np.meshgrid(xc, yc)
    query = np.stack([gx.ravel(), gy.ravel()], axis=1)
    if periodic:
        box = np.array([lx, ly])
        tree = cKDTree(np.mod(pts, box), boxsize=box)
        _, idx = tree.query(np.mod(query, box))
    else:
        tree = cKDTree(pts)
        _, idx = tree.query(query)
    return idx.reshape(h, w).astype(np.int64)


def site_index_map(positions_nm, box_nm, pixel_nm, *, periodic=True):
    """Which site each pixel shows: the nearest site to the pixel centre.

    Parameters
    ----------
    positions_nm : ndarray, shape (ny, nx, 2)
        Site positions (x, y) in nm.
    box_nm : sequence of 2 floats
        Extent (Lx, Ly) of the film in nm; the image covers it with square pixels.
    pixel_nm : float
        Pixel edge in nm.
    periodic : bool
        Measure distances on the torus (periodic edges) or in the plane.

    Returns
    -------
    ndarray of int64, shape (H, W)
        Flat site index ``i * nx + j`` per pixel, image row 0 at the smallest y.

    Notes
    -----
    Pixel (r, c) is centred at ``(x_min - Lx / (2 nx) + (c + 1/2) Lx / W, y_min - Ly / (2 ny)
    + (r + 1/2) Ly / H)``, i.e. the image starts half a site pitch before the first site.
    Uses ``thinfilm.imaging.rasterise`` (on a map of site indices, so the nearest-site rule is
    kept) when available, otherwise its own k-d tree query of the pixel centres.
    """
    pos = np.asarray(positions_nm, dtype=np.float64)
    if pos.ndim != 3 or pos.shape[2] != 2:
        raise InputError(f"positions_nm must have shape (ny, nx, 2); got {pos.shape}.")
    if not (pixel_nm and pixel_nm > 0):
        raise InputError(f"pixel_nm must be a positive length in nm; got {pixel_nm!r}.")
    try:
        from thinfilm.analysis.instrument import rasterise
    except ImportError:
        return _nearest_site_raster(pos, box_nm, float(pixel_nm), bool(periodic))
    ids = np.arange(pos.shape[0] * pos.shape[1], dtype=np.float64).reshape(pos.shape[:2])
    _, _, x0, y0 = _grid(pos, box_nm, float(pixel_nm))
    img = rasterise(ids, pos, box_nm, float(pixel_nm), periodic=bool(periodic), origin_nm=(x0, y0))
    return np.rint(np.asarray(img)).astype(np.int64)


def _order_component(spins, axis):
    axis = np.asarray(axis, dtype=np.float64)
    return spins @ (axis / np.linalg.norm(axis))


def _spin_rgb(spins, colour, axis):
    """RGB per site, shape (ny, nx, 3) uint8."""
    if colour == "mz":
        c = np.clip(_order_component(spins, axis), -1.0, 1.0)
        k = np.rint((c + 1.0) * 127.5).astype(np.intp)
        return _lut(DIVERGING_CMAP)[k]
    phi = np.arctan2(spins[..., 1], spins[..., 0])  # in-plane angle, -pi..pi
    k = np.rint((phi + np.pi) / (2 * np.pi) * 255).astype(np.intp)
    rgb = _lut(CYCLIC_CMAP)[k].astype(np.float64)
    mz = np.clip(spins[..., 2], -1.0, 1.0)[..., None]
    # brightness from the out-of-plane component: +1 -> white, 0 -> hue, -1 -> black
    rgb = np.where(mz > 0, rgb + (255.0 - rgb) * mz, rgb * (1.0 + mz))
    return np.rint(rgb).astype(np.uint8)


def _check_spins(spins):
    s = np.asarray(spins, dtype=np.float64)
    if s.ndim != 3 or s.shape[2] != 3 or s.shape[0] < 1 or s.shape[1] < 1:
        raise InputError(f"spins must have shape (ny, nx, 3); got {s.shape}.")
    return s


def colour_frame(
    spins,
    *,
    colour="mz",
    shape="square",
    positions_nm=None,
    box_nm=None,
    pixel_nm=None,
    periodic=True,
    axis=(0.0, 0.0, 1.0),
    index_map=None,
):
    """Colour a spin state as an RGB image, +y pointing up (image row 0 = largest y).

    Parameters
    ----------
    spins : ndarray, shape (ny, nx, 3)
        Unit spins.
    colour : {"mz", "angle"}
        ``"mz"``: component along ``axis`` on the diverging map RdBu_r (-1 blue, +1 red).
        ``"angle"``: in-plane angle atan2(m_y, m_x) on the cyclic map twilight, brightened
        towards white for m_z > 0 and darkened towards black for m_z < 0.
    shape : {"square", "triangular", "honeycomb"}
        Lattice shape. Square: one block of ``round(spacing / pixel_nm)`` pixels per site
        (one pixel per site when ``pixel_nm`` is None). Other shapes: drawn at the true
        site positions, each pixel taking the colour of the nearest site.
    positions_nm : ndarray, shape (ny, nx, 2), optional
        Site positions in nm; needed for triangular and honeycomb.
    box_nm : sequence of 2 floats, optional
        Film extent (Lx, Ly) in nm; needed for triangular and honeycomb.
    pixel_nm : float, optional
        Pixel edge in nm. Default for non-square shapes: half the column pitch.
    periodic : bool
        Periodic edges (nearest site measured on the torus).
    axis : sequence of 3 floats
        Order axis for ``colour="mz"``.
    index_map : ndarray of int, shape (H, W), optional
        Precomputed :func:`site_index_map` (row 0 = smallest y) to skip the search.

    Returns
    -------
    ndarray of uint8, shape (H, W, 3)
    """
    s = _check_spins(spins)
    if colour not in COLOURS:
        raise InputError(f"colour must be one of {', '.join(COLOURS)}; got {colour!r}.")
    rgb = _spin_rgb(s, colour, axis)
    ny, nx = s.shape[:2]
    if index_map is not None:
        img = rgb.reshape(-1, 3)[index_map]
    elif shape == "square":
        k = 1
        if pixel_nm is not None:
            a = float(box_nm[0]) / nx if box_nm is not None else None
            if a is None:
                raise InputError("a square-lattice frame with pixel_nm also needs box_nm.")
            k = max(1, int(round(a / float(pixel_nm))))
        img = rgb if k == 1 else np.repeat(np.repeat(rgb, k, axis=0), k, axis=1)
    elif shape in ("triangular", "honeycomb"):
        if positions_nm is None or box_nm is None:
            raise InputError(
                f"drawing a {shape} lattice needs positions_nm and box_nm "
                "(stored in every snapshot file)."
            )
        if pixel_nm is None:
            pixel_nm = 0.5 * float(box_nm[0]) / nx
        img = rgb.reshape(-1, 3)[site_index_map(positions_nm, box_nm, pixel_nm, periodic=periodic)]
    else:
        raise InputError(f"shape must be square, triangular or honeycomb; got {shape!r}.")
    return np.ascontiguousarray(img[::-1])


def grey_frame(image, *, vmin=-1.0, vmax=1.0):
    """Grey-scale RGB (uint8) of a 2D image (row 0 = smallest y), vmin black, vmax white."""
    img = np.asarray(image, dtype=np.float64)
    g = np.clip((img - vmin) / (vmax - vmin), 0.0, 1.0)
    g = np.rint(g * 255).astype(np.uint8)[::-1]
    return np.ascontiguousarray(np.repeat(g[..., None], 3, axis=2))


def nice_length(width_nm, fraction=0.2):
    """Round length (1, 2 or 5 times a power of ten) closest to ``fraction * width_nm``, in nm."""
    target = float(width_nm) * fraction
    if not target > 0:
        raise InputError(
            f"the image width must be positive to choose a scale bar; got {width_nm!r} nm."
        )
    p = 10.0 ** np.floor(np.log10(target))
    cands = np.array([1, 2, 5, 10]) * p
    return float(cands[np.argmin(np.abs(np.log(cands / target)))])


@lru_cache(maxsize=512)
def _glyph(ch, height):
    """Coverage mask (uint8, height x ~0.6 height) of one character, rendered by matplotlib Agg."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    dpi = 72.0  # 1 point = 1 pixel
    width = max(3, int(round(0.62 * height)))
    fig = Figure(figsize=(width / dpi, height / dpi), dpi=dpi)
    fig.patch.set_alpha(0.0)
    canvas = FigureCanvasAgg(fig)
    fig.text(
        0.5,
        0.24,
        ch,
        fontsize=0.78 * height,
        family="DejaVu Sans Mono",
        weight="bold",
        ha="center",
        va="baseline",
        color="white",
    )
    canvas.draw()
    mask = np.asarray(canvas.buffer_rgba())[..., 3].copy()
    mask.setflags(write=False)
    return mask


def text_mask(text, height):
    """Coverage mask (uint8, shape (height, n * width)) of a one-line string."""
    height = max(6, int(height))
    return (
        np.hstack([_glyph(c, height) for c in str(text)])
        if text
        else np.zeros((height, 0), np.uint8)
    )


def _blend(img, y, x, mask, colour):
    """Alpha-blend ``colour`` into ``img`` at top-left (y, x) with coverage ``mask``, clipped."""
    h, w = mask.shape
    y0, x0 = max(0, y), max(0, x)
    y1, x1 = min(img.shape[0], y + h), min(img.shape[1], x + w)
    if y1 <= y0 or x1 <= x0:
        return
    a = mask[y0 - y : y1 - y, x0 - x : x1 - x, None].astype(np.float32) / 255.0
    sub = img[y0:y1, x0:x1].astype(np.float32)
    img[y0:y1, x0:x1] = np.rint(sub * (1 - a) + np.asarray(colour, np.float32) * a).astype(np.uint8)


def draw_label(img, text, xy=(4, 4), *, height_px=None, colour=WHITE, box=True):
    """Burn one line of text into an RGB frame in place.

    Parameters
    ----------
    img : ndarray of uint8, shape (H, W, 3)
        Frame, modified in place.
    text : str
        One line; characters drawn in DejaVu Sans Mono.
    xy : (int, int)
        Top-left corner (column, row) in pixels.
    height_px : int, optional
        Text line height in pixels (default: max(10, H / 24)).
    colour : 3 ints
        Text colour.
    box : bool
        Darken a box behind the text (half-transparent black) so it reads on any map.

    Returns
    -------
    tuple of int
        (width, height) of the drawn box in pixels.
    """
    if height_px is None:
        height_px = max(MIN_TEXT_PX, img.shape[0] // 24)
    mask = text_mask(text, height_px)
    x, y = int(xy[0]), int(xy[1])
    pad = max(1, height_px // 8)
    if box:  # 70 % black: the text contrast does not depend on the map below
        bg = np.full((mask.shape[0] + 2 * pad, mask.shape[1] + 2 * pad), 180, np.uint8)
        _blend(img, y - pad, x - pad, bg, BLACK)
    _blend(img, y, x, mask, colour)
    return mask.shape[1] + 2 * pad, mask.shape[0] + 2 * pad


def draw_scale_bar(img, pixel_nm, *, length_nm=None, margin_px=None, colour=WHITE):
    """Draw a scale bar with its length in nm at the bottom left of an RGB frame, in place.

    Parameters
    ----------
    img : ndarray of uint8, shape (H, W, 3)
        Frame, modified in place.
    pixel_nm : float
        Pixel edge of the frame in nm.
    length_nm : float, optional
        Bar length in nm; default :func:`nice_length` (about a fifth of the width).
    margin_px : int, optional
        Distance from the left and bottom edges in pixels.
    colour : 3 ints
        Bar and text colour (drawn on a black outline).

    Returns
    -------
    tuple
        (length_nm, length_px): the bar covers exactly ``length_px = round(length_nm /
        pixel_nm)`` pixels in its white core.
    """
    h, w = img.shape[:2]
    if not (pixel_nm and pixel_nm > 0):
        raise InputError(f"pixel_nm must be a positive length in nm; got {pixel_nm!r}.")
    if length_nm is None:
        length_nm = nice_length(w * pixel_nm)
    if not length_nm > 0:
        raise InputError(
            f"the scale bar length must be a positive number of nm; got {length_nm!r}."
        )
    n = int(round(length_nm / pixel_nm))
    m = max(3, min(h, w) // 32) if margin_px is None else int(margin_px)
    t = max(2, h // 96)
    x0, y1 = m, h - m
    x1 = min(w - 1, x0 + n)
    img[max(0, y1 - t - 1) : min(h, y1 + 1), max(0, x0 - 1) : min(w, x1 + 1)] = BLACK
    img[max(0, y1 - t) : y1, x0:x1] = colour
    label = f"{length_nm:g} nm"
    th = max(MIN_TEXT_PX, h // 24)
    draw_label(img, label, (x0, y1 - t - th - max(2, th // 4)), height_px=th, colour=colour)
    return float(length_nm), n


def draw_colour_key(img, colour="mz", *, quantity=None, height_px=None, margin_px=None):
    """Draw the colour key (quantity, colour bar and its range) at the bottom right, in place.

    ``colour="mz"``: the diverging map from -1 (left) to +1 (right) of the order-axis
    component, labelled ``quantity`` (default "m_z"); ``"angle"``: the cyclic map of the
    in-plane angle from -180 to 180 degrees. Returns the (width, height) of the key in px.
    """
    h, w = img.shape[:2]
    th = max(MIN_TEXT_PX, h // 24) if height_px is None else int(height_px)
    m = max(3, min(h, w) // 32) if margin_px is None else int(margin_px)
    if colour == "mz":
        lo, hi, name, lut = "-1", "+1", quantity or "m_z", _lut(DIVERGING_CMAP)
    else:
        lo, hi, name, lut = "-180", "180 deg", quantity or "in-plane angle", _lut(CYCLIC_CMAP)
    bar_w = max(48, w // 6)
    bar_h = max(6, th // 2)
    lo_m, hi_m, name_m = text_mask(lo, th), text_mask(hi, th), text_mask(name, th)
    width = lo_m.shape[1] + bar_w + hi_m.shape[1] + 8
    width = max(width, name_m.shape[1])
    height = 2 * th + 2
    x0, y0 = w - m - width, h - m - height
    pad = max(1, th // 8)
    bg = np.full((height + 2 * pad, width + 2 * pad), 180, np.uint8)
    _blend(img, y0 - pad, x0 - pad, bg, BLACK)
    _blend(img, y0, x0 + (width - name_m.shape[1]) // 2, name_m, WHITE)
    yb = y0 + th + 2
    _blend(img, yb, x0, lo_m, WHITE)
    bx = x0 + lo_m.shape[1] + 4
    cols = lut[np.linspace(0, 255, bar_w).round().astype(int)]
    y_bar = yb + (th - bar_h) // 2
    if 0 <= y_bar and y_bar + bar_h <= h and 0 <= bx and bx + bar_w <= w:
        img[y_bar : y_bar + bar_h, bx : bx + bar_w] = cols[None, :, :]
    _blend(img, yb, bx + bar_w + 4, hi_m, WHITE)
    return width, height
