"""Coarse film (stochastic LLB): stationary distribution, T = 0 limit, refusals."""

import math

import numpy as np
import pytest
from scipy import integrate

from thinfilm.engines.llb import CoarseFilm
from thinfilm.input.parameter_table import ParameterTable
from thinfilm.input.units import KB_J_PER_K


def flat_table(me=0.8, chi=0.01, chi_perp=0.05, K=2e5, A=0.0, tc=200.0, ms0=6e5, t_nm=0.5):
    T = np.array([10.0, 190.0])
    return ParameterTable(T, [me, me], [chi, chi], [chi_perp, chi_perp], [K, K], [A, A],
                          ms0_A_per_m=ms0, tc_K=tc, thickness_nm=t_nm, source="test")


def boltzmann_moments(table, T, cell_nm):
    """<|m|> and <m_z^2> of one cell from exp(-V f(m) / kB T) d^3m (A = 0: cells independent),
    by quadrature over |m| and cos(theta)."""
    p = table.at(T)
    ms0, me, chi, K = table.ms0_A_per_m, p["m_e"], p["chi_par_per_T"], p["K_J_per_m3"]
    vol = (cell_nm * 1e-9) ** 2 * table.thickness_nm * 1e-9
    beta = vol / (KB_J_PER_K * T)

    def f(r, c):  # energy density at |m| = r, cos(theta) = c
        return K / me**2 * r * r * (1 - c * c) + ms0 / (8 * chi * me**2) * (r * r - me * me) ** 2

    # shift by the minimum so the exponent stays small
    w = lambda c, r: r * r * math.exp(-beta * f(r, c))  # noqa: E731
    z = integrate.dblquad(w, 0, 2.5, -1, 1, epsabs=0, epsrel=1e-9)[0]
    m1 = integrate.dblquad(lambda c, r: r * w(c, r), 0, 2.5, -1, 1, epsrel=1e-9)[0] / z
    mz2 = integrate.dblquad(lambda c, r: (r * c) ** 2 * w(c, r), 0, 2.5, -1, 1,
                            epsrel=1e-9)[0] / z
    return m1, mz2


@pytest.mark.parametrize("isotropic", [True, False])
def test_independent_cells_sample_boltzmann(isotropic):
    # Source: the stationary solution of the Fokker-Planck equation of the Langevin equation
    # dm/dt = gamma alpha H + zeta with <zeta zeta> = 2 gamma alpha kB T / (Ms V) is
    # exp(-V f / kB T) (exact; with a_par = a_perp the LLB relaxation is gamma alpha H and the
    # precession conserves f). With a_par != a_perp the Evans et al. (Phys. Rev. B 85,
    # 014433 (2012)) noise is Boltzmann up to a small entropic term; the tolerance covers it.
    tab = flat_table()
    T = 120.0
    cf = CoarseFilm(tab, 1.0, 48, 48, renormalise=False, coupling=1.0, seed=3)
    if isotropic:
        base = cf.parameters

        def iso(t):
            p = base(t)
            p["alpha_par"] = p["alpha_perp"] = 1.0
            return p
        cf.parameters = iso
    cf.advance(2000, T)
    m1, mz2 = [], []
    for _ in range(60):
        cf.advance(50, T)
        r = np.linalg.norm(cf.m, axis=-1)
        m1.append(r.mean())
        mz2.append(np.mean(cf.m[..., 2] ** 2))
    ref1, refz = boltzmann_moments(tab, T, 1.0)
    # 2304 cells x 60 samples: standard errors 0.06 % (<|m|>) and 0.25 % (<m_z^2>) measured
    # here (both noise forms land within 0.1 % of the quadrature); tolerance: three standard
    # errors plus 0.2 % / 0.5 % for the correlation between successive samples
    err1 = np.std(m1) / math.sqrt(len(m1))
    assert abs(np.mean(m1) / ref1 - 1) < 0.002 + 3 * err1 / ref1
    assert abs(np.mean(mz2) / refz - 1) < 0.005 + 3 * np.std(mz2) / math.sqrt(60) / refz


