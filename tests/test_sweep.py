"""Temperature sweeps: folder contents, determinism, chains, refinement, inputs, MC vs sLLG."""

import json
import math

import numpy as np
import pytest
from sweep_helpers import tiny_sweep

from thinfilm.input.errors import InputError, ScenarioError, ThinFilmWarning
from thinfilm.input.scenario import load_scenario
from thinfilm.runs.folder import read_csv_table
from thinfilm.runs.sweep import run_sweep, sweep_plan
from thinfilm.runs.sweep_point import ROW_COLUMNS, PointTask, compute_point, point_name, point_seed
from thinfilm.runs.sweep_tables import TABLE_EXTRA

pytestmark = pytest.mark.filterwarnings("ignore::thinfilm.input.errors.ThinFilmWarning")

POINT_FILES = ("final.npz", "timeseries.csv", "correlation.csv", "domain_sizes.csv", "point.json")


def test_sweep_folder_holds_tables_points_and_manifest(tmp_path):
    sc = tiny_sweep()
    out = run_sweep(sc, tmp_path / "s", workers=1, progress=False)
    tab = read_csv_table(out / "observables.csv")
    assert list(tab) == list(ROW_COLUMNS + TABLE_EXTRA)
    assert list(tab["size"]) == [6, 6, 6, 8, 8, 8]
    assert np.allclose(tab["film_side_nm"], 0.3 * tab["size"])  # square lattice, 0.3 nm
    assert np.allclose(tab["temperature_K"], [1.5, 2.5, 3.5] * 2)
    assert set(tab["method"]) == {"monte-carlo"}
    # order parameter falls through the transition (common practice: ferromagnet, |m| ~ 1 at
    # low T); the per-spin energy is bounded by the ground state -2J - K = -0.6 meV (exact)
    m = tab["m_abs"].reshape(2, 3)
    assert np.all(m[:, 0] > m[:, 2])
    assert np.all(tab["energy_meV"] > -0.6)
    assert np.all(tab["m_abs_err"] > 0) and np.all(tab["susceptibility_err"] > 0)
    units = json.loads((out / "columns.json").read_text())
    assert set(ROW_COLUMNS) <= set(units)
    assert units["susceptibility"].startswith("1/meV per spin")
    tc = json.loads((out / "tc.json").read_text())
    assert {"tc_K", "tc_err_K", "method"} <= set(tc)
    man = json.loads((out / "manifest.json").read_text())
    assert man["kind"] == "sweep" and man["finished"] is True and man["order"] == "independent"
    assert man["sizes"] == [6, 8] and man["temperatures_K"] == [1.5, 2.5, 3.5]
    assert "numpy" in man["versions"] and man["wall_time_s"] >= 0
    for L in (6, 8):
        for t in (1.5, 2.5, 3.5):
            d = out / "points" / point_name(L, t)
            assert all((d / f).is_file() for f in POINT_FILES)
            assert f"points/{point_name(L, t)}/point.json" in man["files"]
    d = out / "points" / "L8_T2.500K"
    with np.load(d / "final.npz") as z:
        assert z["spins"].shape == (8, 8, 3) and "positions_nm" not in z.files  # not per point
        assert z["spins"].dtype == np.float32
        assert float(z["temperature_K"]) == 2.5 and str(z["shape"]) == "square"
        assert np.allclose(np.linalg.norm(z["spins"], axis=-1), 1.0, atol=1e-6)  # float32
    from thinfilm.runs.folder import load_snapshot

    pos = load_snapshot(d / "final.npz")["positions_nm"]  # rebuilt from shape and spacing
    assert pos.shape == (8, 8, 2) and pos[0, 1, 0] == pytest.approx(pos[1, 0, 1])
    dom = read_csv_table(d / "domain_sizes.csv")
    assert {"area_nm2", "diameter_nm", "sign"} <= set(dom)
    # every site belongs to one domain: the areas of a snapshot add up to the film (exact)
    first = dom["snapshot"] == 0
    assert np.isclose(dom["area_nm2"][first].sum(), 64 * 0.3**2)
    ts = read_csv_table(d / "timeseries.csv")
    assert len(ts["energy_meV"]) == 160 and {"m_axis", "m_norm"} <= set(ts)
    cor = read_csv_table(d / "correlation.csv")
    assert cor["r_nm"][0] == 0.0 and cor["C"][0] > 0
    row = json.loads((d / "point.json").read_text())["row"]
    assert row["seed"] == point_seed(11, 8, 2.5)


def test_same_seed_same_table_whatever_the_worker_count(tmp_path):
    sc = tiny_sweep(sizes=(6,), temps=("1.5 K", "3.5 K"))
    a = run_sweep(sc, tmp_path / "a", workers=1, progress=False)
    b = run_sweep(sc, tmp_path / "b", workers=2, progress=False)
    assert (a / "observables.csv").read_bytes() == (b / "observables.csv").read_bytes()
    assert json.loads((b / "manifest.json").read_text())["executor"]["kind"] == "processes"
    c = run_sweep(tiny_sweep(sizes=(6,), temps=("1.5 K", "3.5 K"), seed=12), tmp_path / "c",
                  workers=1, progress=False)
    assert (a / "observables.csv").read_bytes() != (c / "observables.csv").read_bytes()


