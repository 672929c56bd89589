"""Critical fit of measured M(T): recovery of known exponents, error coverage, bad inputs."""

import math

import numpy as np
import pytest

from thinfilm.analysis.mt_fit import fit_magnetisation, power_law_fit, verdict
from thinfilm.analysis.mt_table import read_curve
from thinfilm.cli import main
from thinfilm.input.errors import InputError

TC_SQ = 2.0 / math.log(1.0 + math.sqrt(2.0))  # Onsager 1944, kB Tc / J of the square lattice
J_K = 120.0  # invented film: J / kB = 120 K, so Tc = 272.30 K


def onsager_yang(T_over_j):
    """Spontaneous magnetisation of the square-lattice Ising model, Yang, Phys. Rev. 85, 808
    (1952): M = (1 - sinh(2J/kT)^-4)^(1/8) below Tc, 0 above."""
    x = 1.0 - np.sinh(2.0 / np.asarray(T_over_j)) ** -4.0
    return np.where(x > 0, np.abs(x) ** 0.125, 0.0)


def test_yang_values_used_here():
    # test values M(2.0) = 0.911319, M(2.2) = 0.784755 quoted from Yang's formula (exact)
    assert onsager_yang(2.0) == pytest.approx(0.911319, abs=1e-6)
    assert onsager_yang(2.2) == pytest.approx(0.784755, abs=1e-6)


def test_onsager_yang_fits_cover_tc_and_beta_one_eighth():
    """Over 120 noise seeds the fitted beta = 1/8 and Tc (Onsager) fall within one fit error
    in about 68 % of the cases. Tolerance: binomial standard error sqrt(0.68 0.32 / 120) =
    0.043, accepted band 0.68 +- 0.13 (3 standard errors)."""
    T = np.linspace(0.75, 0.995, 30) * TC_SQ
    m = onsager_yang(T)
    sigma = 0.004
    hit_b = hit_t = 0
    n = 120
    for seed in range(n):
        y = m + np.random.default_rng(seed).normal(0, sigma, T.size)
        f = power_law_fit(T, y, np.full(T.size, sigma), correction=True, delta=1.0)
        hit_b += abs(f["params"][2] - 0.125) <= f["errors"][2]
        hit_t += abs(f["params"][1] - TC_SQ) <= f["errors"][1]
    assert 0.55 <= hit_b / n <= 0.81
    assert 0.55 <= hit_t / n <= 0.81


@pytest.mark.parametrize("seed", [1, 2])
def test_automatic_window_on_onsager_yang_names_2d_ising(seed):
    T = np.linspace(1.5, 2.45, 40)
    rng = np.random.default_rng(seed)
    y = 0.8 * onsager_yang(T) + rng.normal(0, 0.004, T.size)
    res = fit_magnetisation({"temperature_K": T * J_K, "signal": y,
                             "signal_err": np.full(T.size, 0.004)})
    tot_t = math.hypot(res["tc_err_K"], res["tc_window_K"])
    assert abs(res["tc_K"] - TC_SQ * J_K) <= 3 * tot_t  # Onsager 1944
    assert abs(res["beta"] - 0.125) <= 3 * res["beta_total_err"]  # Yang 1952
    assert "2D Ising" in res["verdict"]["consistent"]
    assert "mean field" in res["verdict"]["excluded"]
    assert "3D Ising" in res["verdict"]["excluded"]


@pytest.mark.parametrize("beta,name", [(3 * math.pi**2 / 128, "2D XY (finite film)"),
                                       (0.3265, "3D Ising"), (0.3689, "3D Heisenberg"),
                                       (0.5, "mean field")])
