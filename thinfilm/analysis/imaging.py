"""Measured images: loading (PNG/TIFF, mask, background) and their domain and correlation analysis.

Re-exports :func:`rasterise` and :func:`instrument_view` from :mod:`thinfilm.analysis.instrument`.
"""

import warnings
from pathlib import Path

import numpy as np
from scipy import ndimage

from thinfilm import _io
from thinfilm.analysis.correlation import (
    correlation_function,
    correlation_length,
    ornstein_zernike_fit,
)
from thinfilm.analysis.domains import domain_statistics, label_domains
from thinfilm.analysis.instrument import instrument_view, rasterise
from thinfilm.input.errors import InputError, ThinFilmWarning, option
from thinfilm.input.units import parse_quantity

__all__ = ["rasterise", "instrument_view", "load_image", "analyse_image", "contrast_threshold"]

BACKGROUNDS = ("none", "mean", "plane", "highpass")
THRESHOLDS = ("otsu", "median")
SMALL_DOMAIN_PX = 4  # a domain of fewer pixels than a 2 x 2 block is not resolved by the image


def contrast_threshold(values, method="otsu"):
    """Grey level separating bright from dark pixels.

    ``"otsu"``: Otsu's threshold (N. Otsu, IEEE Trans. Syst. Man Cybern. 9, 62 (1979)), from
    ``skimage.filters.threshold_otsu`` on 256 histogram bins: the level that maximises the
    between-class variance of the two populations, so it does not depend on what fraction of the
    film is bright. ``"median"``: the median (half the pixels on each side whatever the film).
    """
    v = np.asarray(values, dtype=np.float64).ravel()
    if method == "median":
        return float(np.median(v))
    from skimage.filters import threshold_otsu

    return float(threshold_otsu(v, nbins=256))


def _length_nm(text, what, path):
    """Parse a length string such as "5 nm" into nm, or raise InputError naming it."""
    try:
        value = parse_quantity(text, "length") * 1e9
    except ValueError as exc:
        raise InputError(f"image {path}: {what} {text!r} is not a length: {exc}") from None
    if not value > 0:
        raise InputError(f"image {path}: {what} must be a positive length; got {text!r}")
    return value


def _read_grey(path, what):
    """Read a PNG/TIFF as a 2D float array; colour, stacks and missing files raise InputError."""
    path = Path(path)
    if not path.is_file():
        raise InputError(
            f"{what} {path}: no such file; give the path of a greyscale PNG or TIFF image"
        )
    try:
        if path.suffix.lower() in (".tif", ".tiff"):
            import tifffile

            data = tifffile.imread(path)
        else:
            import imageio.v3 as iio

            data = iio.imread(path)
    except Exception as exc:  # readers raise many unrelated types for corrupt files
        raise InputError(
            f"{what} {path}: not a readable image (the reader stopped with "
            f"{type(exc).__name__}); the file is damaged or not a PNG or TIFF image: open it in "
            f"an image viewer, or export the image again as greyscale PNG or TIFF"
        ) from None
    data = np.asarray(data)
    if data.ndim == 3 and data.shape[-1] in (1, 2, 3, 4):
        channels = data[..., : 1 if data.shape[-1] <= 2 else 3].astype(float)
        if not np.all(channels == channels[..., :1]):
            raise InputError(
                f"{what} {path}: is a colour image (shape {data.shape}) with different channels; "
                f"thinfilm analyses greyscale intensity only, so convert it to greyscale first"
            )
        data = channels[..., 0]
    if data.ndim != 2:
        raise InputError(
            f"{what} {path}: has shape {data.shape}; a single 2D greyscale image (rows, columns) "
            f"is needed (split multi-page stacks into single frames)"
        )
    if not np.issubdtype(data.dtype, np.number) or np.iscomplexobj(data):
        raise InputError(f"{what} {path}: pixel type {data.dtype} is not a real number type")
    return data.astype(np.float64)


