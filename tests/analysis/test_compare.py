"""Measured curves beside a simulated sweep (thermometer offset) and the offline HTML page."""

import json
from html.parser import HTMLParser

import numpy as np
import pytest

from thinfilm._io import write_csv, write_json
from thinfilm.analysis.compare import thermometer_offset
from thinfilm.cli import main
from thinfilm.input.errors import InputError
from thinfilm.render.compare_plot import compare_run
from thinfilm.render.html_report import markdown_to_html, write_html_report


def sim_curve(T):
    """A smooth stand-in for a simulated order parameter falling through 100 K."""
    return 0.5 * (1 - np.tanh((T - 100.0) / 8.0)) * 0.9 + 0.05


def _run_folder(d):
    """A sweep folder in the layout thinfilm run writes (observables.csv, tc.json, manifest)."""
    d.mkdir()
    T = np.arange(70.0, 131.0, 4.0)
    rows = [[8, t, sim_curve(t), 0.003] for t in T]
    write_csv(d / "observables.csv", ["size", "temperature_K", "m_abs", "m_abs_err"], rows)
    write_json(d / "tc.json", {"tc_K": 100.0, "tc_err_K": 0.5, "method": "binder_crossing"})
    write_json(d / "manifest.json", {"kind": "sweep", "scenario": {"name": "invented film"}})
    return d


def test_thermometer_offset_and_scale_are_recovered():
    """Measured = sim(T - 3 K) / 0.25 with noise: the fitted offset and scale lie within 3 of
    their errors of 3 K and 0.25 (statistical tolerance from the fit covariance)."""
    rng = np.random.default_rng(4)
    T = np.linspace(75.0, 125.0, 40)
    y = sim_curve(T - 3.0) / 0.25 + rng.normal(0, 0.02, T.size)
    ts = np.arange(70.0, 131.0, 1.0)
    r = thermometer_offset(T, y, np.full(T.size, 0.02), ts, sim_curve(ts), np.zeros(ts.size))
    assert abs(r["offset_K"] - 3.0) <= 3 * r["offset_err_K"]
    assert abs(r["scale"] - 0.25) <= 3 * r["scale_err"]
    assert r["offset_err_K"] < 0.5


def test_compare_writes_table_on_t_and_t_over_tc(tmp_path):
    run = _run_folder(tmp_path / "run")
    T = np.linspace(80.0, 120.0, 21)
    y = sim_curve(T - 2.0) * 4.0
    lines = ["temperature_K,kerr (mrad),kerr_err (mrad)"] + [
        f"{a:.3f},{b:.6f},0.004" for a, b in zip(T, y, strict=True)]
    (tmp_path / "m.csv").write_text("\n".join(lines) + "\n")
    info = compare_run(run, run / "compare", mt=tmp_path / "m.csv", tc_measured_K=102.0)
    off = info["offsets"]["magnetisation"]
    assert off["offset_K"] == pytest.approx(2.0, abs=3 * off["offset_err_K"] + 0.05)
    saved = json.loads((run / "compare" / "compare.json").read_text())
    assert "not applied" in saved["offset_note"]
    tab = (run / "compare" / "compare.csv").read_text().splitlines()
    assert tab[0].startswith("quantity,temperature_K,T_over_Tc_measured,measured")
    first = tab[1].split(",")
    assert float(first[2]) == pytest.approx(80.0 / 102.0)
    assert float(first[3]) == pytest.approx(y[0], rel=1e-5)  # the measured value, not shifted


def test_compare_refuses_a_folder_without_a_sweep(tmp_path):
    with pytest.raises(InputError, match="observables.csv"):
        compare_run(tmp_path, tmp_path / "o", mt=None, series=None)


class _Tags(HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags, self.stack, self.captions, self.ids = [], [], [], set()
        self.text = {}

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.append((tag, a))
        self.stack.append(tag)
        if "id" in a:
            self.ids.add(a["id"])

    def handle_endtag(self, tag):
        if self.stack and self.stack[-1] == tag:
            self.stack.pop()

    def handle_data(self, data):
        if "figcaption" in self.stack and data.strip():
            self.captions.append(data.strip())


def test_html_report_gathers_figures_tables_plan_and_movies(tmp_path, capsys):
    run = _run_folder(tmp_path / "run")
    (run / "plots").mkdir()
    from thinfilm.render.layout import new_figure, save_png

    fig, ax = new_figure()
    ax[0].plot([0, 1], [0, 1])
    save_png(fig, run / "plots" / "sweep.png")
    (run / "plots" / "captions.md").write_text("# Figure captions\n\n## sweep.png\n\n"
                                              "- **m** (per spin): order parameter\n")
    (run / "movie.mp4").write_bytes(b"\x00\x00\x00\x18ftypmp42")
    (run / "plan.md").write_text("# Heating plan\n\nHeat **slowly**.\n\n| T (K) | dwell |\n"
                                 "|---|---|\n| 90 | 5 min |\n")
    assert main(["report", str(run)]) == 0
    capsys.readouterr()
    page = (run / "report.html").read_text()
    p = _Tags()
    p.feed(page)
    srcs = [a["src"] for t, a in p.tags if t in ("img", "video")]
    assert "plots/sweep.png" in srcs and "movie.mp4" in srcs
    for s in srcs + [a["href"] for t, a in p.tags if t == "a" and not a["href"].startswith("#")]:
        assert "://" not in s and not s.startswith("/")  # offline, relative
        assert (run / s).is_file(), s
    figures = sum(1 for t, _ in p.tags if t == "figure")
    assert figures == sum(1 for t, _ in p.tags if t == "figcaption") == 2
    assert any("order parameter" in c for c in p.captions)
    anchors = [a["href"][1:] for t, a in p.tags if t == "a" and a["href"].startswith("#")]
    assert anchors and all(x in p.ids for x in anchors)
    assert "<h3>Heating plan</h3>" in page and "<strong>slowly</strong>" in page
    heads = [a for t, a in p.tags if t == "th"]
    assert len(heads) >= 4  # observables.csv header row and the plan table
    with pytest.raises(InputError, match="inside the run folder"):
        write_html_report(run, out=tmp_path / "elsewhere.html")


def test_markdown_subset():
    h = markdown_to_html("## A\n\ntext `x` **b**\n\n- one\n- two\n")
    assert h == ("<h2>A</h2>\n<p>text <code>x</code> <strong>b</strong></p>\n"
                 "<ul><li>one</li><li>two</li></ul>")
