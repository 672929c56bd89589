"""PNG figure of a stripe table: stripe periods, stripe order, |m_z| and the in-plane
magnetisation against temperature."""

from pathlib import Path

import numpy as np

from thinfilm.input.errors import InputError

from .captions import definition_list, write_captions
from .layout import OKABE_ITO, new_figure, note, save_png, shared_legend
from .rundir import read_table

__all__ = ["plot_stripes", "STRIPE_COLUMNS"]

#: Columns of a stripe table (one row per snapshot) and their units.
STRIPE_COLUMNS = {
    "time_ps": "ps", "temperature_K": "K", "stripe_period_nm": "nm", "mean_period_nm": "nm",
    "stripe_order": "1 (0 isotropic .. 1 parallel stripes)", "bubble_count": "1",
    "mean_abs_m_axis": "per spin", "m_inplane": "per spin",
    "neel_index": "1 (+1 / -1 Neel walls turning clockwise / anticlockwise, 0 Bloch)",
    "bloch_index": "1 (+-1 Bloch walls of one handedness, 0 Neel)",
}

PANELS = (
    ("stripe_period_nm", "λ (nm)", ("λ", "nm", "stripe period 2π/k* from the radial peak k* of "
                                    "the structure factor of m_z (one snapshot per point)")),
    ("stripe_order", "Q", ("Q", "1", "nematic stripe order |Σ S(k) e^{2iθ_k}| / Σ S(k): 1 for "
                           "parallel stripes, near 0 for a labyrinth or a disordered film")),
    ("mean_abs_m_axis", "⟨|m_z|⟩", ("⟨|m_z|⟩", "per spin", "mean of |S·n| over the sites: "
                                    "1 in saturated perpendicular domains, 0.5 for random "
                                    "directions, lower when the moments turn into the plane")),
    ("m_inplane", "m_⊥", ("m_⊥", "per spin", "length of the net in-plane magnetisation "
                          "√(m_x² + m_y²) of the film")),
)


def plot_stripes(csv_path, out_dir, *, name="stripes_vs_temperature.png"):
    """Plot a stripe table (columns :data:`STRIPE_COLUMNS`) against temperature.

    Returns
    -------
    list of Path
        ``[out_dir / name]``; ``captions.md`` in ``out_dir`` gets the figure's section.
    """
    path = Path(csv_path)
    if not path.is_file():
        raise InputError(f"{path}: no stripe table; it is written by "
                         "'thinfilm demo --film stripes'")
    tab = read_table(path)
    if "temperature_K" not in tab or not len(tab["temperature_K"]):
        raise InputError(f"{path} has no 'temperature_K' column or no rows")
    t = tab["temperature_K"]
    fig, axes = new_figure(len(PANELS), 1, 5.0, 1.7, sharex=True)
    items = [("T", "K", "bath temperature of the heating ramp at the snapshot")]
    for ax, (col, label, item) in zip(axes, PANELS, strict=True):
        y = tab.get(col)
        if y is None or not np.isfinite(y).any():
            note(ax, f"no finite '{col}' values")
        else:
            ax.plot(t, y, color=OKABE_ITO[0], lw=1.0, marker="o", ms=2.5,
                    label="λ (peak)" if col == "stripe_period_nm" else None)
        ax.set_ylabel(label)
        items.append(item)
        if col == "stripe_period_nm" and "mean_period_nm" in tab:
            ax.plot(t, tab["mean_period_nm"], color=OKABE_ITO[1], lw=1.4, label="λ̄ (mean)")
            items.append(("λ̄", "nm", "mean period 2π/k̄, k̄ the S-weighted mean |k| over "
                          "0 < |k| ≤ 2k*: follows a ring that broadens towards large k"))
    axes[0].set_ylim(bottom=0)
    if "mean_period_nm" in tab:
        shared_legend(fig, where="upper")
    axes[1].set_ylim(0, 1)
    axes[2].set_ylim(0, 1.05)
    axes[3].set_ylim(0, 1.05)
    axes[-1].set_xlabel("T (K)")
    png = save_png(fig, Path(out_dir) / name)
    write_captions(out_dir, {png.name: "Stripe pattern of the heating ramp, one point per "
                             "snapshot (a linear ramp: each point is one state, not an "
                             "equilibrium average). While ⟨|m_z|⟩ stays well above 0.5 the "
                             "domains are intact and a falling λ̄ means narrower domains; once "
                             "the pattern has broken up (⟨|m_z|⟩ near 0.5, Q near 0) λ is the "
                             "modulation length of the fluctuating film (the ring of S(k)), "
                             "not the width of domains. m_⊥: the moments cant out of the "
                             "perpendicular axis (⟨|m_z|⟩ below 1) and their in-plane parts "
                             "line up in one direction, since an in-plane magnetisation of a "
                             "thin film costs no dipolar energy; it grows on heating as the "
                             "effective anisotropy falls towards the reorientation into the "
                             "plane.\n\n" + definition_list(items)})
    return [png]