def load_image(path, *, pixel_size, mask=None, background=None, highpass_length=None,
               threshold="otsu"):
    """Read a greyscale PNG/TIFF and normalise its contrast.

    Parameters
    ----------
    path : str or Path
        Image file (PNG, TIFF or any format imageio reads). Identical RGB(A) channels are accepted.
    pixel_size : str
        Pixel size with a length unit, e.g. ``"5 nm"`` or ``"0.02 um"``.
    mask : str or Path, optional
        Image of the same shape; nonzero pixels are invalid (excluded everywhere).
    background : {"none", "mean", "plane", "highpass"}, optional
        Removed before normalising: nothing, the mean, a least-squares plane a + b x + c y, or a
        Gaussian low-pass of standard deviation ``highpass_length`` (high-pass filter).
    highpass_length : str, optional
        Length with unit for ``background="highpass"``.
    threshold : {"otsu", "median"}
        Grey level put at 0 (:func:`contrast_threshold`): Otsu's threshold of the valid pixels
        (default), or their median (which calls half of any film bright).

    Returns
    -------
    image : ndarray, shape (ny, nx)
        Contrast with the threshold of valid pixels at 0 and scaled into [-1, 1]; 0 on invalid
        pixels.
    valid : ndarray of bool
        True on valid pixels.
    pixel_nm : float
        Pixel size in nm.
    """
    if threshold not in THRESHOLDS:
        raise InputError(f"image {path}: threshold {threshold!r} is unknown; allowed: "
                         f"{', '.join(THRESHOLDS)}")
    background = "none" if background is None else str(background).lower()
    if background not in BACKGROUNDS:
        raise InputError(
            f"image {path}: background {background!r} is unknown; allowed: {', '.join(BACKGROUNDS)}"
        )
    pixel_nm = _length_nm(pixel_size, "pixel_size", path)
    img = _read_grey(path, "image")
    if min(img.shape) < 8:
        raise InputError(
            f"image {path}: is only {img.shape[1]} x {img.shape[0]} pixels; "
            f"at least 8 x 8 are needed"
        )
    valid = np.ones(img.shape, dtype=bool)
    if mask is not None:
        m = _read_grey(mask, "mask image")
        if m.shape != img.shape:
            raise InputError(
                f"mask image {mask}: has shape {m.shape} but the image {path} has {img.shape}"
            )
        valid = m == 0
    bad = ~np.isfinite(img) & valid
    if bad.any():
        raise InputError(
            f"image {path}: {int(bad.sum())} pixels are NaN or infinite; mark them invalid with a "
            f"mask image (nonzero = invalid)"
        )
    if valid.sum() < 16:
        raise InputError(
            f"image {path}: fewer than 16 valid pixels remain after applying the mask {mask}"
        )
    img = np.where(valid, img, 0.0)
    if background == "mean":
        img = img - img[valid].mean()
    elif background == "plane":
        yy, xx = np.nonzero(valid)
        design = np.stack([np.ones(xx.size), xx, yy], axis=1).astype(float)
        coef, *_ = np.linalg.lstsq(design, img[valid], rcond=None)
        gy, gx = np.indices(img.shape)
        img = img - (coef[0] + coef[1] * gx + coef[2] * gy)
    elif background == "highpass":
        if highpass_length is None:
            raise InputError(
                f"image {path}: background 'highpass' needs highpass_length, e.g. '200 nm'"
            )
        sigma = _length_nm(highpass_length, "highpass_length", path) / pixel_nm
        num = ndimage.gaussian_filter(np.where(valid, img, 0.0), sigma, mode="reflect")
        den = ndimage.gaussian_filter(valid.astype(float), sigma, mode="reflect")
        img = img - num / np.maximum(den, 1e-12)
    img = img - contrast_threshold(img[valid], threshold)
    scale = np.max(np.abs(img[valid]))
    if not scale > 1e-12 * max(1.0, float(np.max(np.abs(img)))):
        raise InputError(
            f"image {path}: has no contrast (all valid pixels equal after background "
            f"'{background}' removal); there is nothing to analyse"
        )
    return np.where(valid, img / scale, 0.0), valid, pixel_nm


def _finite(x):
    """JSON-friendly float: nan/inf become None."""
    x = float(x)
    return x if np.isfinite(x) else None


