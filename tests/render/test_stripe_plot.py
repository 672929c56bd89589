"""The stripe table figure: one panel per quantity, no overlapping or cut-off text, captions."""

import math

from layout_check import legend_problems, saved_figures, text_problems

from thinfilm._io import write_csv
from thinfilm.cli import build_parser
from thinfilm.render.stripe_plot import STRIPE_COLUMNS, plot_stripes


def test_stripe_figure_layout_and_captions(tmp_path):
    rows = [(t * 6.0, t * 0.4, 8.0 - 0.02 * t if t < 55 else math.nan, 7.5 - 0.04 * t, 0.05, 3,
             0.88 - 0.005 * t, 0.1, -0.9, 0.05) for t in range(61)]
    write_csv(tmp_path / "s.csv", tuple(STRIPE_COLUMNS), rows)
    with saved_figures() as saved:
        (png,) = plot_stripes(tmp_path / "s.csv", tmp_path / "plots")
    assert png.is_file() and png.stat().st_size > 0
    ((fig, dpi),) = saved
    assert text_problems(fig, dpi) + legend_problems(fig, dpi) == []
    caps = (tmp_path / "plots" / "captions.md").read_text()
    assert "## stripes_vs_temperature.png" in caps and "stripe period" in caps
    assert "mean period" in caps


def test_demo_film_option():
    p = build_parser()
    assert p.parse_args(["demo"]).film == "monolayer"
    assert p.parse_args(["demo", "--film", "stripes"]).film == "stripes"
