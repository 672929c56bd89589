"""Plan helpers for finite-size scaling and extrapolated lengths (thinfilm.plan.extrapolated).

Synthetic observables tables: the exact square-Ising correlation length above and below Tc,
xi = 1/[2(K* - K)] and 1/[4(K - K*)], tanh K* = exp(-2K) (Onsager 1944; McCoy and Wu 1973,
textbook; below-Tc form from memory), in nm for a 1 nm cell, with 2 % noise; a U4-like
scaling curve of x = t L (nu = 1, Onsager 1944). Temperatures in units of J/kB.
"""

import numpy as np
import pytest

from thinfilm.input.errors import InputError
from thinfilm.plan.extrapolated import (
    EXTRAPOLATION_COLUMNS,
    collapse_from_table,
    extrapolated_lengths,
)

TC = 2.0 / np.log(1.0 + np.sqrt(2.0))


def xi_exact(T):
    K = 1.0 / np.asarray(T, dtype=float)
    ks = np.arctanh(np.exp(-2.0 * K))
    return np.where(T > TC, 1.0 / (2.0 * (ks - K)), 1.0 / (4.0 * (K - ks)))


def table(seed=0, sizes=(16, 32, 64)):
    rng = np.random.default_rng(seed)
    cols = {k: [] for k in ("size", "temperature_K", "binder", "binder_err",
                            "correlation_length_nm", "correlation_length_nm_err",
                            "mean_domain_area_nm2", "mean_domain_area_nm2_err")}
    for L in sizes:
        T = TC * (1 + np.linspace(-0.3, 0.3, 25))
        T = T[np.abs(T - TC) > 1e-9]
        x = (T - TC) / TC * L
        u = (2 / 3) / (1 + np.exp(1.5 * x + 0.3))
        xi = np.minimum(xi_exact(T), L / 3.0)  # a finite film caps xi (crudely)
        d = 2.0 * xi  # arbitrary domain diameter, only to exercise the column
        cols["size"] += [L] * T.size
        cols["temperature_K"] += list(T)
        cols["binder"] += list(u + 0.004 * rng.standard_normal(T.size))
        cols["binder_err"] += [0.004] * T.size
        cols["correlation_length_nm"] += list(xi * (1 + 0.02 * rng.standard_normal(T.size)))
        cols["correlation_length_nm_err"] += list(0.02 * xi)
        area = np.pi * d**2 / 4
        cols["mean_domain_area_nm2"] += list(area * (1 + 0.04 * rng.standard_normal(T.size)))
        cols["mean_domain_area_nm2_err"] += list(0.04 * area)
    return {k: np.array(v, dtype=float) for k, v in cols.items()}


def test_extrapolated_lengths_table_has_flags_and_covers_the_exact_xi():
    tab = table(1)
    out = extrapolated_lengths(tab, 1.0, tc_K=TC, tc_err_K=0.002, anisotropy=1.0,
                               resolution_nm=20.0, amplitude_ratio=2.0)
    cols = out["columns"]
    assert set(cols) == set(EXTRAPOLATION_COLUMNS)
    flags = np.array(cols["correlation_length_flag"])
    assert set(flags) <= {"measured", "finite-size scaling", "extrapolated"}
    assert "extrapolated" in flags
    T = np.array(cols["temperature_K"])
    # "measured" only where some size converged (here: the cap L/3 is below the exact length
    # for every size closer to Tc than |t| ~ 0.03): rows with xi of 64 nm / 10 and more are not
    meas = flags == "measured"
    assert np.all(xi_exact(T[meas]) < 64.0 / 3)
    assert "finite-size scaling" in flags
    xi = np.array(cols["correlation_length_nm"])
    err = np.array(cols["correlation_length_err_nm"])
    ext = flags == "extrapolated"
    # extrapolated rows reach beyond what the largest film (64 nm / 6) could hold ...
    assert xi[ext].max() > 64.0 / 6
    # ... and agree with the exact length within 4 of their errors
    assert np.all(np.abs(xi - xi_exact(T)) < 4 * err)
    lo, hi = out["resolved_window"]["window_K"]
    assert lo < TC < hi
    assert out["fits"]["correlation_length"]["nu"] == 1.0
    assert "domain_diameter" in out["fits"]


