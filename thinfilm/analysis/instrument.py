"""Instrument views of spin fields: rasterise to pixels, Gaussian PSF blur, pixel binning, noise."""

import numpy as np
from scipy import ndimage
from scipy.spatial import cKDTree

from thinfilm.input.errors import InputError

__all__ = ["rasterise", "instrument_view", "FWHM_PER_SIGMA"]

FWHM_PER_SIGMA = 2.0 * np.sqrt(2.0 * np.log(2.0))


def rasterise(values, positions_nm, box_nm, pixel_nm, *, periodic=True, origin_nm=(0.0, 0.0)):
    """Nearest-site raster of per-site values.

    The box (Lx, Ly) is covered by ``nx = max(1, round(Lx / pixel_nm))`` by ``ny`` pixels of size
    ``(Lx / nx, Ly / ny)``; pixel (i, j) is centred at ``origin + (j Lx / nx, i Ly / ny)`` and takes
    the value of the site nearest to its centre (``scipy.spatial.cKDTree``, periodic distances when
    ``periodic``; ties go to whichever site the tree returns). A square lattice rasterised at its
    own spacing is returned unchanged.

    Parameters
    ----------
    values : ndarray, shape (ny_sites, nx_sites) or (ny_sites, nx_sites, k)
        Per-site scalars or vectors.
    positions_nm : ndarray, shape (ny_sites, nx_sites, 2)
        Site positions in nm.
    box_nm : (float, float)
        Box (Lx, Ly) in nm.
    pixel_nm : float
        Requested pixel size in nm.
    periodic : bool
        Use periodic (torus) distances.
    origin_nm : (float, float)
        Centre of pixel (0, 0) in nm.

    Returns
    -------
    ndarray, shape (ny, nx) or (ny, nx, k)
    """
    vals = np.asarray(values)
    pos = np.asarray(positions_nm, dtype=float)
    box = np.asarray(box_nm, dtype=float)
    if pos.ndim != 3 or pos.shape[2] != 2 or vals.shape[:2] != pos.shape[:2]:
        raise InputError(
            f"rasterise: values {vals.shape} and positions_nm {pos.shape} "
            f"must share the (ny, nx) grid"
        )
    if not (np.isfinite(pixel_nm) and pixel_nm > 0) or box.shape != (2,) or np.any(box <= 0):
        raise InputError(
            f"rasterise: pixel_nm ({pixel_nm!r}) and box_nm ({box_nm!r}) must be positive"
        )
    nx, ny = (max(1, int(round(b / pixel_nm))) for b in box)
    px, py = box[0] / nx, box[1] / ny
    gx, gy = np.meshgrid(origin_nm[0] + px * np.arange(nx), origin_nm[1] + py * np.arange(ny))
    return _nearest(vals, pos, box, gx, gy, periodic)


def _nearest(vals, pos, box, gx, gy, periodic):
    """Values of the sites nearest to the points (gx, gy); result has gx.shape + vals.shape[2:]."""
    centres = np.stack([gx.ravel(), gy.ravel()], axis=1)
    xy = pos.reshape(-1, 2)
    if periodic:
        tree = cKDTree(np.mod(xy, box), boxsize=box)
        centres = np.mod(centres, box)
    else:
        tree = cKDTree(xy)
    _, idx = tree.query(centres)
    flat = vals.reshape((xy.shape[0],) + vals.shape[2:])
    return flat[idx].reshape(gx.shape + vals.shape[2:])


def instrument_view(
    field, positions_nm, box_nm, *, pixel_nm, fwhm_nm, noise=0.0, rng=None, periodic=True
):
    """Image of a per-site scalar as a microscope with a Gaussian PSF would record it.

    Steps: rasterise (:func:`rasterise`) on a fine grid of ``n_sub`` x ``n_sub`` sub-pixels per
    instrument pixel (sub-pixel at most fwhm/4 and half the smallest site spacing, n_sub <= 16);
    blur with a Gaussian of ``sigma = fwhm / (2 sqrt(2 ln 2))`` (``scipy.ndimage.gaussian_filter``,
    wrapped when periodic, reflected at open edges); average each block of sub-pixels; add
    Gaussian noise of standard deviation ``noise``. Instrument pixel (i, j) is centred at
    ``(j px, i py)``, like the sites of a square lattice.

    Parameters
    ----------
    field : ndarray, shape (ny, nx)
        Per-site signal (e.g. m_z for Kerr or XMCD contrast), dimensionless.
    positions_nm, box_nm
        Site positions (ny, nx, 2) and box (Lx, Ly), nm.
    pixel_nm : float
        Instrument pixel size, nm.
    fwhm_nm : float
        Full width at half maximum of the PSF, nm (0 for none).
    noise : float
        Standard deviation of additive Gaussian noise, field units.
    rng : numpy.random.Generator, optional
        Source of the noise (a fresh unseeded generator when None).
    periodic : bool
        The film is a torus (periodic raster and blur).

    Returns
    -------
    image : ndarray, shape (ny_px, nx_px)
    pixel_nm : (float, float)
        Actual pixel size (px, py) in nm (the box is covered by a whole number of pixels).
    """
    for name, val in (("pixel_nm", pixel_nm), ("fwhm_nm", fwhm_nm), ("noise", noise)):
        if not (np.isfinite(val) and val >= 0) or (name == "pixel_nm" and val == 0):
            raise InputError(
                f"instrument_view: {name} must be a finite number >= 0 (pixel_nm > 0); got {val!r}"
            )
    pos = np.asarray(positions_nm, dtype=float)
    f = np.asarray(field, dtype=float)
    if pos.ndim != 3 or pos.shape[2] != 2 or f.shape != pos.shape[:2]:
        raise InputError(
            f"instrument_view: field {f.shape} and positions_nm {pos.shape} "
            f"must share the (ny, nx) grid"
        )
    d = np.diff(pos.reshape(-1, 2)[: min(pos.shape[1], 2) + 1], axis=0)
    spacing = float(np.min(np.hypot(d[:, 0], d[:, 1]))) if d.size else pixel_nm
    target = min(fwhm_nm / 4.0 if fwhm_nm > 0 else np.inf, 0.5 * spacing)
    n_sub = int(min(16, max(1, np.ceil(pixel_nm / target))))
    box = np.asarray(box_nm, dtype=float)
    nx, ny = (max(1, int(round(b / pixel_nm))) for b in box)
    px, py = box[0] / nx, box[1] / ny
    fx, fy = px / n_sub, py / n_sub
    origin = (-0.5 * px + 0.5 * fx, -0.5 * py + 0.5 * fy)
    gx, gy = np.meshgrid(
        origin[0] + fx * np.arange(nx * n_sub), origin[1] + fy * np.arange(ny * n_sub)
    )
    fine = _nearest(f, pos, box, gx, gy, periodic)
    if fwhm_nm > 0:
        sigma = fwhm_nm / FWHM_PER_SIGMA
        fine = ndimage.gaussian_filter(
            fine, (sigma / fy, sigma / fx), mode="wrap" if periodic else "reflect"
        )
    image = fine.reshape(ny, n_sub, nx, n_sub).mean(axis=(1, 3))
    if noise > 0:
        rng = np.random.default_rng() if rng is None else rng
        image = image + rng.normal(0.0, noise, image.shape)
    return image, (px, py)
