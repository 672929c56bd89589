"""Shared figure layout: constrained panels, one legend outside the data, readable log ticks.

Sizes are in inches, font sizes in points, dpi in dots per inch.
"""

import io
import math
import re

from thinfilm._io import atomic_write_bytes

__all__ = ["OKABE_ITO", "MARKERS", "new_figure", "shared_legend", "note", "split_unit",
           "tidy_log_ticks", "save_png"]

# Okabe & Ito (2008), "Color Universal Design": colour-blind-safe line colours (yellow last)
OKABE_ITO = ("#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#000000", "#F0E442")
MARKERS = ("o", "s", "^", "D", "v", "P", "X", "*")
LEGEND_FONTSIZE = 8


def new_figure(nrows=1, ncols=1, w=4.2, h=3.2, **subplots):
    """Figure of ``nrows`` x ``ncols`` panels of about ``w`` x ``h`` inches each (constrained
    layout); returns the figure and the flat array of axes."""
    from matplotlib.figure import Figure

    fig = Figure(figsize=(w * ncols, h * nrows), layout="constrained")
    axes = fig.subplots(nrows, ncols, squeeze=False, **subplots)
    return fig, axes.ravel()


def _plain(label):
    """Label text without mathtext markup, to estimate its printed width."""
    return re.sub(r"\\[a-zA-Z]+|[${}^_]", "", label)


def _columns_fit(labels, ncols, width_in):
    """Whether ``labels`` in ``ncols`` legend columns fit the width (inches)."""
    em = LEGEND_FONTSIZE / 72.0
    # matplotlib fills columns in order; the first len % ncols columns hold one entry more
    rows, n_long = divmod(len(labels), ncols)
    sizes = [rows + 1] * n_long + [rows] * (ncols - n_long)
    starts = [sum(sizes[:k]) for k in range(ncols)]
    cols = [labels[a : a + n] for a, n in zip(starts, sizes, strict=True) if n]
    # per column: handle 2 em, padding 0.8 em, spacing 2 em; text about 0.6 em per character
    need = sum(em * (4.8 + 0.6 * max(len(_plain(lab)) for lab in col)) for col in cols)
    return need <= 0.9 * width_in


def shared_legend(fig, where="lower", ncols=None):
    """One legend for the whole figure, outside the panels (``where``: "lower" or "upper").

    Collects the labelled artists of every panel (the first of equal labels wins; error-bar
    curves first, then the other artists in drawing order) and uses as many columns as fit
    the figure width. Returns the legend, or None without labels.
    """
    entries = {}
    for ax in fig.axes:
        handles, labels = ax.get_legend_handles_labels()
        for handle, label in zip(handles, labels, strict=True):
            entries.setdefault(label, handle)
    if not entries:
        return None
    from matplotlib.container import Container

    order = sorted(entries, key=lambda lab: not isinstance(entries[lab], Container))
    if ncols is None:
        ncols = next(n for n in range(len(order), 0, -1)
                     if n == 1 or _columns_fit(order, n, fig.get_figwidth()))
    return fig.legend([entries[lab] for lab in order], order, loc=f"outside {where} center",
                      ncols=ncols, fontsize=LEGEND_FONTSIZE, frameon=False)


def note(ax, text):
    """Replace a panel's curves by a centred note (the x axis stays, the y ticks go)."""
    ax.text(0.5, 0.5, text, ha="center", va="center", transform=ax.transAxes, fontsize=8,
            wrap=True)
    ax.set_yticks([])


def split_unit(description, default, max_len=16):
    """(unit, definition) of a column description "unit, definition" (columns.json style).

    A missing or long unit (more than ``max_len`` characters) gives ``default``.
    """
    if not description:
        return default, ""
    unit, _, rest = str(description).partition(",")
    unit = unit.strip()
    return (unit if 0 < len(unit) <= max_len else default), rest.strip()


def _tick_text(v):
    if 1e-3 <= abs(v) < 1e4:
        return f"{v:g}"
    e = math.floor(math.log10(abs(v)) + 1e-9)
    m = v / 10.0**e
    return f"$10^{{{e}}}$" if abs(m - 1) < 1e-6 else f"${m:g}\\times10^{{{e}}}$"


def tidy_log_ticks(ax):
    """Log axes spanning fewer than two decades: labels at 1, 2, 5 x 10^n (or at evenly spaced
    values in narrower ranges) and no minor labels, which otherwise run into each other."""
    from matplotlib.ticker import FixedLocator, FuncFormatter, MaxNLocator, NullFormatter

    for axis, lim in ((ax.xaxis, ax.get_xlim()), (ax.yaxis, ax.get_ylim())):
        lo, hi = sorted(lim)
        if axis.get_scale() != "log" or lo <= 0 or hi / lo >= 100:
            continue
        e0, e1 = math.floor(math.log10(lo)), math.ceil(math.log10(hi))
        ticks = [m * 10.0**e for e in range(e0, e1 + 1) for m in (1, 2, 5)
                 if lo <= m * 10.0**e <= hi]
        if len(ticks) < 2:
            ticks = [v for v in MaxNLocator(nbins=4).tick_values(lo, hi) if lo <= v <= hi]
        if len(ticks) >= 2:
            axis.set_major_locator(FixedLocator(ticks))
            axis.set_major_formatter(FuncFormatter(lambda v, _pos: _tick_text(v)))
            axis.set_minor_formatter(NullFormatter())


def save_png(fig, path, dpi=110):
    """Write ``fig`` to ``path`` as PNG at ``dpi`` (atomically); returns the path."""
    for ax in fig.axes:
        tidy_log_ticks(ax)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi)
    data = buf.getvalue()
    if not data:
        raise RuntimeError(f"matplotlib wrote an empty PNG for {path}")
    return atomic_write_bytes(path, data)
