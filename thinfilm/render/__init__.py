"""Movies and plots of spin states: coloured frames, MP4/GIF movies, sweep and run figures."""

from thinfilm.render.frames import colour_frame, draw_label, draw_scale_bar, site_index_map
from thinfilm.render.movie import MovieInfo, write_movie
from thinfilm.render.plots import plot_sweep, plot_timeseries

__all__ = [
    "colour_frame",
    "draw_label",
    "draw_scale_bar",
    "site_index_map",
    "write_movie",
    "MovieInfo",
    "plot_sweep",
    "plot_timeseries",
]
