"""Figure of an image series against temperature: lengths, domain sizes, stripes and walls."""

import numpy as np

from thinfilm.analysis.image_series import analyse_series

from .captions import definition_list, write_captions
from .layout import MARKERS, OKABE_ITO, new_figure, save_png, shared_legend

__all__ = ["plot_series", "write_image_series"]


def _eb(ax, t, table, col, k, label):
    y = np.asarray(table[col], dtype=float)
    err = table.get(col + "_err")
    e = None if err is None else np.nan_to_num(np.asarray(err, dtype=float))
    ax.errorbar(t, y, e, fmt=MARKERS[k] + "-", ms=4, lw=1, color=OKABE_ITO[k], label=label,
                capsize=2)


def plot_series(table, out_dir, name="image_series.png"):
    """Four panels against temperature (K): correlation lengths; domain size; period and
    stripe order; wall length per area. Writes the PNG and its section of captions.md."""
    t = np.asarray(table["temperature_K"], dtype=float)
    fig, axes = new_figure(2, 2, 4.0, 2.9, sharex=True)
    ax = axes[0]
    _eb(ax, t, table, "correlation_length_nm", 0, r"$\xi$ second moment")
    _eb(ax, t, table, "correlation_length_fit_nm", 1, r"$\xi$ Ornstein-Zernike fit")
    ax.set_ylabel(r"$\xi$ (nm)")
    ax.set_title("correlation length", fontsize=9)
    ax = axes[1]
    d = {"d": 2 * np.sqrt(np.asarray(table["mean_domain_area_nm2"], dtype=float) / np.pi),
         "d_err": np.asarray(table["mean_domain_area_nm2_err"], dtype=float)
         / np.sqrt(np.pi * np.asarray(table["mean_domain_area_nm2"], dtype=float))}
    _eb(ax, t, d, "d", 2, "mean domain: equivalent diameter")
    typ = 2 * np.sqrt(np.asarray(table["typical_domain_area_nm2"], dtype=float) / np.pi)
    ax.plot(t, typ, MARKERS[3] + "--", ms=4, lw=1, color=OKABE_ITO[3],
            label="typical domain: area-weighted diameter")
    ax.set_yscale("log")
    ax.set_ylabel("diameter (nm)")
    ax.set_title("domain size", fontsize=9)
    ax = axes[2]
    _eb(ax, t, table, "period_nm", 4, "period (structure-factor peak)")
    ax.set_ylabel("period (nm)")
    ax.set_title("period and stripe order", fontsize=9)
    if not np.isfinite(np.asarray(table["period_nm"], dtype=float)).any():
        ax.text(0.5, 0.6, "period not determined:\nno peak of S(k) in any image",
                ha="center", va="center", transform=ax.transAxes, fontsize=8)
        ax.set_yticks([])
    tw = ax.twinx()
    _eb(tw, t, table, "stripe_order", 5, "stripe order Q (right axis)")
    tw.set_ylim(0, 1.05)
    tw.set_ylabel("Q")
    ax = axes[3]
    _eb(ax, t, table, "wall_length_per_area_per_um", 6, "wall length per area")
    ax.set_ylabel(r"wall length / area ($\mu$m$^{-1}$)")
    ax.set_title("domain walls", fontsize=9)
    for ax in axes[2:]:
        ax.set_xlabel("T (K)")
    shared_legend(fig)
    path = save_png(fig, f"{out_dir}/{name}")
    write_captions(out_dir, {name: "Image series against the sample temperature T (K), error "
                             "bars as listed in image_series.json.\n\n" + definition_list([
                                 ("xi", "nm", "correlation length of the normalised contrast: "
                                  "second moment of S(k) and 2D Ornstein-Zernike fit of C(r)"),
                                 ("diameter", "nm", "2 sqrt(area / pi) of the mean domain area "
                                  "and of the area-weighted mean area"),
                                 ("period", "nm", "2 pi / k at the peak ring of S(k)"),
                                 ("Q", "1", "nematic stripe order from S(k): 1 parallel stripes, "
                                  "near 0 labyrinths"),
                                 ("wall length / area", "1/um", "opposite-sign pixel pairs x "
                                  "pixel x pi/4 per valid area")])})
    return path


def write_image_series(rows, out_dir, **options):
    """:func:`thinfilm.analysis.image_series.analyse_series` and its figure
    ``image_series.png``; returns its dict with ``figure`` (the PNG path) added."""
    res = analyse_series(rows, out_dir, **options)
    res["figure"] = plot_series(res["table"], out_dir)
    return res
