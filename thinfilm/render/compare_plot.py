"""Figure of measured curves beside a simulated sweep, on T and on T/Tc."""

import numpy as np

from .captions import write_captions
from .layout import OKABE_ITO, new_figure, note, save_png, shared_legend

__all__ = ["plot_compare"]

LABELS = {"magnetisation": ("m (per spin)", "magnetisation"),
          "correlation_length_nm": (r"$\xi$ (nm)", "correlation length"),
          "mean_domain_area_nm2": (r"mean domain area (nm$^2$)", "mean domain area"),
          "period_nm": ("period (nm)", "domain period"),
          "stripe_order": ("stripe order Q", "stripe order")}


def plot_compare(sim, meas, offsets, info, out_dir, name="compare.png"):
    """One row per measured quantity: against T (K) and against T/Tc (each curve by its own Tc).
    Measured signals in arbitrary units are multiplied by the fitted scale s."""
    from thinfilm.analysis.compare import SIM_QUANTITIES

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
