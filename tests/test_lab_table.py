"""Parameter table from a lab Ms(T) CSV: the stated laws, mean-field chi_par, errors."""

import numpy as np
import pytest
from scipy import optimize

from thinfilm.input.parameter_table import ParameterTable, TableError
from thinfilm.input.units import KB_J_PER_K, MU_B_J_PER_T

TC, MS0, MU_B = 600.0, 1.1e6, 2.0


def langevin(x):
    return 1 / np.tanh(x) - 1 / x


def mf_m(T, h_T=0.0):
    """Classical Weiss mean field m = L((3 kB Tc m + mu B) / kB T) (unit spins; PHYSICS-
    REFERENCES group 3: kB Tc = z J / 3)."""
    mu = MU_B * MU_B_J_PER_T
    f = lambda m: m - langevin((3 * KB_J_PER_K * TC * m + mu * h_T) / (KB_J_PER_K * T))  # noqa: E731
    return optimize.brentq(f, 0.05, 1.0 - 1e-12, xtol=1e-15)  # the ordered root


def _lab(tmp_path, with_k=False):
    T = np.array([100.0, 300.0, 450.0, 550.0])
    ms = np.array([mf_m(t) for t in T]) * MS0
    p = tmp_path / "lab.csv"
    head = ("# Ms0_A_per_m = 1.1e6\n# thickness_nm = 0.8\n# A0_J_per_m = 1.5e-11\n"
            "# Tc_K = 600\n# atomic_moment_muB = 2\n# A_exponent = 1.8\n")
    if with_k:
        rows = "\n".join(f"{t},{m},{5e5 * (m / MS0) ** 2}" for t, m in zip(T, ms, strict=True))
        p.write_text(head + "temperature_K,Ms_A_per_m,K_J_per_m3\n" + rows + "\n")
    else:
        rows = "\n".join(f"{t},{m}" for t, m in zip(T, ms, strict=True))
        p.write_text(head + "# K0_J_per_m3 = 1e6\ntemperature_K,Ms_A_per_m\n" + rows + "\n")
    return p, T


def test_laws_are_filled_and_stated(tmp_path):
    p, T = _lab(tmp_path)
    tab = ParameterTable.read(p)
    # Callen-Callen K(0) m^3 and A(0) m^1.8 exactly as stated (bookkeeping of the laws)
    assert np.allclose(tab.K_J_per_m3, 1e6 * tab.m_e**3)
    assert np.allclose(tab.A_J_per_m, 1.5e-11 * tab.m_e**1.8)
    assert np.allclose(tab.chi_perp_per_T, MS0 * tab.m_e**2 / (2 * tab.K_J_per_m3))
    text = " ".join(tab.assumptions)
    assert "Callen-Callen" in text and "m_e^1.8" in text and "mean field" in text
    out = tmp_path / "full.csv"
    tab.to_csv(out)
    assert "assumption: K(T) = K(0) m_e^3" in out.read_text()


def test_mean_field_chi_par_is_the_field_derivative(tmp_path):
    # Source: the Weiss-Langevin mean field itself (PHYSICS-REFERENCES group 3). For a lab
    # Ms(T) that is the mean-field curve, the filled-in chi_par must equal dm/dB of the same
    # equation, computed here by a central difference (step 1e-3 T; truncation below 1e-5).
    p, T = _lab(tmp_path)
    tab = ParameterTable.read(p)
    for t, chi in zip(T, tab.chi_par_per_T, strict=True):
        h = 1e-3
        num = (mf_m(t, h) - mf_m(t, -h)) / (2 * h)
        assert chi == pytest.approx(num, rel=1e-4)


def test_measured_k_column_is_kept(tmp_path):
    p, _ = _lab(tmp_path, with_k=True)
    tab = ParameterTable.read(p)
    assert np.allclose(tab.K_J_per_m3, 5e5 * tab.m_e**2)
    assert any("measured" in a for a in tab.assumptions)


def test_missing_header_is_named(tmp_path):
    p = tmp_path / "bad.csv"
    p.write_text("# Ms0_A_per_m = 1e6\ntemperature_K,Ms_A_per_m\n100,9e5\n200,8e5\n")
    with pytest.raises(TableError, match="bad.csv.*thickness_nm.*A0_J_per_m"):
        ParameterTable.read(p)


def test_example_lab_scenario_loads():
    from pathlib import Path

    from thinfilm.input.coarse_spec import load_coarse

    path = Path(__file__).resolve().parents[1] / "scenarios" / "coarse" / "lab_film.yaml"
    sc = load_coarse(path)
    tab = sc.table()
    assert tab.source.startswith("lab table") and len(tab.assumptions) == 5
