"""The stripe demo pipeline end to end on a small copy of its scenario: table, figure, movie."""

import csv

import pytest
import yaml

from thinfilm.demo_pipeline import STRIPE_SCENARIO, run_stripe_demo
from thinfilm.render.stripe_plot import STRIPE_COLUMNS


def test_small_stripe_demo(tmp_path, capsys):
    raw = yaml.safe_load(STRIPE_SCENARIO.read_text())
    raw["lattice"]["cells"] = [48, 48]
    raw["dynamics"].update(warmup="7.2 ps", duration="14.4 ps")
    raw["record"] = {"every": "0.72 ps", "snapshots": "1.44 ps"}
    raw["initial"] = {"labyrinth": "3 nm"}
    path = tmp_path / "small.yaml"
    path.write_text(yaml.safe_dump(raw))
    out = run_stripe_demo(tmp_path / "out", path, progress=False)
    for name in ("movie.mp4", "stripes_vs_temperature.csv", "plots/stripes_vs_temperature.png",
                 "plots/captions.md"):
        assert (out / name).is_file(), name
    with open(out / "stripes_vs_temperature.csv", newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert tuple(rows[0]) == tuple(STRIPE_COLUMNS)
    temps = [float(r["temperature_K"]) for r in rows]
    assert temps[0] == pytest.approx(15.0) and temps[-1] == pytest.approx(23.0)
    assert temps == sorted(temps) and len(rows) == 11  # 14.4 ps / 1.44 ps + the start
    # 21.6 ps cannot reshape the labyrinth: its mean period stays near 2 x 3 nm (the ring's
    # centre; +-25 % for one 48^2 draw, whose ring holds a few dozen modes)
    assert float(rows[0]["mean_period_nm"]) == pytest.approx(6.0, rel=0.25)
    assert "period: peak, mean (nm)" in capsys.readouterr().out
