"""PNG figures of a temperature sweep (observables, lengths, domain sizes, snapshots) with
their captions in ``captions.md``."""

from pathlib import Path

import numpy as np

from thinfilm.input.errors import InputError

from .captions import definition_list, write_captions
from .layout import MARKERS, OKABE_ITO, new_figure, note, save_png, shared_legend, split_unit
from .rundir import read_json, read_table
from .sweep_domain_plots import _distributions, _snapshots, log_histogram

__all__ = ["plot_sweep", "log_histogram"]

#: (column, panel title, axis symbol, caption symbol, default unit, default definition)
THERMO = (
    ("m_abs", "order parameter", r"$\langle|m|\rangle$", "⟨|m|⟩", "per spin",
     "mean absolute magnetisation along the order axis"),
    ("susceptibility", "susceptibility", r"$\chi$", "χ", "1/meV per spin",
     "N(<m^2>-<|m|>^2)/(kB T)"),
    ("specific_heat", "specific heat", "$C$", "C", "kB per spin", "N(<e^2>-<e>^2)/(kB T)^2"),
    ("binder", "Binder cumulant", "$U_4$", "U₄", "dimensionless", "1 - <m^4>/(3<m^2>^2)"),
)
T_LABEL = "T (K)"
SIZES = "one curve per lattice size L (a film of L x L cells); error bars: standard errors"


def _tc_text(tc, tex=True):
    """'Tc = 2.45 ± 0.05 K (binder crossing)', or None without a finite Tc."""
    if not tc or tc.get("tc_K") is None or not np.isfinite(float(tc["tc_K"])):
        return None
    from thinfilm.analysis.tc_rule import tc_text

    return tc_text(tc, pm="±", symbol="$T_c$" if tex else "Tc")


def _tc_caption(tc):
    text = _tc_text(tc, tex=False)
    if not text and tc and tc.get("message"):  # the sweep does not determine Tc: say why
        return f" No Tc line: {tc['message']}"
    return f" Dashed vertical line: {text}; grey band: its error." if text else ""


def _mark_tc(ax, tc):
    lab = _tc_text(tc)
    if lab is None:
        return
    t, e = float(tc["tc_K"]), float(tc.get("tc_err_K") or 0.0)
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
    ax.set_xlabel(T_LABEL)
    if col not in table or not np.isfinite(table[col]).any():
        note(ax, f"no '{col}' data in observables.csv")
        return False
    for k, (size, sel) in enumerate(_by_size(table)):
        t, y = table["temperature_K"][sel], table[col][sel]
        err = table.get(col + "_err")
        err = err[sel] if err is not None else None
        if transform is not None:
            y, err = transform(y, err)
        o = np.argsort(t)
        ax.errorbar(t[o], y[o], yerr=None if err is None else err[o], color=OKABE_ITO[k % 8],
                    marker=MARKERS[k % 8], ms=4, lw=1.2, capsize=2,
                    label=f"L = {size}" if size is not None else None)
    ax.set_ylabel(ylabel)
    return True


def _equivalent_diameter(area, err):
    # d = 2 sqrt(A / pi); first-order error propagation, sigma_d = d sigma_A / (2 A)
    # (J. R. Taylor, An Introduction to Error Analysis, 2nd ed., Sec. 3.8)
    area = np.where(area > 0, area, np.nan)
    d = 2.0 * np.sqrt(area / np.pi)
    return d, (None if err is None else d * err / (2.0 * area))



def _thermodynamics(table, tc, units, path):
    fig, axes = new_figure(2, 2, 4.2, 3.3, sharex=True)
    items, drawn = [], []
    for ax, (col, title, sym, word, unit, text) in zip(axes, THERMO, strict=True):
        unit, definition = split_unit(units.get(col), unit)
        drawn.append(_curves(ax, table, col, tc, f"{sym} ({unit})"))
        ax.set_title(title, fontsize=10)
        items.append((word, unit, f"{title}, {definition or text}"))
    if not any(drawn):
        return None
    for ax, ok in zip(axes, drawn, strict=True):
        if ok:
            _mark_tc(ax, tc)
        if not ax.get_subplotspec().is_last_row():
            ax.set_xlabel("")  # shared T axis: labelled on the bottom row
    shared_legend(fig)
    caption = (f"Thermodynamic observables against the temperature T (K), {SIZES}."
               f"{_tc_caption(tc)}\n\n" + definition_list(items))
    return save_png(fig, path), caption


def _has(table, col):
    return col in table and np.isfinite(table[col]).any()


#: Values of positive lengths spanning more than this factor are drawn on a log axis.
LOG_SPAN = 30.0


