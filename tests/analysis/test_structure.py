"""Ornstein-Zernike fit of the structure factor on synthetic fields of known xi."""

import numpy as np

from thinfilm.analysis.structure import structure_factor_length
from thinfilm.model.lattice import Lattice


def oz_fields(n, xi, count, rng):
    """Gaussian random fields with S(k) = 1/(khat^2 + xi^-2), khat the square-lattice form."""
    k = 2 * np.pi * np.fft.fftfreq(n)
    kx, ky = np.meshgrid(k, k)
    khat2 = 4 * (np.sin(kx / 2) ** 2 + np.sin(ky / 2) ** 2)
    amp = 1.0 / np.sqrt(khat2 + xi**-2)
    for _ in range(count):
        w = np.fft.fft2(rng.normal(size=(n, n)))
        yield np.real(np.fft.ifft2(w * amp))


def test_recovers_prescribed_correlation_length(rng):
    # The filtered field has exactly the Ornstein-Zernike spectrum 1/(k^2 + xi^-2)
    # (Ornstein and Zernike 1914) on the lattice-form k^2, so the fit must return xi.
    lat = Lattice("square", 64, 64, 1.0, True)
    fields = list(oz_fields(64, 6.0, 400, rng))
    res = structure_factor_length(fields, lat.positions_nm, lat.box_nm, lat.period, spacing_nm=1.0)
    # 400 fields: jackknife error about 4 % (the k = 0 extrapolation amplifies the scatter of
    # the exponentially distributed |F(k)|^2); allow 4 errors
    assert abs(res["xi_nm"] - 6.0) < 4 * res["xi_err_nm"], res
    assert res["xi_err_nm"] < 0.06 * 6.0


def test_spacing_scales_the_length(rng):
    # Lengths scale with the spacing (dimensional analysis, common practice).
    fields = list(oz_fields(32, 3.0, 60, rng))
    a = Lattice("square", 32, 32, 1.0, True)
    b = Lattice("square", 32, 32, 2.5, True)
    ra = structure_factor_length(fields, a.positions_nm, a.box_nm, a.period, spacing_nm=1.0)
    rb = structure_factor_length(fields, b.positions_nm, b.box_nm, b.period, spacing_nm=2.5)
    assert np.isclose(rb["xi_nm"], 2.5 * ra["xi_nm"], rtol=1e-9)


def test_recovers_a_length_much_smaller_than_the_lattice():
    # L = 512 = 128 xi, as in a large sweep point well above Tc: the first shells of S(k) sit on
    # its small-k plateau (k_min xi = 0.05), so the fit must start from the k where S has
    # halved (OZ: k xi = 1), not from k_min. Exact OZ spectrum as above (Ornstein and Zernike
    # 1914). 4 fields of 512^2 hold thousands of modes at k ~ 1/xi (error a few %), but the
    # first shells alone are too few and too flat for a line: starting there gave NaN for
    # three of these four seeds.
    n, xi = 512, 4.0
    lat = Lattice("square", n, n, 1.0, True)
    for seed in range(4):
        fields = list(oz_fields(n, xi, 4, np.random.default_rng(seed)))
        res = structure_factor_length(fields, lat.positions_nm, lat.box_nm, lat.period,
                                      spacing_nm=1.0)
        assert np.isfinite(res["xi_nm"]) and res["n_modes"] > 500, (seed, res)
        assert abs(res["xi_nm"] - xi) < 4 * res["xi_err_nm"], (seed, res)
        assert res["xi_err_nm"] < 0.06 * xi, (seed, res)