def test_pure_power_laws_recover_their_exponent(beta, name):
    """Synthetic M0 (1 - T/Tc)^beta with a flat noisy tail above Tc; the exponents are those
    of Bramwell-Holdsworth 1993, Pelissetto-Vicari 2002, Campostrini et al. 2002, Landau."""
    tc = 300.0
    T = np.linspace(200.0, 330.0, 53)
    rng = np.random.default_rng(7)
    y = 2.5 * np.clip(1 - T / tc, 0, None) ** beta + rng.normal(0, 0.01, T.size)
    res = fit_magnetisation({"temperature_K": T, "signal": y, "signal_err": np.full(T.size, 0.01)})
    # 3 sigma of the fit and window sensitivity in quadrature
    assert abs(res["beta"] - beta) <= 3 * res["beta_total_err"]
    assert abs(res["tc_K"] - tc) <= 3 * math.hypot(res["tc_err_K"], res["tc_window_K"])
    assert name in res["verdict"]["consistent"]


def test_verdict_separates_classes_and_cautions_on_narrow_windows():
    v = verdict(0.345, 0.015, 0.02, 0.1)  # 1.2 sigma from 3D Ising, 1.6 from 3D Heisenberg
    assert "3D Ising" in v["consistent"] and "3D Heisenberg" in v["consistent"]
    assert "2D Ising" in v["excluded"] and "mean field" in v["excluded"]
    assert "effective exponent" in v["text"]  # 0.7 decades < 1 decade


def _write(path, text):
    path.write_text(text)
    return path


def test_bad_inputs_give_one_paragraph_errors(tmp_path):
    rows = "\n".join(f"{t},{max(0.0, 1 - t / 300) ** 0.3:.4f}" for t in range(200, 320, 5))
    p = _write(tmp_path / "nounit.csv", "temperature,moment_emu\n" + rows)
    with pytest.raises(InputError, match="column 'temperature' has no unit"):
        read_curve(p)
    p = _write(tmp_path / "badtemp.csv", "temperature_V,moment_emu\n" + rows)
    with pytest.raises(InputError, match="not a temperature unit"):
        read_curve(p)
    p = _write(tmp_path / "loop.csv", "temperature_K,moment_emu\n200,1\n210,0.9\n205,0.95\n"
               "220,0.8\n230,0.7\n240,0.5\n")
    with pytest.raises(InputError, match="not monotonic .* data row 3, 205 K"):
        read_curve(p)
    flat = "\n".join(f"{t},{1.0 - 1e-4 * (t - 200):.5f}" for t in range(200, 320, 5))
    p = _write(tmp_path / "flat.csv", "temperature_K,moment (emu)\n" + flat)
    with pytest.raises(InputError, match="never falls"):
        fit_magnetisation(read_curve(p))
    p = _write(tmp_path / "errunit.csv", "temperature_K,moment (emu),moment_err (mrad)\n"
               + "\n".join(f"{r},0.01" for r in rows.splitlines()))
    with pytest.raises(InputError, match="error column"):
        read_curve(p)


def test_cooling_curve_in_celsius_is_read_in_kelvin(tmp_path):
    p = _write(tmp_path / "c.csv", "temperature (degC),signal [a.u.]\n"
               + "\n".join(f"{t},{1 - t / 100:.3f}" for t in range(60, 0, -10)))
    c = read_curve(p)
    assert c["reversed"] and c["temperature_K"][0] == pytest.approx(283.15)
    assert c["signal_unit"] == "a.u."


def test_cli_fit_mt_writes_outputs_and_errors_in_one_paragraph(tmp_path, capsys):
    T = np.linspace(1.5, 2.45, 40)
    y = onsager_yang(T) + np.random.default_rng(3).normal(0, 0.004, T.size)
    p = _write(tmp_path / "m.csv", "temperature_K,kerr (mrad),kerr_err (mrad)\n"
               + "\n".join(f"{t * J_K:.3f},{v:.5f},0.004" for t, v in zip(T, y, strict=True)))
    assert main(["fit-mt", str(p), "-o", str(tmp_path / "out")]) == 0
    out = capsys.readouterr().out
    assert "verdict:" in out and "2D Ising" in out
    for name in ("mt_fit.json", "mt_fit.png", "mt_fit_windows.csv", "captions.md"):
        assert (tmp_path / "out" / name).is_file()
    bad = _write(tmp_path / "bad.csv", "temperature,kerr (mrad)\n1,2\n")
    assert main(["fit-mt", str(bad), "-o", str(tmp_path / "o2")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "no unit" in err
