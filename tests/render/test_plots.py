"""Tests of thinfilm.render.plots on a small fake sweep and a fake dynamics run."""

import csv
import json

import imageio.v3 as iio3
import numpy as np
import pytest

from thinfilm.input.errors import InputError
from thinfilm.model.lattice import Lattice
from thinfilm.render.plots import log_histogram, plot_sweep, plot_timeseries
from thinfilm.render.rundir import read_table

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"
TEMPS = (1.0, 2.0, 2.5, 3.0, 4.0)


def write_table(path, header, rows):
    path.parent.mkdir(parents=True, exist_ok=True)
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(header)
        w.writerows(rows)


def fake_sweep(root, rng, *, drop=()):
    cols = [
        "size",
        "temperature_K",
        "m_abs",
        "m_abs_err",
        "susceptibility",
        "susceptibility_err",
        "specific_heat",
        "specific_heat_err",
        "energy_meV",
        "energy_meV_err",
        "binder",
        "binder_err",
        "tau_int",
        "correlation_length_nm",
        "correlation_length_nm_err",
        "mean_domain_area_nm2",
        "mean_domain_area_nm2_err",
    ]
    cols = [c for c in cols if c not in drop]
    rows = []
    for size in (8, 16):
        for t in TEMPS:
            m = 1.0 / (1.0 + np.exp(4 * (t - 2.5)))
            vals = {
                "size": size,
                "temperature_K": t,
                "m_abs": m,
                "susceptibility": 1 / abs(t - 2.4),
                "specific_heat": 1.0 / (1 + (t - 2.5) ** 2),
                "energy_meV": -2 + 0.4 * t,
                "binder": 2 / 3 * m,
                "tau_int": 3.0,
                "correlation_length_nm": 2 / abs(t - 2.45),
                "mean_domain_area_nm2": 40.0 / t,
            }
            rows.append([vals.get(c, 0.01 * rng.random()) for c in cols])
    write_table(root / "observables.csv", cols, rows)
    (root / "tc.json").write_text(
        json.dumps({"tc_K": 2.45, "tc_err_K": 0.05, "method": "binder crossing"})
    )
    (root / "columns.json").write_text(
        json.dumps({"susceptibility": "1/meV", "specific_heat": "k_B"})
    )
    (root / "manifest.json").write_text(
        json.dumps({"kind": "sweep", "instrument": {"resolution_nm": 5.0}})
    )
    lat = Lattice("triangular", 8, 8, 1.0)
    for t in TEMPS:
        d = root / "points" / f"L8_T{t:.3f}K"
        d.mkdir(parents=True)
        s = rng.normal(size=(8, 8, 3))
        s[..., 2] += 3.0 / t
        s /= np.linalg.norm(s, axis=-1, keepdims=True)
        np.savez(
            d / "final.npz",
            spins=s,
            positions_nm=lat.positions_nm,
            box_nm=np.array(lat.box_nm),
            shape="triangular",
            periodic=True,
            temperature_K=t,
            time_ps=0.0,
        )
        write_table(
            d / "domain_sizes.csv", ["area_nm2"], [[a] for a in rng.pareto(1.5, 60) * 2 + 1]
        )
    return root


def assert_pngs(paths, names):
    assert [p.name for p in paths] == names
    for p in paths:
        data = p.read_bytes()
        assert data.startswith(PNG_MAGIC) and len(data) > 5000
        img = iio3.imread(p)
        assert img.ndim == 3 and min(img.shape[:2]) > 200
        assert img.std() > 1  # not a blank canvas
    assert not list(paths[0].parent.glob("*.tmp"))


def test_plot_sweep_writes_all_figures(tmp_path, rng):
    run = fake_sweep(tmp_path / "sweep", rng)
    paths = plot_sweep(run)
    assert paths[0].parent == run / "plots"
    assert_pngs(
        paths,
        [
            "sweep_thermodynamics.png",
            "sweep_lengths.png",
            "sweep_domain_sizes.png",
            "sweep_snapshots.png",
        ],
    )


