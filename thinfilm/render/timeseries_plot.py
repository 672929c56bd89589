"""PNG figure of a dynamics run: magnetisation, energy and temperature against time."""

from pathlib import Path

import numpy as np

from thinfilm.input.errors import InputError

from .captions import definition_list, write_captions
from .layout import OKABE_ITO, new_figure, note, save_png, shared_legend, split_unit
from .rundir import read_json, read_table

__all__ = ["plot_timeseries"]

COMPONENTS = {"mx": ("$m_x$", "m_x"), "my": ("$m_y$", "m_y"), "mz": ("$m_z$", "m_z"),
              "m_axis": (r"$m_\parallel$", "m_∥")}


def plot_timeseries(run_dir, out_dir=None, *, caption=None):
    """Plot ``timeseries.csv`` of a dynamics run: magnetisation components and energy vs time.

    Parameters
    ----------
    run_dir : path
        Run folder with ``timeseries.csv`` (columns time_ps, mx, my, mz, energy_meV and
        optionally temperature_K, drawn when it changes).
    out_dir : path, optional
        Where to write the PNG and ``captions.md`` (default ``run_dir/plots``).
    caption : str, optional
        Text added to the figure's caption (what the curves of this run show).

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
    fig, axes = new_figure(3 if show_t else 2, 1, 6.0, 2.3, sharex=True)
    items = []
    comps = [c for c in COMPONENTS if c in tab]
    if comps:
        for k, c in enumerate(comps):
            axes[0].plot(t, tab[c], color=OKABE_ITO[k], lw=1.2, label=COMPONENTS[c][0],
                         ls="--" if c == "m_axis" else "-")
        axes[0].set_ylabel("m (per spin)")
        items.append(("m_x, m_y, m_z", "per spin", "mean spin components along x, y, z"))
        if "m_axis" in comps:
            items.append(("m_∥ (dashed)", "per spin", "mean spin component along the order "
                          "(anisotropy) axis"))
            if all(c in tab for c in ("mx", "my", "mz")):
                perp = np.sqrt(np.maximum(tab["mx"] ** 2 + tab["my"] ** 2 + tab["mz"] ** 2
                                          - tab["m_axis"] ** 2, 0.0))
                axes[0].plot(t, perp, color=OKABE_ITO[len(comps)], lw=1.2, ls=":",
                             label=r"$m_\perp$")
                items.append(("m_⊥ (dotted)", "per spin", "length of the net magnetisation "
                              "perpendicular to the order axis (m_inplane of a perpendicular "
                              "film): √(|m|² − m_∥²)"))
    else:
        note(axes[0], "no mx, my, mz columns in timeseries.csv")
    e_unit = split_unit(units.get("energy_meV"), "meV per spin")[0]
    if "energy_meV" in tab:
        axes[1].plot(t, tab["energy_meV"], color=OKABE_ITO[6], lw=1.2)
        axes[1].set_ylabel(f"E ({e_unit})")
        items.append(("E", e_unit, "energy per spin"))
    else:
        note(axes[1], "no 'energy_meV' column in timeseries.csv")
    if show_t:
        axes[2].plot(t, temp, color=OKABE_ITO[1], lw=1.2)
        axes[2].set_ylabel("T (K)")
        items.append(("T", "K", "bath temperature of the run"))
    axes[-1].set_xlabel("t (ps)")
    items.insert(0, ("t", "ps", "simulated time"))
    shared_legend(fig, where="upper")
    out_dir = Path(out_dir) if out_dir is not None else run_dir / "plots"
    png = save_png(fig, out_dir / "timeseries.png")
    text = "Time series of a dynamics run." + (f" {caption.strip()}" if caption else "")
    write_captions(out_dir, {png.name: text + "\n\n" + definition_list(items)})
    return [png]
