"""PNG figures of a run folder: sweep figures (:mod:`.sweep_plots`) and the time series of a
dynamics run (:mod:`.timeseries_plot`), each with its ``captions.md``."""

from .layout import MARKERS, OKABE_ITO
from .sweep_plots import log_histogram, plot_sweep
from .timeseries_plot import plot_timeseries

__all__ = ["plot_sweep", "plot_timeseries", "log_histogram", "OKABE_ITO", "MARKERS"]
