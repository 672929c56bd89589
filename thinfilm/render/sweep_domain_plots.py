"""PNG figures of the domains of a temperature sweep: domain-size distributions and the final
spin states, each with its caption text; called by :func:`thinfilm.render.sweep_plots.plot_sweep`.
"""

import numpy as np

from thinfilm.input.errors import InputError

from .captions import definition_list
from .frames import DIVERGING_CMAP, colour_frame
from .layout import MARKERS, OKABE_ITO, new_figure, save_png, shared_legend
from .rundir import load_snapshot, read_table, sweep_points

__all__ = ["log_histogram"]


def log_histogram(areas, n_bins=None):
    """Probability density of positive sizes on logarithmic bins.

    Parameters
    ----------
    areas : array_like
        Positive domain areas (nm^2); non-finite and non-positive values are dropped.
    n_bins : int, optional
        Number of bins (default sqrt(N) + 1, between 2 and 19).

    Returns
    -------
    centres, density, counts : ndarray
        Geometric bin centres (nm^2), density P(A) (1/nm^2, integrates to 1 over the bins)
        and counts per bin.
    """
    a = np.asarray(areas, dtype=np.float64)
    a = a[np.isfinite(a) & (a > 0)]
    if a.size == 0:
        raise InputError("log_histogram needs at least one positive, finite area.")
    lo, hi = a.min(), a.max()
    if hi <= lo:
        lo, hi = lo / 1.5, hi * 1.5
    n = n_bins if n_bins else max(2, min(19, int(np.sqrt(a.size)) + 1))
    edges = np.logspace(np.log10(lo), np.log10(hi), n + 1)
    edges[0], edges[-1] = lo, hi  # exact ends, so the extreme values fall inside
    counts, _ = np.histogram(a, bins=edges)
    dens = counts / (a.size * np.diff(edges))
    return np.sqrt(edges[:-1] * edges[1:]), dens, counts


def _pick(items, temperatures, n):
    """Items (T, path) nearest to the requested temperatures, or n spread over the range."""
    if temperatures is None:
        idx = np.unique(np.rint(np.linspace(0, len(items) - 1, min(n, len(items)))).astype(int))
        return [items[i] for i in idx]
    ts = np.array([t for t, _ in items])
    return [items[int(np.argmin(np.abs(ts - float(t))))] for t in temperatures]


def _distributions(run_dir, size, temperatures, path):
    pts = sweep_points(run_dir, "domain_sizes.csv")
    if not pts:
        return None
    size = max(pts) if size is None or size not in pts else size
    fig, (ax,) = new_figure(1, 1, 5.0, 4.0)
    drawn = 0
    for k, (t, p) in enumerate(_pick(pts[size], temperatures, 4)):
        tab = read_table(p)
        if "area_nm2" not in tab:
            raise InputError(
                f"Domain-size table {p} has no 'area_nm2' column; it needs one row per domain "
                "with the domain area in nm^2."
            )
        a = tab["area_nm2"][np.isfinite(tab["area_nm2"]) & (tab["area_nm2"] > 0)]
        if a.size == 0:
            continue
        mid, dens, counts = log_histogram(a)
        keep = counts > 0
        ax.loglog(mid[keep], dens[keep], marker=MARKERS[k % 8], color=OKABE_ITO[k % 8], lw=1,
                  ms=4, label=f"T = {t:.4g} K ({a.size} domains)")
        drawn += 1
    if not drawn:
        return None
    ax.set_xlabel(r"A (nm$^2$)")
    ax.set_ylabel(r"P(A) (1/nm$^2$)")
    ax.set_title(f"domain sizes, L = {size}", fontsize=10)
    shared_legend(fig)
    caption = (f"Domain-size distributions of the lattice size L = {size} at a few "
               "temperatures; the legend gives each temperature and its number of domains.\n\n"
               + definition_list([
                   ("A", "nm²", "area of one up or down domain, from domain_sizes.csv"),
                   ("P(A)", "1/nm²", "probability density of A on logarithmic bins (it "
                    "integrates to 1), drawn at the geometric bin centres")]))
    return save_png(fig, path), caption


def _snapshots(run_dir, size, temperatures, n_max, path):
    pts = sweep_points(run_dir, "final.npz")
    if not pts:
        return None
    size = max(pts) if size is None or size not in pts else size
    chosen = _pick(pts[size], temperatures, n_max)
    ncols = min(3, len(chosen))
    nrows = -(-len(chosen) // ncols)
    fig, axes = new_figure(nrows, ncols, 3.2, 3.0)
    for ax, (t, p) in zip(axes, chosen, strict=False):
        snap = load_snapshot(p)
        box = snap.get("box_nm")
        if box is None:
            box = np.array(snap["spins"].shape[1::-1], float) * snap.get("spacing_nm", 1.0)
        nx = snap["spins"].shape[1]
        pix = None if snap["shape"] == "square" else float(box[0]) / min(1024, max(240, 8 * nx))
        img = colour_frame(snap["spins"], colour="mz", shape=snap["shape"], pixel_nm=pix,
                           positions_nm=snap.get("positions_nm"), box_nm=box,
                           periodic=snap["periodic"])
        ax.imshow(img, extent=(0, box[0], 0, box[1]), interpolation="nearest")
        ax.set_title(f"T = {t:.4g} K", fontsize=9)
        ax.set_xlabel("x (nm)")
        ax.set_ylabel("y (nm)")
    for ax in axes[len(chosen) :]:
        ax.set_axis_off()
    from matplotlib.cm import ScalarMappable
    from matplotlib.colors import Normalize

    sm = ScalarMappable(norm=Normalize(-1, 1), cmap=DIVERGING_CMAP)
    fig.colorbar(sm, ax=list(axes[: len(chosen)]), label=r"$m_z$ (per spin)", shrink=0.8)
    caption = (f"Final spin states of the lattice size L = {size} at a few temperatures (panel "
               "titles).\n\n" + definition_list([
                   ("x, y", "nm", "position in the film"),
                   ("m_z", "per spin", "colour scale, the spin component along the order axis from "
                    "-1 (down) to +1 (up)")]))
    return save_png(fig, path), caption