def _length_panel(ax, table, col, transform=None, limited=None):
    """Error-bar curves of a length against T, one per size, that say where it is missing.

    Filled markers: converged in the film size (or no flag in the table); open markers:
    finite-size limited (``limited`` True for the row). A value of 0 (the second moment where
    noise puts S(0) at or below S(k_min)) is drawn as a downward triangle at its error (an
    upper bound); a NaN value as a cross on the bottom edge. Returns counts {"limited",
    "zero", "undefined"} of rows drawn that way and "values" (the positive values drawn), or
    None when the column is missing.
    """
    from matplotlib.transforms import blended_transform_factory

    ax.set_xlabel(T_LABEL)
    if col not in table:
        note(ax, f"no '{col}' data in observables.csv")
        return None
    counts = {"limited": 0, "zero": 0, "undefined": 0}
    edge = blended_transform_factory(ax.transData, ax.transAxes)
    positive = []
    for k, (size, sel) in enumerate(_by_size(table)):
        t, y = table["temperature_K"][sel], table[col][sel]
        err = table.get(col + "_err")
        err = err[sel] if err is not None else np.full(y.shape, np.nan)
        if transform is not None:
            y, err = transform(y, err)
            err = np.full(y.shape, np.nan) if err is None else err
        lim = np.zeros(y.shape, bool) if limited is None else limited[sel]
        o = np.argsort(t)
        t, y, err, lim = t[o], y[o], err[o], lim[o]
        colour, marker = OKABE_ITO[k % 8], MARKERS[k % 8]
        label = f"L = {size}" if size is not None else None
        ok = np.isfinite(y) & (y > 0)
        positive.append(y[ok])
        ax.plot(t[ok], y[ok], color=colour, lw=1.2, label=label)
        for mask, face in ((ok & ~lim, colour), (ok & lim, "white")):
            if mask.any():
                ax.errorbar(t[mask], y[mask], yerr=np.where(np.isfinite(err[mask]), err[mask], 0),
                            fmt=marker, color=colour, mfc=face, ms=4.5, capsize=2, lw=1.0)
        counts["limited"] += int((ok & lim).sum())
        zero = np.isfinite(y) & (y <= 0) & np.isfinite(err) & (err > 0)
        if zero.any():
            ax.plot(t[zero], err[zero], "v", color=colour, mfc="white", ms=5)
            positive.append(err[zero])
            counts["zero"] += int(zero.sum())
        nan = ~np.isfinite(y)
        if nan.any():
            ax.plot(t[nan], np.full(nan.sum(), 0.03), "x", color=colour, ms=6, mew=1.5,
                    transform=edge, clip_on=False)
            counts["undefined"] += int(nan.sum())
    counts["values"] = np.concatenate(positive) if positive else np.array([])
    if not counts["values"].size:
        note(ax, f"'{col}' is undefined at every point (crosses)")
    return counts


def _marks_caption(counts, undefined_why):
    """Caption sentences for the marks of :func:`_length_panel` that the figure holds."""
    out = []
    if counts["limited"]:
        out.append("Open markers: finite-size limited (the film side is below 10 x the largest "
                   "length estimate, and no next larger converged size agrees with it within 2 "
                   "errors resolving 15 %): a length of that film, "
                   "cut down by its box, not of the infinite film; filled markers: converged in "
                   "the film size (observables.csv correlation_length_converged).")
    if counts["zero"]:
        out.append("Downward triangles: the second moment is 0 there (noise put S(0) at or "
                   "below S(k_min): the length is below what the samples resolve); drawn at "
                   "its error, an upper bound.")
    if counts["undefined"]:
        out.append("Crosses on the bottom edge: undefined at that temperature and size, "
                   + undefined_why)
    return (" " + " ".join(out)) if out else ""


UNDEFINED_WHY = (
    "for the second moment where S(k_min) = 0 (a uniform film) or on open edges where C(r) has "
    "no positive moment (point.json second_moment_undefined gives the reason per point); for "
    "the fit of S(k) where the small-k modes give no positive slope and intercept of 1/S "
    "against k^2 (the film is ordered or xi is below the spacing); for the domain diameter "
    "where no snapshot has a domain boundary. Points without error bars have an undefined "
    "error (fewer than two snapshots or blocks, or a jackknife replicate where the fit is "
    "undefined).")


