"""Every figure the package writes keeps its text readable at the saved size and dpi.

The figures come from small synthetic folders (a two-size sweep with the long column
descriptions a real sweep writes into columns.json, a sweep with missing columns, a heating
run, and a heating plan on the synthetic sweep of test_plan). For each saved PNG the check
draws the figure at the saved dpi and compares every drawn text box with every other one.
"""

import csv
import json
import re

import imageio.v3 as iio3
import numpy as np
import pytest
from layout_check import drawn_texts, legend_problems, saved_figures, text_problems
from matplotlib.figure import Figure
from test_plan import make_synthetic_sweep
from test_plots import fake_sweep, write_table

from thinfilm.plan import make_plan
from thinfilm.render.plots import plot_sweep, plot_timeseries

# columns.json as a sweep writes it: a unit, then a definition
LONG_UNITS = {
    "temperature_K": "K",
    "m_abs": "per spin, <|m|> of m along the anisotropy axis (|m| for K <= 0)",
    "susceptibility": "1/meV per spin, N(<m^2>-<|m|>^2)/(kB T)",
    "specific_heat": "kB per spin, N(<e^2>-<e>^2)/(kB T)^2",
    "binder": "dimensionless, 1 - <m^4>/(3<m^2>^2)",
    "correlation_length_nm": "nm, second-moment estimator of S.n over the snapshots",
    "correlation_length_sk_nm": "nm, Ornstein-Zernike fit 1/S(k) = (1 + k^2 xi^2)/chi at small k",
    "correlation_length_instrument_nm": "nm, as correlation_length_nm but of the instrument view",
    "mean_domain_area_nm2": "nm^2, mean area of up and down domains, mean over snapshots",
}


def _add_columns(path, **columns):
    """Append columns (name -> function of the row dict) to a CSV table."""
    with open(path, newline="") as fh:
        rows = list(csv.DictReader(fh))
    for row in rows:
        for name, f in columns.items():
            row[name] = f(row)
    write_table(path, list(rows[0]), [list(r.values()) for r in rows])


def _sweep(root, rng):
    run = fake_sweep(root, rng)
    t = lambda r: float(r["temperature_K"])  # noqa: E731
    _add_columns(run / "observables.csv",
                 correlation_length_sk_nm=lambda r: 1.5 / abs(t(r) - 2.45),
                 correlation_length_sk_nm_err=lambda r: 0.1,
                 correlation_length_instrument_nm=lambda r: 6.0 + 1.0 / abs(t(r) - 2.45))
    (run / "columns.json").write_text(json.dumps(LONG_UNITS))
    (run / "tc.json").write_text(
        json.dumps({"tc_K": 2.4523, "tc_err_K": 0.0471, "method": "binder_crossing"}))
    return run


def _sparse_sweep(root, rng):
    run = fake_sweep(root, rng, drop=("binder", "binder_err", "correlation_length_nm",
                                      "correlation_length_nm_err"))
    (run / "columns.json").write_text(json.dumps(LONG_UNITS))
    for d in (run / "points").iterdir():  # small domains: less than two decades of area
        write_table(d / "domain_sizes.csv", ["area_nm2"], [[a] for a in rng.uniform(0.15, 4, 30)])
    return run


def _heating_run(root):
    t = np.linspace(0, 20, 81)
    rows = [[ti, 1.5 + 0.1 * ti, 0.0, 0.1 * np.cos(ti), 0.1 * np.sin(ti), 0.9 - 0.04 * ti,
             0.9 - 0.04 * ti, -5 + ti / 50] for ti in t]
    write_table(root / "timeseries.csv", ["time_ps", "temperature_K", "field_T", "mx", "my", "mz",
                                          "m_axis", "energy_meV"], rows)
    return root


@pytest.fixture(scope="module")
def rendered(tmp_path_factory):
    """{label: (Figure, dpi, PNG path)} of every figure written from the synthetic folders."""
    root = tmp_path_factory.mktemp("layout")
    rng = np.random.default_rng(7)
    jobs = {
        "sweep": lambda: plot_sweep(_sweep(root / "sweep", rng)),
        "sparse": lambda: plot_sweep(_sparse_sweep(root / "sparse", rng)),
        "run": lambda: plot_timeseries(_heating_run(root / "run")),
        "plan": lambda: make_plan(make_synthetic_sweep(root / "plan"), root / "plan",
                                  resolution="2 nm", exposure="10 ms", field_of_view="5 um",
                                  reuse=True, progress=False, llg_size=4, llg_duration="2 ps",
                                  n_boot=40)["figures"],
    }
    out = {}
    for tag, job in jobs.items():
        with saved_figures() as saved:
            paths = job()
        assert len(saved) == len(paths)
        out.update({f"{tag}/{p.name}": (fig, dpi, p) for (fig, dpi), p in zip(saved, paths,
                                                                              strict=True)})
    return out


