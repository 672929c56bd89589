"""Measured curves beside a simulated sweep run folder: one table (compare.csv), one figure
(compare.png) on T and on T/Tc, and the fitted thermometer offset (compare.json; reported,
never applied). The offset itself: :func:`thinfilm.analysis.compare.thermometer_offset`."""

import json
import math
from pathlib import Path

import numpy as np

from thinfilm import _io
from thinfilm.analysis.compare import SIM_QUANTITIES, thermometer_offset
from thinfilm.input.errors import InputError

from .captions import write_captions
from .layout import OKABE_ITO, new_figure, note, save_png, shared_legend

__all__ = ["plot_compare", "read_simulation", "compare_run"]

LABELS = {"magnetisation": ("m (per spin)", "magnetisation"),
          "correlation_length_nm": (r"$\xi$ (nm)", "correlation length"),
          "mean_domain_area_nm2": (r"mean domain area (nm$^2$)", "mean domain area"),
          "period_nm": ("period (nm)", "domain period"),
          "stripe_order": ("stripe order Q", "stripe order")}


def plot_compare(sim, meas, offsets, info, out_dir, name="compare.png"):
    """One row per measured quantity: against T (K) and against T/Tc (each curve by its own Tc).
    Measured signals in arbitrary units are multiplied by the fitted scale s."""
    names = list(meas)
    fig, axes = new_figure(len(names), 2, 4.2, 2.8)
    tcs, tcm = info["simulated_tc_K"], info["measured_tc_K"]
    lines = []
    for r, q in enumerate(names):
        T, y, e, label, _ = meas[q]
        off = offsets.get(q, {})
        s = off.get("scale", 1.0)
        col = SIM_QUANTITIES[q]
        ys = sim["columns"].get(col)
        es = sim["columns"].get(col + "_err")
        ylab, title = LABELS[q]
        for c, ax in enumerate(axes[2 * r: 2 * r + 2]):
            if c == 1 and not (tcs and tcm):
                note(ax, "no reduced axis: Tc of the sample or of the run is unknown")
                ax.set_xlabel(r"$T/T_c$")
                continue
            xm = T / tcm if c else T
            xs = sim["temperature_K"] / tcs if c else sim["temperature_K"]
            ax.errorbar(xm, s * y, s * e, fmt="o", ms=3, lw=0.8, color=OKABE_ITO[0],
                        label="measured" + (" x s (fitted scale)" if s != 1.0 else ""))
            if ys is not None and np.isfinite(ys).any():
                ax.errorbar(xs, ys, None if es is None else np.nan_to_num(es), fmt="s-", ms=3,
                            lw=1, color=OKABE_ITO[1],
                            label=f"simulated (L = {sim['size']})")
            ax.set_xlabel(r"$T/T_c$ (each by its own $T_c$)" if c else "T (K)")
            ax.set_ylabel(ylab)
            ax.set_title(f"{title} against {'T/Tc' if c else 'T'}", fontsize=9)
        if "offset_K" in off:
            lines.append(f"{title}: thermometer offset dT = {off['offset_K']:.3g} +- "
                         f"{off['offset_err_K']:.2g} K (fitted, not applied)"
                         + (f", scale s = {off['scale']:.3g}" if s != 1.0 else ""))
        elif "note" in off:
            lines.append(f"{title}: no offset ({off['note']})")
    shared_legend(fig)
    path = save_png(fig, f"{out_dir}/{name}")
    tc_text = (f"Tc of the run {tcs:.4g} K" if tcs else "Tc of the run unknown") + ", " + (
        f"Tc of the sample {tcm:.4g} K" if tcm else "Tc of the sample unknown")
    write_captions(out_dir, {name: (
        "Measured curves (circles) beside the simulated sweep (squares, largest lattice) "
        f"against the temperature T (K, left) and the reduced temperature T/Tc (right; {tc_text})."
        " A measured signal in arbitrary units is multiplied by the scale s fitted with the "
        "offset. " + " ".join(lines))})
    return path


def read_simulation(run_dir):
    """Largest-size rows of a sweep run folder and its Tc.

    Returns
    -------
    dict
        temperature_K (increasing), columns {name: array}, size, tc_K, tc_err_K (None when the
        sweep could not place Tc), run_dir.
    """
    from thinfilm.runs.folder import read_csv_table

    run_dir = Path(run_dir)
    obs = run_dir / "observables.csv"
    if not obs.is_file():
        raise InputError(f"{run_dir}: has no observables.csv; compare needs the folder of a "
                         "finished temperature sweep (thinfilm run on a sweep scenario)")
    tab = read_csv_table(obs)
    sizes = np.asarray(tab.get("size", np.zeros(len(tab["temperature_K"]))), dtype=float)
    big = sizes == np.nanmax(sizes)
    order = np.argsort(tab["temperature_K"][big])
    cols = {k: np.asarray(v[big], dtype=float)[order] for k, v in tab.items()
            if np.issubdtype(np.asarray(v).dtype, np.number)}
    tc = {}
    if (run_dir / "tc.json").is_file():
        tc = json.loads((run_dir / "tc.json").read_text())
    return {"temperature_K": cols["temperature_K"], "columns": cols,
            "size": int(np.nanmax(sizes)) if np.isfinite(np.nanmax(sizes)) else None,
            "tc_K": tc.get("tc_K"), "tc_err_K": tc.get("tc_err_K"), "run_dir": str(run_dir)}