def test_heating_chain_continues_from_the_previous_final_state(tmp_path):
    sc = tiny_sweep(order="heating", sizes=(6,))
    assert sweep_plan(sc) == [[(6, 1.5), (6, 2.5), (6, 3.5)]]
    assert sweep_plan(sc.with_changes(sweep=sc.sweep.__class__(
        **{**sc.sweep.__dict__, "order": "cooling"}))) == [[(6, 3.5), (6, 2.5), (6, 1.5)]]
    out = run_sweep(sc, tmp_path / "h", workers=1, progress=False)
    det = [json.loads((out / "points" / point_name(6, t) / "point.json").read_text())["details"]
           for t in (1.5, 2.5, 3.5)]
    assert det[0]["start"] == "initial"
    assert det[1]["start"] == "points/L6_T1.500K/final.npz"
    assert det[2]["start"] == "points/L6_T2.500K/final.npz"
    assert json.loads((out / "manifest.json").read_text())["order"] == "heating"
    # the chain really starts from that state: recomputing point 2 from it gives its row
    with np.load(out / "points" / "L6_T1.500K" / "final.npz") as z:
        spins = z["spins"]
    res = compute_point(PointTask(sc, 6, 2.5, point_seed(sc.seed, 6, 2.5), spins, "x"))
    row = json.loads((out / "points" / "L6_T2.500K" / "point.json").read_text())["row"]
    assert res["row"]["energy_meV"] == row["energy_meV"]


def test_near_tc_refinement_adds_finer_points_inside_the_range(tmp_path):
    sc = tiny_sweep(sizes=(6,), temps=("1 K", "4 K"), refine="0.5 K", samples=120)
    first = sc.sweep.temperatures_K
    assert len(first) == 7
    out = run_sweep(sc, tmp_path / "r", workers=1, progress=False)
    man = json.loads((out / "manifest.json").read_text())
    extra = man["refined_temperatures_K"]
    assert 3 <= len(extra) <= 6
    assert all(1.0 < t < 4.0 and min(abs(t - f) for f in first) > 0.04 for t in extra)
    assert max(extra) - min(extra) < 1.0  # finer than the first-pass step of 0.5 K
    t = read_csv_table(out / "observables.csv")["temperature_K"]
    assert len(t) == 7 + len(extra) and np.all(np.diff(t) > 0)


def test_sweep_warns_once_about_short_time_series(tmp_path):
    with pytest.warns(ThinFilmWarning, match="effectively independent"):
        run_sweep(tiny_sweep(sizes=(6,), temps=("2.5 K", "3 K"), samples=20), tmp_path / "w",
                  workers=1, progress=False)


def test_bad_sweep_inputs_name_the_key_and_value(tmp_path):
    with pytest.raises(ScenarioError, match=r"temperature.*above 0 K.*0\.0"):
        run_sweep(tiny_sweep(temps=("0 K", "2 K")), tmp_path / "z", workers=1)
    with pytest.raises(ScenarioError, match=r"lattice\.cells.*\[8, 6\]"):
        sc = load_scenario({"lattice": {"shape": "square", "cells": [8, 6], "spacing": "0.3 nm"},
                            "material": {"moment": "1 muB", "exchange": "0.25 meV"},
                            "temperature": ["1 K", "2 K"]})
        run_sweep(sc, tmp_path / "y", workers=1)
    with pytest.raises(InputError, match="^workers must be a positive integer, got 0"):
        run_sweep(tiny_sweep(), tmp_path / "x", workers=0)
    sc = tiny_sweep(sizes=(6,), temps=("2 K", "3 K"))
    run_sweep(sc, tmp_path / "v", workers=1, progress=False)
    with pytest.raises(InputError, match="already holds a run.*resume=True.*overwrite=True"):
        run_sweep(sc, tmp_path / "v", workers=1)
    with pytest.raises(InputError, match="different scenario"):
        run_sweep(tiny_sweep(sizes=(6,), temps=("2 K", "4 K")), tmp_path / "v", resume=True,
                  workers=1)


def test_a_sweep_run_through_the_api_writes_the_sweep_plots(tmp_path):
    from thinfilm.api import run

    out = run(tiny_sweep(sizes=(6,), temps=("1.5 K", "2.5 K", "3.5 K")), tmp_path / "p",
              workers=1, progress=False)
    assert (out / "plots" / "sweep_thermodynamics.png").is_file()


