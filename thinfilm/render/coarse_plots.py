"""Figure of a coarse-film run folder: magnetisation against temperature beside the table."""

from pathlib import Path

import numpy as np

from thinfilm.input.parameter_table import ParameterTable
from thinfilm.render.layout import OKABE_ITO, new_figure, save_png, shared_legend
from thinfilm.runs.folder import read_csv_table

__all__ = ["plot_coarse"]


def plot_coarse(run_dir):
    """plots/temperatures.png: |<m>| of the coarse film (mean over the second half of each
    hold, error bars from 10 blocks) and the table's m_e(T); below, the cell correction."""
    run_dir = Path(run_dir)
    rows = read_csv_table(run_dir / "temperatures.csv")
    tab = ParameterTable.from_csv(run_dir / "parameters.csv")
    fig, (ax, bx) = new_figure(2, 1, w=5.0, h=2.6, sharex=True)
    T = rows["temperature_K"]
    tt = np.linspace(tab.temperature_K[0], tab.temperature_K[-1], 200)
    ax.plot(tt, np.interp(tt, tab.temperature_K, tab.m_e), color=OKABE_ITO[6], lw=1,
            label="table m_e(T) (atomistic or lab)")
    if len(T):
        ax.errorbar(T, rows["m_abs"], yerr=rows["m_abs_err"], fmt="o", ms=4,
                    color=OKABE_ITO[0], label="coarse film |<m>|")
        bx.plot(T, 100 * rows["renormalisation"], "s-", ms=4, color=OKABE_ITO[1],
                label="cell correction (mu - m_e) / m_e")
    if np.isfinite(tab.tc_K):
        for a in (ax, bx):
            a.axvline(tab.tc_K, color="0.6", ls=":", lw=1)
        ax.text(tab.tc_K, 0.02, " table Tc", color="0.4", fontsize=8, va="bottom")
    ax.set_ylabel("M / Ms(0)")
    ax.set_ylim(0, 1.05)
    bx.set_ylabel("cell correction (%)")
    bx.set_xlabel("temperature (K)")
    ax.set_title("coarse film (stochastic LLB) against its parameter table", fontsize=9)
    shared_legend(fig)
    out = run_dir / "plots" / "temperatures.png"
    out.parent.mkdir(parents=True, exist_ok=True)
    save_png(fig, out)
    return out
