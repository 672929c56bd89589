"""Figure of ``thinfilm image``: the image with its domain outlines, and C(r) with its fit."""

from pathlib import Path

import numpy as np

from .captions import definition_list, write_captions
from .layout import OKABE_ITO, new_figure, note, save_png

__all__ = ["plot_image_analysis", "domain_outlines", "analyse_image_with_figure"]


def analyse_image_with_figure(path, *, out_dir, **options):
    """:func:`thinfilm.analysis.imaging.analyse_image` plus ``image_analysis.png`` (the image
    with the domain outlines, C(r) with its fit) and its caption; returns the result dict."""
    from thinfilm.analysis.imaging import analyse_image

    res, arr = analyse_image(path, out_dir=out_dir, return_arrays=True, **options)
    plot_image_analysis(out_dir, arr["image"], arr["valid"], arr["labels"], arr["pixel_nm"],
                        (arr["r_nm"], arr["C"]), arr["fit"], res)
    return res


def domain_outlines(labels):
    """(ny, nx) bool: pixels whose right or lower neighbour belongs to another domain."""
    lab = np.asarray(labels)
    edge = np.zeros(lab.shape, dtype=bool)
    edge[:, :-1] |= lab[:, :-1] != lab[:, 1:]
    edge[:-1, :] |= lab[:-1, :] != lab[1:, :]
    return edge


def plot_image_analysis(out_dir, image, valid, labels, pixel_nm, correlation, fit, result,
                        *, name="image_analysis.png"):
    """Write ``out_dir/name`` and its section of ``captions.md``; returns the PNG path.

    ``image``: normalised contrast (threshold at 0); ``labels``: domain labels (0 = none);
    ``correlation``: (r_nm, C); ``fit``: the Ornstein-Zernike fit dict; ``result``: the JSON of
    :func:`thinfilm.analysis.imaging.analyse_image` (threshold, level, counts).
    """
    from scipy.special import k0

    out_dir = Path(out_dir)
    ny, nx = image.shape
    fig, (ax_img, ax_c) = new_figure(1, 2, 4.2, 3.8)
    extent = (0, nx * pixel_nm, ny * pixel_nm, 0)  # row 0 at the top, as the image is stored
    shown = np.where(valid, image, np.nan)
    im = ax_img.imshow(shown, cmap="gray", vmin=-1, vmax=1, extent=extent,
                       interpolation="nearest")
    edge = domain_outlines(labels) & valid
    over = np.zeros((ny, nx, 4))
    over[edge] = (0.90, 0.62, 0.0, 1.0)  # Okabe-Ito orange outlines
    ax_img.imshow(over, extent=extent, interpolation="nearest")
    ax_img.set_xlabel("x (nm)")
    ax_img.set_ylabel("y (nm)")
    cb = fig.colorbar(im, ax=ax_img, shrink=0.8)
    cb.set_label("contrast")
    r, c = (np.asarray(a, dtype=np.float64) for a in correlation)
    ok = np.isfinite(c)
    if ok.any():
        ax_c.plot(r[ok], c[ok], "o", ms=2.5, color=OKABE_ITO[0], label="C(r)")
    xi = fit.get("xi_nm")
    if xi is not None and np.isfinite(xi):
        lo, hi = fit["r_min_nm"], fit["r_max_nm"]
        rr = np.linspace(lo, hi, 200)
        ax_c.plot(rr, fit["amplitude"] * k0(rr / xi) + fit["offset"], "-", color=OKABE_ITO[1],
                  lw=1.5, label=f"OZ fit, ξ = {xi:.3g} nm")
        ax_c.axvspan(lo, hi, color=OKABE_ITO[1], alpha=0.08, lw=0)
        ax_c.legend(fontsize=8, loc="upper right")
    else:
        note(ax_c, "the Ornstein-Zernike fit failed")
    ax_c.axhline(0.0, color="0.6", lw=0.6)
    ax_c.set_xlabel("r (nm)")
    ax_c.set_ylabel("C(r)")
    png = save_png(fig, out_dir / name)
    how = ("Otsu's threshold of the grey levels" if result.get("threshold_method") == "otsu"
           else "the median grey level")
    lvl = result.get("level", 0.0)
    text = (f"Left: the image after background removal ({result.get('background')}), contrast "
            f"scaled to -1 .. 1 with {how} at 0; orange: outlines of the "
            f"{result.get('domain_count')} domains (pixels above the level {lvl:g} are up, "
            f"the others down"
            + (f", after Gaussian smoothing of {result['smoothing_nm']:g} nm"
               if result.get("smoothing_nm") else "")
            + "). Right: the radially averaged connected correlation of the contrast with the "
            "2D Ornstein-Zernike fit over the shaded range.")
    if result.get("warnings"):
        text += "\n\nWarning: " + " ".join(result["warnings"])
    items = [("x, y", "nm", "position in the image (row 0 at the top)"),
             ("contrast", "1", "background-removed grey level, threshold at 0, scaled to -1 .. 1"),
             ("r", "nm", "distance between two pixels"),
             ("C(r)", "contrast²", "⟨s(x) s(x + r)⟩ − ⟨s⟩², s the contrast"),
             ("ξ", "nm", "correlation length of the fit C(r) = A K0(r/ξ) + B")]
    write_captions(out_dir, {png.name: text + "\n\n" + definition_list(items)})
    return png
