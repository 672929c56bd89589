"""PNG plots of a temperature sweep (observables, lengths, domains, snapshots) and of a run."""

import io
from pathlib import Path

import numpy as np

from thinfilm._io import atomic_write_bytes
from thinfilm.input.errors import InputError
from thinfilm.render.frames import DIVERGING_CMAP, colour_frame
from thinfilm.render.rundir import load_snapshot, read_json, read_table, sweep_points

__all__ = ["plot_sweep", "plot_timeseries", "log_histogram", "OKABE_ITO"]

# Okabe & Ito (2008), "Color Universal Design": colour-blind-safe line colours (yellow last)
OKABE_ITO = ("#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#000000", "#F0E442")
MARKERS = ("o", "s", "^", "D", "v", "P", "X", "*")
THERMO = (
    ("m_abs", r"order parameter $\langle|m|\rangle$"),
    ("susceptibility", r"susceptibility $\chi$"),
    ("specific_heat", r"specific heat $C$"),
    ("binder", r"Binder cumulant $U_4$"),
)


def _label(col, text, units):
    unit = (units or {}).get(col)
    return f"{text} ({unit})" if unit else text


def _save(fig, path):
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=110)
    data = buf.getvalue()
    if not data:
        raise RuntimeError(f"matplotlib wrote an empty PNG for {path}")
    return atomic_write_bytes(path, data)


def _figure(nrows, ncols, w=4.2, h=3.2):
    from matplotlib.figure import Figure

    # fixed margins (in inches, so they hold for any grid) instead of a layout engine: the
    # constrained layout doubled the drawing time
    fw, fh = w * ncols, h * nrows
    fig = Figure(figsize=(fw, fh))
    axes = fig.subplots(nrows, ncols, squeeze=False)
    fig.subplots_adjust(
        left=0.85 / fw,
        right=1 - 0.2 / fw,
        bottom=0.6 / fh,
        top=1 - 0.35 / fh,
        wspace=1.1 / w,
        hspace=0.85 / h,
    )
    return fig, axes.ravel()


def _note(ax, text):
    ax.text(0.5, 0.5, text, ha="center", va="center", transform=ax.transAxes, fontsize=9, wrap=True)
    ax.set_xticks([])
    ax.set_yticks([])


def _mark_tc(ax, tc):
    if not tc or tc.get("tc_K") is None or not np.isfinite(float(tc["tc_K"])):
        return
    t, e = float(tc["tc_K"]), float(tc.get("tc_err_K") or 0.0)
    lab = f"$T_c$ = {t:.4g} K" + (f" $\\pm$ {e:.2g} K" if e > 0 else "")
    if tc.get("method"):
        lab += f" ({tc['method']})"
    if e > 0:
        ax.axvspan(t - e, t + e, color="0.6", alpha=0.3, lw=0)
    ax.axvline(t, color="0.3", ls="--", lw=1, label=lab)


def _by_size(table):
    sizes = table.get("size")
    if sizes is None:
        return [(None, np.ones(len(table["temperature_K"]), bool))]
    return [(int(s), sizes == s) for s in np.unique(sizes[np.isfinite(sizes)])]


def _curves(ax, table, col, tc, ylabel, transform=None):
    """Error-bar curves of ``col`` vs T, one per size; returns False (with a note) if missing."""
    if col not in table or not np.isfinite(table[col]).any():
        _note(ax, f"no '{col}' data in observables.csv")
        return False
    for k, (size, sel) in enumerate(_by_size(table)):
        t, y = table["temperature_K"][sel], table[col][sel]
        err = table.get(col + "_err")
        err = err[sel] if err is not None else None
        if transform is not None:
            y, err = transform(y, err)
        o = np.argsort(t)
        ax.errorbar(
            t[o],
            y[o],
            yerr=None if err is None else err[o],
            color=OKABE_ITO[k % 8],
            marker=MARKERS[k % 8],
            ms=4,
            lw=1.2,
            capsize=2,
            label=f"L = {size}" if size is not None else None,
        )
    _mark_tc(ax, tc)
    ax.set_xlabel("temperature T (K)")
    ax.set_ylabel(ylabel)
    if ax.get_legend_handles_labels()[0]:
        ax.legend(fontsize=7)
    return True


def _equivalent_diameter(area, err):
    # d = 2 sqrt(A / pi); first-order error propagation, sigma_d = d sigma_A / (2 A)
    # (J. R. Taylor, An Introduction to Error Analysis, 2nd ed., Sec. 3.8)
    area = np.where(area > 0, area, np.nan)
    d = 2.0 * np.sqrt(area / np.pi)
    return d, (None if err is None else d * err / (2.0 * area))


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


