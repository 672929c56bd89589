"""Parameter table measured on the atomistic film: limits, Callen-Callen, CSV."""

import numpy as np
import pytest

from thinfilm.input.parameter_table import ParameterTable, TableError
from thinfilm.input.units import MEV_J, MU_B_J_PER_T
from thinfilm.runs.parameter_sweep import AtomisticFilm, checks, measure_table

FILM = AtomisticFilm(0.25, 0.5, 2 * MU_B_J_PER_T, 20 * MEV_J, 2 * MEV_J)


@pytest.fixture(scope="module")
def low_t_table(tmp_path_factory):
    out = tmp_path_factory.mktemp("table")
    return measure_table(FILM, 24, [4.0, 15.0, 30.0, 45.0, 60.0], seed=2, warmup=400,
                         samples=800, out_dir=out), out


def test_low_temperature_limits_are_the_lattice_mapping(low_t_table):
    # T -> 0: A -> J / (2 t), K -> K_site / (a^2 t) (the square-lattice mapping, exact at T = 0:
    # PHYSICS-REFERENCES group 5, derived). At 4 K (kB T / J = 0.017) classical spin waves
    # lower both by about kB T / J ~ 2 %; the tolerance 5 % covers that and the fit error
    # (about 2 %, jackknife).
    tab, _ = low_t_table
    assert tab.A_J_per_m[0] == pytest.approx(FILM.a0_J_per_m, rel=0.05)
    assert tab.K_J_per_m3[0] == pytest.approx(FILM.k0_J_per_m3, rel=0.05)
    assert tab.m_e[0] > 0.99


def test_callen_callen_m_cubed(low_t_table):
    # Callen and Callen, J. Phys. Chem. Solids 27, 1271 (1966): single-ion uniaxial anisotropy
    # K(T) / K(0) = m^3 at low T. Fitted exponent within three of its standard errors (about
    # 0.15 here) of 3, and within 0.5 in any case (a wrong K estimator, e.g. K from the
    # bare site term or from m^2, lands at 0 or 2).
    tab, _ = low_t_table
    c = checks(tab, m_min=0.85)
    assert abs(c["K_exponent"] - 3.0) < max(3 * c["K_exponent_err"], 0.2)
    assert abs(c["K_exponent"] - 3.0) < 0.5
    # exchange stiffness falls more slowly than K (mean field: m^2; consistency check)
    assert 1.0 < c["A_exponent"] < 2.5


def test_table_is_written_with_the_sweep_and_reads_back(low_t_table):
    tab, out = low_t_table
    back = ParameterTable.from_csv(out / "parameters.csv")
    assert np.allclose(back.m_e, tab.m_e) and np.allclose(back.A_J_per_m, tab.A_J_per_m)
    assert back.ms0_A_per_m == pytest.approx(FILM.ms0_A_per_m)
    assert np.all(np.isfinite(back.errors["K_J_per_m3"]))
    assert (out / "parameters.json").is_file()


def test_low_temperature_magnetisation_against_spin_waves(low_t_table):
    # Classical harmonic spin waves of E = -J sum S.S - K sum S_z^2 (derived, exact to leading
    # order as T -> 0): 1 - m = (kB T / N) sum_k 1 / (J lambda_k + 2 K), lambda_k = 4 - 2 cos
    # k_x - 2 cos k_y on the sweep's 24 x 24 torus (k = 0 included: it tilts the whole film
    # and lowers <m_z>, but <|m|> keeps it, so it is left out for <|m|>). Next order is
    # (kB T / J)^2: 5 % of 1 - m at 15 K; tolerance 8 % of 1 - m plus three standard errors.
    tab, _ = low_t_table
    n = 24
    k = 2 * np.pi * np.fft.fftfreq(n)
    lam = 4 - 2 * np.cos(k)[None, :] - 2 * np.cos(k)[:, None]
    inv = 1.0 / (FILM.exchange_J * lam + 2 * FILM.anisotropy_J)
    inv[0, 0] = 0.0
    for T, m, e in zip(tab.temperature_K[:2], tab.m_e[:2], tab.errors["m_e"][:2], strict=True):
        sw = 1.380649e-23 * T * inv.sum() / n**2
        assert abs((1 - m) - sw) < 0.08 * sw + 3 * e


def test_bad_table_names_the_file_and_column(tmp_path):
    p = tmp_path / "t.csv"
    p.write_text("# Ms0_A_per_m = 1e6\n# thickness_nm = 1\ntemperature_K,m_e\n1,1\n2,0.9\n")
    with pytest.raises(TableError, match="t.csv.*chi_par_per_T"):
        ParameterTable.from_csv(p)