def _lengths(table, tc, units, resolution_nm, path):
    fig, axes = new_figure(1, 3, 4.2, 3.6, sharex=True)
    xi_unit, xi_def = split_unit(units.get("correlation_length_nm"), "nm")
    sk_unit, sk_def = split_unit(units.get("correlation_length_sk_nm"), "nm")
    ins_def = split_unit(units.get("correlation_length_instrument_nm"), "nm")[1]
    a_def = split_unit(units.get("mean_domain_area_nm2"), "nm^2")[1]
    conv = table.get("correlation_length_converged")
    limited = None if conv is None else conv == 0
    drawn = [_length_panel(axes[0], table, "correlation_length_nm", limited=limited),
             _length_panel(axes[1], table, "correlation_length_sk_nm", limited=limited),
             _length_panel(axes[2], table, "mean_domain_area_nm2",
                           transform=_equivalent_diameter)]
    for ax, title, unit in zip(axes, ("ξ, second moment", "ξ, fit of S(k)", "domain diameter"),
                               (xi_unit, sk_unit, "nm"), strict=True):
        ax.set_title(title, fontsize=10)
        ax.set_ylabel(("d" if title.startswith("domain") else r"$\xi$") + f" ({unit})")
    if all(d is None for d in drawn):
        return None
    counts = {k: sum(d[k] for d in drawn if d) for k in ("limited", "zero", "undefined")}
    lines = [("ξ, second moment", xi_unit, xi_def or "second-moment correlation length")]
    if _has(table, "correlation_length_instrument_nm"):
        for k, (_size, sel) in enumerate(_by_size(table)):
            t = table["temperature_K"][sel]
            o = np.argsort(t)
            yi = table["correlation_length_instrument_nm"][sel][o]
            keep = np.isfinite(yi) & (yi > 0)
            axes[0].plot(t[o][keep], yi[keep], ls="--", color=OKABE_ITO[k % 8], lw=1.0)
        # one legend entry for the dashed curves of every size
        axes[0].plot([], [], ls="--", color="0.4", lw=1.0, label="instrument view (dashed)")
        lines.append(("ξ, instrument view (dashed, same colour per size)", "nm",
                      ins_def or "the same estimator on the instrument view of the film"))
    lines += [("ξ, fit of S(k)", sk_unit, sk_def or "Ornstein-Zernike fit of S(k)"),
              ("d", "nm", "equivalent diameter 2 sqrt(A/π) of the mean domain area A"
               + (f" ({a_def})" if a_def else "") + "; error propagated from that of A")]
    res = ""
    if resolution_nm is not None:
        for ax in axes:
            if ax.lines or ax.collections:
                ax.axhline(float(resolution_nm), color="#000000", ls=":", lw=1.5,
                           label=f"resolution {float(resolution_nm):g} nm")
        res = f" Dotted horizontal line: the instrument resolution ({float(resolution_nm):g} nm)."
    for ax, d in zip(axes, drawn, strict=True):
        vals = np.array([]) if d is None else d["values"]
        if resolution_nm is not None and vals.size:
            vals = np.append(vals, float(resolution_nm))
        if vals.size and vals.max() > LOG_SPAN * vals.min():
            ax.set_yscale("log")
        if ax.lines or ax.collections:
            _mark_tc(ax, tc)
    for n, mark, face, text in ((counts["limited"], "o", "white", "open: finite-size limited"),
                                (counts["zero"], "v", "white", "0 (at its error, an upper bound)"),
                                (counts["undefined"], "x", "0.3", "undefined")):
        if n:  # one legend entry per kind of mark, in grey (colours are the sizes)
            axes[0].plot([], [], mark, color="0.3", mfc=face, ms=5, label=text)
    shared_legend(fig)
    logs = [t for ax, t in zip(axes, ("ξ, second moment", "ξ, fit of S(k)", "d"), strict=True)
            if ax.get_yscale() == "log"]
    log_text = (f" Logarithmic length axis ({', '.join(logs)}): the values (with the "
                f"resolution line) span more than a factor {LOG_SPAN:g}." if logs else "")
    caption = (f"Lengths against the temperature T (K), {SIZES}.{res}{_tc_caption(tc)}"
               f"{log_text}{_marks_caption(counts, UNDEFINED_WHY)}\n\n"
               + definition_list(lines))
    return save_png(fig, path), caption


def plot_sweep(run_dir, out_dir=None, *, resolution_nm=None, temperatures=None,
               lattice_size=None, max_snapshots=6):
    """Plot a temperature sweep folder into PNG files and their ``captions.md``.

    Parameters
    ----------
    run_dir : path
        Sweep folder with ``observables.csv`` and optionally ``tc.json``, ``columns.json``
        ({column: "unit, definition"}), ``manifest.json`` and ``points/L{size}_T{T:.3f}K/``.
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
        column is missing carry a note instead of curves. ``captions.md`` in the same folder
        defines the quantity on each axis.
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
    written = [
        _thermodynamics(table, tc, units, out_dir / "sweep_thermodynamics.png"),
        _lengths(table, tc, units, resolution_nm, out_dir / "sweep_lengths.png"),
        _distributions(run_dir, lattice_size, temperatures, out_dir / "sweep_domain_sizes.png"),
        _snapshots(run_dir, lattice_size, temperatures, max_snapshots,
                   out_dir / "sweep_snapshots.png"),
    ]
    written = [w for w in written if w is not None]
    if written:
        write_captions(out_dir, {p.name: caption for p, caption in written})
    return [p for p, _ in written]
