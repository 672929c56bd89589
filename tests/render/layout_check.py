"""Layout checks of a matplotlib figure at its saved size and dpi (helpers of the figure tests).

A text counts when matplotlib actually draws it: visible and with non-empty text. Tick labels
that an axis hides (shared axes, ticks outside the view) are never drawn, so they never count.
"""

from contextlib import contextmanager
from unittest import mock

from matplotlib import rcParams
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.text import Text

PAD_PX = 0.5  # boxes closer than this (pixels) count as touching, not overlapping


def drawn_texts(fig, dpi):
    """[(Text, Bbox in pixels)] of every visible, non-empty text drawn at ``dpi`` (dots/inch)."""
    fig.set_dpi(dpi)
    canvas = FigureCanvasAgg(fig)
    drawn = []
    original = Text.draw

    def draw(self, renderer):
        original(self, renderer)
        if self.get_visible() and self.get_text().strip():
            drawn.append(self)

    with mock.patch.object(Text, "draw", draw):
        canvas.draw()
    renderer = canvas.get_renderer()
    return [(t, t.get_window_extent(renderer)) for t in dict.fromkeys(drawn)]


def _panel(ax):
    return repr(ax.get_title() or ax.get_ylabel() or ax.get_label())


def _describe(text):
    ax = text.axes
    return f"{text.get_text()!r}" + (f" in panel {_panel(ax)}" if ax is not None else "")


def _overlap(a, b):
    return min(a.x1, b.x1) - max(a.x0, b.x0) > PAD_PX and min(a.y1, b.y1) - max(a.y0, b.y0) > PAD_PX


def _outside(box, fig):
    w, h = fig.bbox.width, fig.bbox.height
    return box.x0 < -PAD_PX or box.y0 < -PAD_PX or box.x1 > w + PAD_PX or box.y1 > h + PAD_PX


def text_problems(fig, dpi):
    """Texts that overlap another text (any pair, across panels) or leave the canvas."""
    items = drawn_texts(fig, dpi)
    size = f"{fig.bbox.width:.0f} x {fig.bbox.height:.0f} px"
    out = [f"{_describe(t)} leaves the {size} canvas (x {b.x0:.0f}..{b.x1:.0f}, "
           f"y {b.y0:.0f}..{b.y1:.0f})" for t, b in items if _outside(b, fig)]
    for i, (ta, ba) in enumerate(items):
        for tb, bb in items[i + 1 :]:
            if _overlap(ba, bb):
                out.append(f"{_describe(ta)} overlaps {_describe(tb)}")
    return out


def legend_problems(fig, dpi):
    """Legends that cover a panel (data area or colour bar) or leave the canvas."""
    fig.set_dpi(dpi)
    canvas = FigureCanvasAgg(fig)
    canvas.draw()
    renderer = canvas.get_renderer()
    legends = list(fig.legends) + [ax.get_legend() for ax in fig.axes if ax.get_legend()]
    out = []
    for leg in legends:
        box = leg.get_window_extent(renderer)
        if _outside(box, fig):
            out.append("a legend leaves the canvas")
        out += [f"a legend covers panel {_panel(ax)}" for ax in fig.axes
                if _overlap(box, ax.bbox)]
    return out


@contextmanager
def saved_figures():
    """Collect (Figure, dpi) of every ``Figure.savefig`` call made inside the block."""
    saved = []
    original = Figure.savefig

    def savefig(self, fname, *args, **kwargs):
        assert kwargs.get("bbox_inches", rcParams["savefig.bbox"]) is None, "size changed on save"
        original(self, fname, *args, **kwargs)
        dpi = kwargs.get("dpi", rcParams["savefig.dpi"])
        saved.append((self, self.dpi if dpi == "figure" else float(dpi)))

    with mock.patch.object(Figure, "savefig", savefig):
        yield saved