def test_extrapolated_lengths_declines_a_power_law_for_easy_plane():
    out = extrapolated_lengths(table(2), 1.0, tc_K=TC, tc_err_K=0.002, anisotropy=-1.0)
    assert out["columns"] is None and "BKT" in out["note"]


def binder_table(seed, sizes=(16, 32, 64)):
    rng = np.random.default_rng(seed)
    x = np.tile(np.linspace(-1.2, 1.2, 9), len(sizes))
    L = np.repeat(np.array(sizes, dtype=float), 9)
    u = (2 / 3) / (1 + np.exp(1.5 * x + 0.3))
    return {"size": L, "temperature_K": TC * (1 + x / L),
            "binder": u + 0.004 * rng.standard_normal(u.size), "binder_err": np.full(u.size, 0.004),
            "correlation_length_nm": 0.9 * np.exp(-0.8 * x) * L,
            "correlation_length_nm_err": 0.01 * L}


def test_collapse_from_table_gives_tc_and_the_ising_check():
    tab = binder_table(3)
    out = collapse_from_table(tab, {16: 16.0, 32: 32.0, 64: 64.0}, tc_guess_K=2.25,
                              anisotropy=1.0, x_window=(-1.0, 1.0))
    assert abs(out["tc_K"] - TC) < 4 * out["tc_err_K"]
    assert out["universality"]["consistent"] is True
    both = collapse_from_table(tab, 1.0, tc_guess_K=2.25, anisotropy=1.0, x_window=(-1.0, 1.0),
                               quantities=("binder", "xi_over_L"))
    assert both["tc_err_K"] < out["tc_err_K"] and abs(both["tc_K"] - TC) < 4 * both["tc_err_K"]
    with pytest.raises(InputError, match="no entry for size"):
        collapse_from_table(tab, {16: 16.0}, tc_guess_K=2.25, anisotropy=1.0,
                            quantities=("xi_over_L",))


def fss_table(seed, sizes=(16, 32, 64)):
    """Above-Tc lengths of finite films from a crossover that is not the fit's own form:
    xi_L = xi tanh(0.9 L / xi) (0.9 L at L << xi, approaching xi as 2 exp(-1.8 L/xi) at
    L >> xi, the exponential approach of a length on a torus but outside the fit's family;
    ours),
    xi the exact square-Ising length (Onsager 1944), 2 % noise."""
    rng = np.random.default_rng(seed)
    cols = {k: [] for k in ("size", "temperature_K", "correlation_length_nm",
                            "correlation_length_nm_err")}
    for L in sizes:
        T = TC * (1 + np.geomspace(0.005, 0.3, 14))
        xi = xi_exact(T)
        xl = xi * np.tanh(0.9 * L / xi)
        cols["size"] += [L] * T.size
        cols["temperature_K"] += list(T)
        cols["correlation_length_nm"] += list(xl * (1 + 0.02 * rng.standard_normal(T.size)))
        cols["correlation_length_nm_err"] += list(0.02 * xl)
    return {k: np.array(v, dtype=float) for k, v in cols.items()}