FIGURES = [
    "sweep/sweep_thermodynamics.png", "sweep/sweep_lengths.png", "sweep/sweep_domain_sizes.png",
    "sweep/sweep_snapshots.png", "sparse/sweep_thermodynamics.png", "sparse/sweep_lengths.png",
    "sparse/sweep_domain_sizes.png",
    "run/timeseries.png", "plan/plan_xi.png", "plan/plan_tau.png", "plan/plan_schedule.png",
]


@pytest.mark.parametrize("label", FIGURES)
def test_figure_text_does_not_overlap_or_leave_the_canvas(rendered, label):
    fig, dpi, path = rendered[label]
    problems = text_problems(fig, dpi) + legend_problems(fig, dpi)
    assert not problems, f"{label}:\n" + "\n".join(problems)
    # the check ran on the canvas that was saved
    h, w = iio3.imread(path).shape[:2]
    assert (w, h) == (round(fig.bbox.width), round(fig.bbox.height))
    assert len(drawn_texts(fig, dpi)) >= 8  # tick labels, axis labels, legend: the check saw text


@pytest.mark.parametrize("label", FIGURES)
def test_every_axis_label_is_short_and_carries_a_unit(rendered, label):
    fig = rendered[label][0]
    names = [a.get_label_text() for ax in fig.axes for a in (ax.xaxis, ax.yaxis)
             if a.label.get_visible() and a.get_label_text()]
    assert names
    for name in names:
        assert re.fullmatch(r".+ \([^()]+\)", name), f"{label}: {name!r} has no (unit)"
        assert len(name) <= 30, f"{label}: {name!r} is long; definitions go to captions.md"


def _crowded():
    fig = Figure(figsize=(4, 3))
    a, b = fig.subplots(1, 2)
    a.plot([0, 1], [0, 1], label="curve")
    a.legend(loc="center")  # on the data
    a.set_title("left")
    b.set_title("right")
    b.set_ylabel("a very long label that runs into the left panel's tick labels " * 2)
    fig.text(0.5, 0.5, "here")
    fig.text(0.5, 0.5, "here too")
    fig.text(0.98, 0.5, "beyond the right edge")
    return fig


def test_the_checker_reports_crowded_text_across_panels():
    fig = _crowded()
    problems = text_problems(fig, 100)
    assert "'here' overlaps 'here too'" in problems
    assert any(p.startswith("'beyond the right edge' leaves the") for p in problems)
    # the long label of the right panel reaches texts of the left panel and leaves the canvas
    long_label = [p for p in problems if "a very long label" in p]
    assert any("overlaps" in p for p in long_label) and any("leaves" in p for p in long_label)
    assert legend_problems(fig, 100) == ["a legend covers panel 'left'"]


def test_the_checker_skips_hidden_and_empty_texts():
    fig = Figure(figsize=(4, 4), layout="constrained")
    top, bottom = fig.subplots(2, 1, sharex=True)  # top x tick labels hidden
    top.plot([0, 1], [0, 1])
    bottom.plot([0, 1], [1, 0])
    bottom.set_xlabel("x (nm)")
    top.set_title("")
    ghost = top.text(0.5, 0.5, "hidden", transform=top.transAxes)
    top.text(0.5, 0.5, "shown", transform=top.transAxes)
    ghost.set_visible(False)
    top.text(0.1, 0.1, "   ", transform=top.transAxes)
    drawn = [t for t, _ in drawn_texts(fig, 100)]
    texts = [t.get_text() for t in drawn]
    assert "shown" in texts and "hidden" not in texts and "   " not in texts
    assert not set(drawn) & set(top.xaxis.get_ticklabels())  # hidden by the shared x axis
    assert set(drawn) & set(bottom.xaxis.get_ticklabels())
    assert text_problems(fig, 100) == []  # "hidden" sits on "shown" but is not drawn