def test_zero_temperature_keeps_length_and_relaxes_to_the_axis():
    # T = 0 limit of the LLB: the LLG with |m| = m_e(0) = 1 (Garanin 1997); an easy axis z
    # and no field: a tilted uniform state relaxes to +z (energy minimum, exact)
    tab = ParameterTable(np.array([0.0, 100.0]), [1.0, 0.9], [0.0, 0.01], [0.05, 0.05],
                         [2e5, 1.5e5], [1e-11, 0.9e-11], ms0_A_per_m=6e5, tc_K=300.0,
                         thickness_nm=0.5)
    m = np.zeros((8, 8, 3))
    m[..., 0] = 0.6
    m[..., 2] = 0.8
    cf = CoarseFilm(tab, 2.0, 8, 8, coupling=0.5, m=m)
    p = cf.parameters(0.0)
    dt = cf.stable_time_step(p)
    cf.advance(int(2e-10 / dt), 0.0)
    assert np.allclose(np.linalg.norm(cf.m, axis=-1), 1.0, atol=1e-12)
    assert cf.m[..., 2].min() > 0.999


def test_outside_the_table_is_refused():
    cf = CoarseFilm(flat_table(), 2.0, 8, 8)
    with pytest.raises(ValueError, match="outside the parameter table"):
        cf.parameters(195.0)


def test_large_cell_correction_is_refused():
    # a cell whose own fluctuations would change m by more than MAX_CORRECTION is refused
    tab = flat_table(K=2e4, A=1e-13, chi=0.05)
    cf = CoarseFilm(tab, 1.0, 64, 64)
    with pytest.raises(ValueError, match="not large against the correlation length"):
        cf.parameters(150.0)


def test_above_tc_cells_sample_the_mean_field_free_energy():
    # Above Tc the longitudinal field is Garanin's mean-field form -(1/chi)(1 + (3/5) Tc m^2 /
    # (T - Tc)) m, i.e. f = (Ms0 / chi) (m^2 / 2 + 3 Tc m^4 / (20 (T - Tc))), and the
    # anisotropy coefficient is held at the last row below Tc. Independent cells (A = 0) with
    # a_par = a_perp above Tc sample exp(-V f / kB T) exactly (Fokker-Planck, as above):
    # <m^2> against quadrature; tolerance three standard errors plus 0.5 %.
    tc, ms0, t_nm, cell = 200.0, 6e5, 0.5, 1.0
    T = np.array([150.0, 199.0, 260.0])
    tab = ParameterTable(T, [0.6, 0.3, 0.0], [0.02, 0.05, 0.01], [0.05, 0.05, 0.05],
                         [1e5, 2e4, 0.0], [0.0, 0.0, 0.0], ms0_A_per_m=ms0, tc_K=tc,
                         thickness_nm=t_nm)
    temp = 240.0
    cf = CoarseFilm(tab, cell, 48, 48, renormalise=False, coupling=1.0, seed=9)
    p = cf.parameters(temp)
    assert p["above_tc"] and p["alpha_par"] == p["alpha_perp"]
    m = np.zeros((48, 48, 3))
    m[..., 2] = 0.1
    cf.m[...] = m
    cf.advance(3000, temp)
    m2 = []
    for _ in range(60):
        cf.advance(50, temp)
        m2.append(np.mean(np.sum(cf.m**2, axis=-1)))
    chi = p["chi_par_per_T"]
    kp = p["kperp_T"]
    vol = (cell * 1e-9) ** 2 * t_nm * 1e-9
    beta = vol / (KB_J_PER_K * temp)

    def f(r, c):
        return ms0 / chi * (r * r / 2 + 3 * tc * r**4 / (20 * (temp - tc))) \
            + ms0 * kp / 2 * r * r * (1 - c * c)

    w = lambda c, r: r * r * math.exp(-beta * f(r, c))  # noqa: E731
    z = integrate.dblquad(w, 0, 1.5, -1, 1, epsrel=1e-9)[0]
    ref = integrate.dblquad(lambda c, r: r * r * w(c, r), 0, 1.5, -1, 1, epsrel=1e-9)[0] / z
    err = np.std(m2) / math.sqrt(len(m2))
    assert abs(np.mean(m2) / ref - 1) < 0.005 + 3 * err / ref