def _point(method, temperature_K, *, llg_duration="100 ps", samples=8000, timestep_fs=2.0,
           seed=3):
    """One point of a 16 x 16 square film, K/J = 0.5 (J = 1 meV, 1 muB); samples 60 fs apart
    (LLG) or 30 sweeps apart (MC)."""
    every = 30 if method == "monte-carlo" else int(round(60.0 / timestep_fs))
    sc = load_scenario({
        "lattice": {"shape": "square", "cells": [16, 16], "spacing": "0.3 nm"},
        "material": {"moment": "1 muB", "exchange": "1 meV",
                     "anisotropy": {"constant": "0.5 meV"}},
        "temperature": [f"{temperature_K} K", f"{temperature_K + 1} K"], "initial": "up",
        "seed": seed, "sweep": {"snapshots": 2},
        "dynamics": {"method": method, "damping": 1.0, "timestep": f"{timestep_fs:g} fs",
                     "sample_every": every,
                     **({"sweeps": {"warmup": 500, "samples": samples}} if method == "monte-carlo"
                        else {"duration": llg_duration, "warmup": "10 ps"})}})
    return compute_point(PointTask(sc, 16, temperature_K,
                                   point_seed(seed, 16, temperature_K)))["row"]


def _mc_llg_pair(temperature_K, *, llg_duration="100 ps", samples=8000):
    """The film sampled by MC and by sLLG (2 fs)."""
    return (_point("monte-carlo", temperature_K, samples=samples),
            _point("llg", temperature_K, llg_duration=llg_duration))


@pytest.mark.parametrize("temperature_K", [4.6, 8.0])  # kB T / J = 0.40 and 0.69 (Tc ~ 0.9 J)
def test_monte_carlo_and_stochastic_llg_agree(temperature_K):
    # Both sample exp(-E/kB T): Metropolis et al., J. Chem. Phys. 21, 1087 (1953) for MC;
    # W. F. Brown, Phys. Rev. 130, 1677 (1963) for the stationary distribution of the
    # stochastic LLG equation. Tolerance: 4 combined standard errors (blocked jackknife, about
    # 0.02 meV here); the Heun step (2 fs) makes the LLG film colder by an amount linear in the
    # step, -0.008 meV per spin at 9.3 K (0.5 %, measured by the slow test below), well inside.
    mc, llg = _mc_llg_pair(temperature_K)
    for key in ("energy_meV", "m_abs"):
        sigma = np.hypot(mc[key + "_err"], llg[key + "_err"])
        assert abs(mc[key] - llg[key]) < 4 * sigma, (key, mc[key], llg[key], sigma)
    assert mc["energy_meV_err"] < 0.01 and llg["energy_meV_err"] < 0.01


HEUN_STEPS_FS = (2.0, 4.0, 8.0)


@pytest.mark.slow
@pytest.mark.parametrize("temperature_K", [4.6, 8.0, 9.3])
def test_monte_carlo_and_stochastic_llg_agree_tightly(temperature_K):
    # Same sources as above (Metropolis 1953; Brown 1963), about 5x smaller errors. The Heun
    # scheme converges weakly with order 1 (Kloeden and Platen, Numerical Solution of SDEs,
    # Springer 1992), and its error in a long-time average has an expansion c1 dt + O(dt^2)
    # (Talay and Tubaro, Stoch. Anal. Appl. 8, 483, 1990; both from memory). Measured at 9.3 K
    # (16 x 16, 2000 ps each): E = -1.4960(19), -1.4968(22), -1.5053(22), -1.5216(17) meV at
    # dt = 1, 2, 4, 8 fs, a straight line of slope -0.0041 meV/fs; at 2 fs that bias alone was
    # 4 standard errors, which is why the 2 fs run alone sat 4.4 sigma from Monte Carlo. So the
    # LLG value is the weighted straight line through dt = 2, 4, 8 fs extrapolated to dt = 0
    # (the intercept's error is 1.2x a single run's). Tolerance: 4 combined standard errors
    # (about 0.01 meV, 0.7 % of E; a 2 % shift of the temperature scale moves E by 0.03 meV
    # at 9.3 K). The line must fit (chi2 of 1 dof below 9): a defect that is not a step error,
    # e.g. a wrong noise variance, shifts the intercept, and a step error of another order
    # bends the line.
    mc = _point("monte-carlo", temperature_K, samples=100000)
    llg = [_point("llg", temperature_K, llg_duration="2000 ps", timestep_fs=dt)
           for dt in HEUN_STEPS_FS]
    dts = np.array(HEUN_STEPS_FS)
    for key in ("energy_meV", "m_abs"):
        y = np.array([r[key] for r in llg])
        e = np.array([r[key + "_err"] for r in llg])
        (slope, icpt), cov = np.polyfit(dts, y, 1, w=1.0 / e, cov="unscaled")
        chi2 = float(np.sum(((y - (slope * dts + icpt)) / e) ** 2))
        assert chi2 < 9.0, (key, y, e, chi2)
        sigma = math.hypot(mc[key + "_err"], math.sqrt(cov[1, 1]))
        assert abs(mc[key] - icpt) < 4 * sigma, (key, mc[key], icpt, sigma, slope)