def _plot_distributions(run_dir, size, temperatures, path):
    pts = sweep_points(run_dir, "domain_sizes.csv")
    if not pts:
        return None
    size = max(pts) if size is None or size not in pts else size
    fig, (ax,) = _figure(1, 1, 5.0, 3.8)
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
        ax.loglog(
            mid[keep],
            dens[keep],
            marker=MARKERS[k % 8],
            color=OKABE_ITO[k % 8],
            lw=1,
            ms=4,
            label=f"T = {t:.4g} K ({a.size} domains)",
        )
        drawn += 1
    if not drawn:
        return None
    ax.set_xlabel(r"domain area A (nm$^2$)")
    ax.set_ylabel(r"probability density P(A) (1/nm$^2$)")
    ax.set_title(f"Domain-size distributions, L = {size}", fontsize=10)
    ax.legend(fontsize=7)
    return _save(fig, path)


def _plot_snapshots(run_dir, size, temperatures, n_max, path):
    pts = sweep_points(run_dir, "final.npz")
    if not pts:
        return None
    size = max(pts) if size is None or size not in pts else size
    chosen = _pick(pts[size], temperatures, n_max)
    ncols = min(3, len(chosen))
    nrows = -(-len(chosen) // ncols)
    fig, axes = _figure(nrows, ncols, 3.2, 3.0)
    for ax, (t, p) in zip(axes, chosen, strict=False):
        snap = load_snapshot(p)
        box = snap.get("box_nm")
        if box is None:
            box = np.array(snap["spins"].shape[1::-1], float) * snap.get("spacing_nm", 1.0)
        nx = snap["spins"].shape[1]
        pix = None if snap["shape"] == "square" else float(box[0]) / min(1024, max(240, 8 * nx))
        img = colour_frame(
            snap["spins"],
            colour="mz",
            shape=snap["shape"],
            pixel_nm=pix,
            positions_nm=snap.get("positions_nm"),
            box_nm=box,
            periodic=snap["periodic"],
        )
        ax.imshow(img, extent=(0, box[0], 0, box[1]), interpolation="nearest")
        ax.set_title(f"T = {t:.4g} K", fontsize=9)
        ax.set_xlabel("x (nm)")
        ax.set_ylabel("y (nm)")
    for ax in axes[len(chosen) :]:
        ax.set_axis_off()
    from matplotlib.cm import ScalarMappable
    from matplotlib.colors import Normalize

    sm = ScalarMappable(norm=Normalize(-1, 1), cmap=DIVERGING_CMAP)
    fig.colorbar(
        sm, ax=list(axes[: len(chosen)]), label=r"$m_z$ (order-axis component)", shrink=0.8
    )
    return _save(fig, path)


def plot_sweep(
    run_dir,
    out_dir=None,
    *,
    resolution_nm=None,
    temperatures=None,
    lattice_size=None,
    max_snapshots=6,
):
    """Plot a temperature sweep folder into PNG files.

    Parameters
    ----------
    run_dir : path
        Sweep folder with ``observables.csv`` and optionally ``tc.json``, ``columns.json``
        ({column: unit}), ``manifest.json`` and ``points/L{size}_T{T:.3f}K/``.
    out_dir : path, optional
        Where to write the PNGs (default ``run_dir/plots``).
    resolution_nm : float, optional
        Instrument resolution drawn as a horizontal line on the length plots (default
        ``manifest["instrument"]["resolution_nm"]`` when present).
    temperatures : sequence of float, optional
        Temperatures (K) for the domain-size distributions and snapshot panel (nearest
        available point); default: spread over the sweep.
    lattice_size : int, optional
        Size L for the distributions and snapshots (default: the largest).
    max_snapshots : int
        Largest number of snapshot maps in the panel.

    Returns
    -------
    list of Path
        ``sweep_thermodynamics.png`` (|m|, chi, C, U4 vs T per size, Tc band), ``sweep_lengths.png``
        (correlation length and equivalent domain diameter in nm), ``sweep_domain_sizes.png``
        and ``sweep_snapshots.png``; figures without any data are left out, panels whose
        column is missing carry a note instead of curves.
    """
    run_dir = Path(run_dir)
    if not run_dir.is_dir():
        raise InputError(
            f"Sweep folder {run_dir} does not exist or is not a folder; give the folder a "
            "temperature sweep wrote (with observables.csv)."
        )
    if not (run_dir / "observables.csv").is_file():
        raise InputError(
            f"Sweep folder {run_dir} has no observables.csv; plot_sweep needs that table "
            "(columns size, temperature_K, m_abs, ...), written at the end of a sweep."
        )
    table = read_table(run_dir / "observables.csv")
    if "temperature_K" not in table or not len(table["temperature_K"]):
        raise InputError(
            f"{run_dir / 'observables.csv'} has no 'temperature_K' column or no rows; "
            "a sweep table needs one row per (size, temperature)."
        )
    tc = read_json(run_dir / "tc.json")
    manifest = read_json(run_dir / "manifest.json") or {}
    units = read_json(run_dir / "columns.json") or manifest.get("columns") or {}
    if resolution_nm is None:
        resolution_nm = (manifest.get("instrument") or {}).get("resolution_nm")
    out_dir = Path(out_dir) if out_dir is not None else run_dir / "plots"
    out = []

    fig, axes = _figure(2, 2)
    drawn = [
        _curves(ax, table, c, tc, _label(c, lab, units))
        for ax, (c, lab) in zip(axes, THERMO, strict=True)
    ]
    if any(drawn):
        out.append(_save(fig, out_dir / "sweep_thermodynamics.png"))

    fig, axes = _figure(1, 3)
    ok = _curves(axes[0], table, "correlation_length_nm", tc,
                 r"$\xi$ (nm), second moment; dashed: instrument view")
    ok += _curves(axes[1], table, "correlation_length_sk_nm", tc,
                  r"$\xi$ (nm), Ornstein-Zernike fit of S(k)")
    if "correlation_length_instrument_nm" in table and np.isfinite(
            table["correlation_length_instrument_nm"]).any():
        for k, (size, sel) in enumerate(_by_size(table)):
            t = table["temperature_K"][sel]
            o = np.argsort(t)
            axes[0].plot(t[o], table["correlation_length_instrument_nm"][sel][o], ls="--",
                         color=OKABE_ITO[k % 8], lw=1.0,
                         label=f"L = {size}, instrument" if size is not None else "instrument")
        axes[0].legend(fontsize=7)
    ok += _curves(
        axes[2],
        table,
        "mean_domain_area_nm2",
        tc,
        "mean domain equivalent diameter (nm)",
        transform=_equivalent_diameter,
    )
    if ok:
        if resolution_nm is not None:
            for ax in axes:
                if ax.lines or ax.collections:
                    ax.axhline(
                        float(resolution_nm),
                        color="#000000",
                        ls=":",
                        lw=1.5,
                        label=f"instrument resolution {float(resolution_nm):g} nm",
                    )
                    ax.legend(fontsize=7)
        out.append(_save(fig, out_dir / "sweep_lengths.png"))

    p = _plot_distributions(run_dir, lattice_size, temperatures, out_dir / "sweep_domain_sizes.png")
    if p is not None:
        out.append(p)
    p = _plot_snapshots(
        run_dir, lattice_size, temperatures, max_snapshots, out_dir / "sweep_snapshots.png"
    )
    if p is not None:
        out.append(p)
    return out


def plot_timeseries(run_dir, out_dir=None):
    """Plot ``timeseries.csv`` of a dynamics run: magnetisation components and energy vs time.

    Parameters
    ----------
    run_dir : path
        Run folder with ``timeseries.csv`` (columns time_ps, mx, my, mz, energy_meV and
        optionally temperature_K, drawn when it changes).
    out_dir : path, optional
        Where to write the PNG (default ``run_dir/plots``).

    Returns
    -------
    list of Path
        ``[out_dir / "timeseries.png"]``.
    """
    run_dir = Path(run_dir)
    path = run_dir / "timeseries.csv"
    if not path.is_file():
        raise InputError(
            f"Run folder {run_dir} has no timeseries.csv; plot_timeseries needs the table a "
            "dynamics run writes (columns time_ps, mx, my, mz, energy_meV)."
        )
    tab = read_table(path)
    units = (read_json(run_dir / "manifest.json") or {}).get("columns") or {}
    if "time_ps" not in tab or not len(tab["time_ps"]):
        raise InputError(
            f"{path} has no 'time_ps' column or no rows; a time series needs the time in ps "
            "and one row per sample."
        )
    t = tab["time_ps"]
    temp = tab.get("temperature_K")
    show_t = temp is not None and np.isfinite(temp).any() and np.nanmax(temp) > np.nanmin(temp)
    fig, axes = _figure(3 if show_t else 2, 1, 6.0, 2.4)
    comps = [c for c in ("mx", "my", "mz", "m_axis") if c in tab]
    if comps:
        for k, c in enumerate(comps):
            lab = r"$m_\parallel$ (order axis)" if c == "m_axis" else f"$m_{c[1]}$"
            axes[0].plot(
                t, tab[c], color=OKABE_ITO[k], lw=1.2, label=lab, ls="--" if k == 3 else "-"
            )
        axes[0].set_ylabel("magnetisation m (per spin)")
        axes[0].legend(fontsize=7, ncols=4)
    else:
        _note(axes[0], "no mx, my, mz columns in timeseries.csv")
    if "energy_meV" in tab:
        axes[1].plot(t, tab["energy_meV"], color=OKABE_ITO[6], lw=1.2)
        axes[1].set_ylabel(f"energy ({units.get('energy_meV', 'meV')})")
    else:
        _note(axes[1], "no 'energy_meV' column in timeseries.csv")
    if show_t:
        axes[2].plot(t, temp, color=OKABE_ITO[1], lw=1.2)
        axes[2].set_ylabel("temperature T (K)")
    for ax in axes:
        ax.set_xlabel("time t (ps)")
    out_dir = Path(out_dir) if out_dir is not None else run_dir / "plots"
    return [_save(fig, out_dir / "timeseries.png")]