def test_finite_size_scaling_recovers_the_infinite_film_where_no_size_converges():
    # exact square-Ising xi (Onsager 1944; McCoy and Wu 1973) cut down by the film: where the
    # largest film cuts xi by more than 3 % (6 standard errors of a point), no row may be
    # flagged measured; the infinite-film values from the scaling fit must agree with the exact
    # length within 3 of their errors (14 temperatures, 0.3 % chance each for Gaussian errors;
    # the crossover shape lies outside the fit's family: over seeds 0-5 the values stayed
    # within 2.0 errors)
    tab = fss_table(4)
    out = extrapolated_lengths(tab, 1.0, tc_K=TC, tc_err_K=0.0, anisotropy=1.0,
                               temperatures_K=np.unique(tab["temperature_K"]))
    cols = out["columns"]
    T = np.array(cols["temperature_K"])
    xi, err = np.array(cols["correlation_length_nm"]), np.array(cols["correlation_length_err_nm"])
    flags = np.array(cols["correlation_length_flag"])
    near = np.tanh(0.9 * 64.0 / xi_exact(T)) < 0.97
    assert near.sum() >= 4 and np.all(flags[near] == "finite-size scaling")
    conv = np.array([np.nan if v is None else v for v in cols["converged_length_nm"]])
    assert np.all(np.isnan(conv[near])) and np.isfinite(conv[~near]).any()
    ok = flags != "refused"
    assert np.all(np.abs(xi[ok] - xi_exact(T[ok])) < 3 * err[ok])
    assert out["fits"]["correlation_length"]["finite_size"] is True
    # the largest lattice's own values there lie below the exact length by more than 3 errors
    # of the scaled values: the test can tell the two apart
    for t, e in zip(T[near], err[near], strict=True):
        at = (tab["size"] == 64) & np.isclose(tab["temperature_K"], t)
        own = tab["correlation_length_nm"][at]
        assert own.size == 1 and xi_exact(t) - own[0] > 3 * e


def test_plan_asks_for_large_lattices_near_tc_and_uses_them(tmp_path):
    # the tanh-cut exact lengths of fss_table on 16, 32, 64 nm films: near Tc no size
    # converges, so the plan writes a large-lattice scenario and the commands; once that run's
    # table exists (here the exact lengths, Onsager 1944, on L = 1024 at the asked temperatures)
    # (L = 2048: > 10 xi at each) those temperatures become measured and are not asked again
    import yaml

    from thinfilm._io import write_csv
    from thinfilm.input.scenario import load_scenario
    from thinfilm.plan.beyond_lattice import LARGE_DIR, LARGE_YAML, beyond_lattice
    from thinfilm.runs.folder import read_csv_table

    tab = fss_table(7)
    names = list(tab)
    write_csv(tmp_path / "observables.csv", names,
              list(zip(*[tab[c] for c in names], strict=True)))
    src = tmp_path / "film.yaml"
    src.write_text(yaml.safe_dump({
        "name": "exact-film", "lattice": {"shape": "square", "cells": [16, 16], "spacing": "1 nm"},
        "material": {"moment": "1 muB", "exchange": "1 meV",
                     "anisotropy": {"constant": "1 meV", "axis": [0, 0, 1]}},
        "temperature": ["3 K", "4 K"], "sizes": [16, 32, 64],
        "dynamics": {"method": "monte-carlo"}}))
    sc = load_scenario(src)
    res = beyond_lattice(sc, tmp_path, tc_K=TC, tc_err_K=0.0, resolution_nm=30.0)
    req = res["large_lattice_request"]
    assert req["commands"] and (tmp_path / LARGE_YAML).is_file()
    asked = load_scenario(tmp_path / LARGE_YAML)
    assert asked.sweep.sizes == (req["size"],) and "cluster" in asked.dynamics.moves
    T = np.array(req["temperatures_K"])
    # the size asked for holds 10 xi (+ 2 errors) at every asked temperature, or it is the
    # largest the plan asks for (1024) and the plan says that it falls short
    assert req["enough"] == (req["film_side_nm"] >= req["needed_side_nm"])
    assert req["enough"] or req["size"] == 1024
    assert req["needed_side_nm"] > 10 * xi_exact(T).max()
    (tmp_path / LARGE_DIR).mkdir()
    write_csv(tmp_path / LARGE_DIR / "observables.csv", names,
              [(2048, t, x, 0.01 * x) for t, x in zip(T, xi_exact(T), strict=True)])
    res = beyond_lattice(sc, tmp_path, tc_K=TC, tc_err_K=0.0, resolution_nm=30.0)
    out = read_csv_table(tmp_path / "extrapolation.csv")
    for t in T:
        k = np.argmin(np.abs(out["temperature_K"] - t))
        assert out["correlation_length_flag"][k] == "measured"
        assert out["converged_size"][k] == 2048
    assert res["large_lattice_used"]["sizes"] == [2048]
    assert not any(t in (res.get("large_lattice_request") or {}).get("temperatures_K", [])
                   for t in T)