def _measured(mt=None, series=None):
    """{name: (T, y, e, unit label, needs scale)} from an M(T) CSV and an image-series CSV."""
    from thinfilm.analysis.mt_fit import noise_level
    from thinfilm.analysis.mt_table import read_curve

    out = {}
    if mt is not None:
        c = read_curve(mt)
        y = c["signal"] if np.mean(c["signal"][:3]) >= 0 else -c["signal"]
        e = c["signal_err"] if c["signal_err"] is not None else np.full(y.size, noise_level(y))
        out["magnetisation"] = (c["temperature_K"], y, e,
                                f"{c['signal_name']} ({c['signal_unit']})", True)
    if series is not None:
        from thinfilm.runs.folder import read_csv_table

        tab = read_csv_table(series)
        if "temperature_K" not in tab:
            raise InputError(f"{series}: has no temperature_K column; give the image_series.csv "
                             "written by thinfilm image-series")
        for name in ("correlation_length_nm", "mean_domain_area_nm2", "period_nm",
                     "stripe_order"):
            if name in tab and np.isfinite(tab[name]).sum() >= 2:
                err = tab.get(name + "_err", np.zeros(len(tab[name])))
                out[name] = (tab["temperature_K"], tab[name], np.nan_to_num(err), name, False)
    if not out:
        raise InputError("compare: give a measured M(T) CSV (--mt) or an image_series.csv "
                         "(--series)")
    return out


def compare_run(run_dir, out_dir, *, mt=None, series=None, tc_measured_K=None,
                tc_measured_err_K=None):
    """Measured curves beside a simulated sweep. Writes ``compare.csv``, ``compare.json`` and
    ``compare.png`` (with ``captions.md``) into ``out_dir``.

    Parameters
    ----------
    run_dir : path
        Sweep run folder (observables.csv, tc.json).
    mt, series : path, optional
        Measured M(T) CSV (as for ``thinfilm fit-mt``) and/or an image_series.csv.
    tc_measured_K, tc_measured_err_K : float, optional
        The sample's Tc for the reduced axis; default: a critical fit of the M(T) CSV.

    Returns
    -------
    dict
        The content of compare.json.
    """
    sim = read_simulation(run_dir)
    meas = _measured(mt, series)
    if tc_measured_K is None and mt is not None:
        from thinfilm.analysis.mt_fit import fit_magnetisation
        from thinfilm.analysis.mt_table import read_curve

        try:
            fit = fit_magnetisation(read_curve(mt))
            tc_measured_K, tc_measured_err_K = fit["tc_K"], fit["tc_err_K"]
        except InputError:
            tc_measured_K = None
    offsets, rows = {}, []
    for name, (T, y, e, _label, scale) in meas.items():
        col = SIM_QUANTITIES[name]
        if col not in sim["columns"] or not np.isfinite(sim["columns"][col]).any():
            offsets[name] = {"note": f"the run folder has no {col} values"}
            continue
        ys = sim["columns"][col]
        es = sim["columns"].get(col + "_err", np.zeros(ys.size))
        try:
            offsets[name] = thermometer_offset(T, y, e, sim["temperature_K"], ys, es,
                                               scale=scale)
        except InputError as exc:
            offsets[name] = {"note": str(exc)}
        s = offsets[name].get("scale", 1.0)
        for k in range(len(T)):
            t = T[k]
            inside = sim["temperature_K"][0] <= t <= sim["temperature_K"][-1]
            red = t / tc_measured_K if tc_measured_K else math.nan
            t_sim_red = red * sim["tc_K"] if (sim["tc_K"] and tc_measured_K) else math.nan
            at_red = (float(np.interp(t_sim_red, sim["temperature_K"], ys))
                      if np.isfinite(t_sim_red) and sim["temperature_K"][0] <= t_sim_red
                      <= sim["temperature_K"][-1] else math.nan)
            rows.append([name, t, red, y[k], e[k], s * y[k],
                         float(np.interp(t, sim["temperature_K"], ys)) if inside else math.nan,
                         at_red])
    out = Path(out_dir)
    cols = ["quantity", "temperature_K", "T_over_Tc_measured", "measured", "measured_err",
            "measured_scaled", "simulated_at_same_T", "simulated_at_same_T_over_Tc"]
    _io.write_csv(out / "compare.csv", cols, rows)
    info = {"run_dir": str(run_dir), "simulated_size": sim["size"],
            "simulated_tc_K": sim["tc_K"], "simulated_tc_err_K": sim["tc_err_K"],
            "measured_tc_K": tc_measured_K, "measured_tc_err_K": tc_measured_err_K,
            "offsets": offsets,
            "offset_note": ("fitted constant thermometer offset dT in s y(T) = y_sim(T - dT); "
                            "reported only, not applied to any table or figure"),
            "measured_sources": {"mt": None if mt is None else str(mt),
                                 "series": None if series is None else str(series)}}
    if sim["tc_K"] and tc_measured_K:
        info["tc_difference_K"] = tc_measured_K - sim["tc_K"]
    info["figure"] = plot_compare(sim, meas, offsets, info, out).name
    _io.write_json(out / "compare.json", info)
    return info