def test_missing_columns_and_folders_are_skipped(tmp_path, rng):
    run = fake_sweep(
        tmp_path / "sweep",
        rng,
        drop=(
            "binder",
            "binder_err",
            "correlation_length_nm",
            "correlation_length_nm_err",
            "mean_domain_area_nm2",
            "mean_domain_area_nm2_err",
        ),
    )
    for f in ("tc.json", "columns.json", "manifest.json"):
        (run / f).unlink()
    for d in (run / "points").iterdir():
        (d / "domain_sizes.csv").unlink()
    paths = plot_sweep(run, tmp_path / "out", temperatures=[2.4])
    assert_pngs(paths, ["sweep_thermodynamics.png", "sweep_snapshots.png"])


def test_plot_timeseries(tmp_path):
    t = np.linspace(0, 50, 40)
    rows = [[ti, 300 + ti, 0.0, np.cos(ti / 9), np.sin(ti / 9), 0.1, -5 + ti / 50] for ti in t]
    write_table(
        tmp_path / "timeseries.csv",
        ["time_ps", "temperature_K", "field_T", "mx", "my", "mz", "energy_meV"],
        rows,
    )
    assert_pngs(plot_timeseries(tmp_path), ["timeseries.png"])


def test_captions_define_the_figures_of_a_folder(tmp_path, rng):
    run = fake_sweep(tmp_path / "sweep", rng)
    paths = plot_sweep(run)
    text = (run / "plots" / "captions.md").read_text()
    sections = text.split("\n## ")[1:]
    assert [s.splitlines()[0] for s in sections] == [p.name for p in paths]
    assert "**χ** (1/meV)" in text  # unit from columns.json
    assert "Tc = 2.45 ± 0.05 K (binder crossing)" in text
    # a second writer into the same folder keeps the sections of the first
    t = np.linspace(0, 5, 10)
    write_table(tmp_path / "run" / "timeseries.csv", ["time_ps", "mx", "my", "mz", "energy_meV"],
                [[ti, 0.0, 0.0, 1.0, -1.0] for ti in t])
    plot_timeseries(tmp_path / "run", run / "plots")
    text = (run / "plots" / "captions.md").read_text()
    assert text.count("\n## ") == len(paths) + 1 and "## timeseries.png" in text
    assert "**E** (meV per spin)" in text
    assert not list((run / "plots").glob("*.tmp"))


def test_log_histogram_is_a_normalised_density(rng):
    a = rng.pareto(1.2, 500) + 1.0
    centres, dens, counts = log_histogram(a, 12)
    assert counts.sum() == 500  # every area falls in a bin (ends included)
    edges = np.logspace(np.log10(a.min()), np.log10(a.max()), 13)
    assert np.sum(dens * np.diff(edges)) == pytest.approx(1.0)
    assert np.all(np.diff(centres) > 0)
    # Pareto tail: density falls with area
    assert dens[0] > dens[-1]
    with pytest.raises(InputError):
        log_histogram([0.0, -1.0])


def test_bad_inputs(tmp_path, rng):
    with pytest.raises(InputError, match="does not exist"):
        plot_sweep(tmp_path / "nope")
    with pytest.raises(InputError, match="observables.csv"):
        plot_sweep(tmp_path)
    with pytest.raises(InputError, match="timeseries.csv"):
        plot_timeseries(tmp_path)
    write_table(tmp_path / "observables.csv", ["size", "temperature_K"], [[8, "warm"]])
    with pytest.raises(InputError, match="not a number"):
        plot_sweep(tmp_path)
    write_table(tmp_path / "observables.csv", ["size", "m_abs"], [[8, 0.5]])
    with pytest.raises(InputError, match="temperature_K"):
        plot_sweep(tmp_path)
    write_table(tmp_path / "observables.csv", ["size", "temperature_K", "m_abs"], [[8, 1.0, 0.5]])
    (tmp_path / "tc.json").write_text("{not json")
    with pytest.raises(InputError, match="tc.json"):
        plot_sweep(tmp_path)
    write_table(tmp_path / "timeseries.csv", ["mx", "my"], [[1, 0]])
    with pytest.raises(InputError, match="time_ps"):
        plot_timeseries(tmp_path)
    write_table(tmp_path / "t.csv", ["a", "b"], [[1, 2, 3]])
    with pytest.raises(InputError, match="line 2"):
        read_table(tmp_path / "t.csv")