def analyse_image(
    path,
    *,
    pixel_size,
    out_dir,
    level=0.0,
    smoothing=None,
    background="plane",
    mask=None,
    highpass_length=None,
    threshold="otsu",
    resolution=None,
    return_arrays=False,
):
    """Correlation length and domain sizes of one measured (or rendered) image.

    Writes ``image_analysis.json``, ``correlation.csv`` (``r_nm, C, pair_count``) and
    ``domain_sizes.csv`` (``domain_id, sign, area_nm2, equivalent_diameter_nm``) to ``out_dir``
    (:func:`thinfilm.render.image_plot.analyse_image_with_figure` adds the figure).
    The image is treated with open edges. ``correlation_length_nm`` is the second-moment estimator
    for open fields and ``correlation_length_fit_nm`` the OZ fit of C(r) (see
    :mod:`thinfilm.analysis.correlation`); the error of the former is a jackknife over the four
    image quadrants, that of the latter the fit covariance.

    Parameters
    ----------
    path, pixel_size, mask, background, highpass_length
        As in :func:`load_image`.
    out_dir : str or Path
        Output folder (created).
    level : float
        Domain threshold on the normalised contrast, -1 .. 1 (0: the ``threshold`` level).
    smoothing : str, optional
        Gaussian smoothing (standard deviation, with unit) before thresholding.
    threshold : {"otsu", "median"}
        Grey level of contrast 0 (see :func:`load_image`).
    resolution : str, optional
        Instrument resolution with unit: domains smaller than a disc of that diameter are
        counted as unresolved, like those under four pixels.
    return_arrays : bool
        Also return the arrays behind the numbers (for the figure): ``image`` (normalised
        contrast), ``valid``, ``labels``, ``r_nm``, ``C``, ``fit``, ``pixel_nm``.

    Warns
    -----
    ThinFilmWarning
        When most domains are smaller than four pixels (or than the resolution): pixel noise or
        unresolved features counted as domains; the JSON's ``warnings`` keeps the text.

    Returns
    -------
    dict
        The JSON content; with ``return_arrays`` the pair (dict, arrays).
    """
    try:
        level = float(level)
    except (TypeError, ValueError):
        level = float("nan")
    if not -1.0 <= level <= 1.0:
        raise InputError(f"image {path}: {option('level', None)} {level!r} is outside -1 .. 1; "
                         f"the level is a threshold on the contrast normalised to -1 .. 1 "
                         f"(0 = the {threshold} threshold of the grey levels)")
    img, valid, pixel_nm = load_image(
        path,
        pixel_size=pixel_size,
        mask=mask,
        background=background,
        highpass_length=highpass_length,
        threshold=threshold,
    )
    smoothing_nm = None if smoothing is None else _length_nm(smoothing, "smoothing", path)
    resolution_nm = None if resolution is None else _length_nm(resolution, "resolution", path)
    ny, nx = img.shape
    gy, gx = np.indices(img.shape)
    pos = np.stack([gx * pixel_nm, gy * pixel_nm], axis=-1).astype(float)
    box = (nx * pixel_nm, ny * pixel_nm)
    r, c, counts = correlation_function(img, pos, box, periodic=False, valid=valid)
    fit = ornstein_zernike_fit(img, pos, box, periodic=False, valid=valid)
    hy, hx = ny // 2, nx // 2
    quads = [
        (slice(0, hy), slice(0, hx)),
        (slice(0, hy), slice(hx, 2 * hx)),
        (slice(hy, 2 * hy), slice(0, hx)),
        (slice(hy, 2 * hy), slice(hx, 2 * hx)),
    ]
    full = correlation_length([img], pos, box, periodic=False, valid=valid, n_blocks=1)
    qvalid = [valid[q] for q in quads]
    err, method = np.nan, "jackknife over the four image quadrants"
    if all(v.sum() >= 16 for v in qvalid) and min(hy, hx) >= 8:
        # quadrants share one geometry only when they share one validity mask
        if all(np.array_equal(qvalid[0], v) for v in qvalid):
            qres = correlation_length(
                [img[q] for q in quads],
                pos[:hy, :hx],
                (hx * pixel_nm, hy * pixel_nm),
                periodic=False,
                valid=qvalid[0],
                n_blocks=4,
            )
            err = qres["second_moment_err_nm"]
        else:
            vals = [
                correlation_length(
                    [img[q]],
                    pos[:hy, :hx],
                    (hx * pixel_nm, hy * pixel_nm),
                    periodic=False,
                    valid=v,
                    n_blocks=1,
                )["second_moment_nm"]
                for q, v in zip(quads, qvalid, strict=True)
            ]
            err = float(np.std(vals, ddof=1) / 2.0)
            method = "standard error of the four image quadrants' estimates"
    else:
        method = "none (image too small to split into quadrants)"
    labels, signs = label_domains(
        img, level=level, smoothing_nm=smoothing_nm, pixel_nm=pixel_nm, valid=valid
    )
    stats = domain_statistics(labels, pixel_nm**2, signs=signs)
    edge = np.unique(np.concatenate([labels[0], labels[-1], labels[:, 0], labels[:, -1]]))
    small_nm2 = SMALL_DOMAIN_PX * pixel_nm**2
    if resolution_nm is not None:
        small_nm2 = max(small_nm2, np.pi * (resolution_nm / 2) ** 2)
    areas = np.asarray(stats["area_by_label_nm2"], dtype=np.float64)[1:]
    n_small = int(np.count_nonzero(areas < small_nm2))
    notes = []
    if areas.size and n_small > areas.size / 2:
        what = (f"{SMALL_DOMAIN_PX} pixels" if resolution_nm is None else
                f"{SMALL_DOMAIN_PX} pixels or a disc of the {resolution_nm:g} nm resolution")
        flag = option("smoothing", None)
        eg = (f'{flag} "{2 * pixel_nm:.3g} nm"' if flag.startswith("-")
              else f'smoothing="{2 * pixel_nm:.3g} nm"')
        hint = f"smooth the image ({eg}) to count the domains the image resolves"
        notes.append(f"image {path}: {n_small} of {areas.size} domains are smaller than {what}: "
                     f"pixel noise or unresolved features are counted as domains; {hint}")
    for text in notes:
        warnings.warn(text, ThinFilmWarning, stacklevel=2)
    result = {
        "image_path": str(path),
        "image_shape_px": [ny, nx],
        "pixel_size_nm": pixel_nm,
        "background": background,
        "valid_fraction": float(valid.mean()),
        "level": float(level),
        "threshold_method": threshold,
        "smoothing_nm": smoothing_nm,
        "resolution_nm": resolution_nm,
        "small_domain_count": n_small,
        "small_domain_area_nm2": float(small_nm2),
        "warnings": notes,
        "correlation_length_nm": _finite(full["second_moment_nm"]),
        "correlation_length_nm_err": _finite(err),
        "xi_error_method": method,
        "correlation_length_fit_nm": _finite(fit["xi_nm"]),
        "correlation_length_fit_nm_err": _finite(fit["xi_err_nm"]),
        "correlation_fit_range_nm": [_finite(fit["r_min_nm"]), _finite(fit["r_max_nm"])],
        "correlation_fit_model": "C(r) = A K0(r / xi) + B (2D Ornstein-Zernike)",
        "domain_count": stats["all"]["count"],
        "up_domain_count": stats["up"]["count"],
        "down_domain_count": stats["down"]["count"],
        "domains_touching_edge_count": int(np.count_nonzero(edge)),
        "mean_domain_area_nm2": _finite(stats["all"]["mean_area_nm2"]),
        "median_domain_area_nm2": _finite(stats["all"]["median_area_nm2"]),
        "area_weighted_mean_domain_area_nm2": _finite(stats["all"]["area_weighted_mean_area_nm2"]),
        "mean_equivalent_diameter_nm": _finite(stats["all"]["mean_equivalent_diameter_nm"]),
        "largest_domain_fraction": _finite(stats["all"]["largest_fraction"]),
        "up_area_fraction": _finite(stats["up_area_fraction"]),
    }
    out = Path(out_dir)
    _io.write_csv(
        out / "correlation.csv",
        ["r_nm", "C", "pair_count"],
        [(float(a), float(b), int(k)) for a, b, k in zip(r, c, counts, strict=True)],
    )
    areas = stats["area_by_label_nm2"]
    _io.write_csv(
        out / "domain_sizes.csv",
        ["domain_id", "sign", "area_nm2", "equivalent_diameter_nm"],
        [
            (k, int(signs[k]), float(areas[k]), float(2 * np.sqrt(areas[k] / np.pi)))
            for k in range(1, signs.size)
        ],
    )
    _io.write_json(out / "image_analysis.json", result)
    if return_arrays:
        return result, {"image": img, "valid": valid, "labels": labels, "r_nm": r, "C": c,
                        "fit": fit, "pixel_nm": pixel_nm}
    return result
