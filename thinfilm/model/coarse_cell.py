"""Cell-scale equilibrium magnetisation: no fluctuation counted twice.

The table's m_e(T) is the magnetisation of the whole film: it already contains the thermal
fluctuations at every wavelength. The coarse film adds its own fluctuations at wavelengths
longer than the cell size b (the table's A(T), K(T), chi_par set their amplitude), so a coarse
film that took m_e(T) as its cells' equilibrium length would count those twice and depend on
b (Grinstein and Koch, Phys. Rev. Lett. 90, 207201 (2003)). The cells' longitudinal
equilibrium length mu is therefore raised so that the coarse film's mean magnetisation, to
one loop (Gaussian fluctuations and the cubic term of the LLB longitudinal energy
(Ms0 / (8 chi_par mu^2)) (m^2 - mu^2)^2), equals m_e:

    <m_z> = mu - (3 <v^2> + <u^2>) / (2 mu) = m_e,
    <u^2> = (1/N) sum_{k != 0} kB T m_e^2 / (V (K + A q_k^2))     (both transverse components)
    <v^2> = (1/N) sum_k kB T / (2 V (Ms0 / (2 chi_par) + A q_k^2 / m_e^2))

with V = b^2 t the cell volume and q_k^2 = (4 - 2 cos k_x b - 2 cos k_y b) / b^2 over the
coarse grid's wave vectors. The transverse and exchange coefficients of the coarse film use
the table's m_e (so its transverse structure factor is the atomistic one, see
:mod:`thinfilm.runs.macro_measure`); only the longitudinal length is renormalised. The dipolar
field is left out of this correction. The correction is first order in the fluctuations: it
stops being small where the atomistic correlation length reaches the cell size (near Tc);
:func:`cell_magnetisation` returns the relative size of the correction so a caller can refuse.
"""

import math

import numpy as np

from thinfilm.input.units import KB_J_PER_K

__all__ = ["cell_magnetisation", "fluctuation_sums"]


def fluctuation_sums(par, ms0, cell_nm, thickness_nm, nx, ny):
    """(<u^2>, <v^2>) of the coarse film's Gaussian modes (see the module docstring)."""
    b = cell_nm * 1e-9
    vol = b * b * thickness_nm * 1e-9
    kt = KB_J_PER_K * par["temperature_K"]
    kx = 2 * np.pi * np.fft.fftfreq(nx)
    ky = 2 * np.pi * np.fft.fftfreq(ny)
    q2 = (4 - 2 * np.cos(kx)[None, :] - 2 * np.cos(ky)[:, None]) / b**2
    me2 = par["m_e"] ** 2
    u = kt * me2 / (vol * (par["K_J_per_m3"] + par["A_J_per_m"] * q2))
    u[0, 0] = 0.0
    v = kt / (2 * vol * (ms0 / (2 * par["chi_par_per_T"]) + par["A_J_per_m"] * q2 / me2))
    n = nx * ny
    return float(u.sum() / n), float(v.sum() / n)


def cell_magnetisation(par, ms0, cell_nm, thickness_nm, nx, ny):
    """(mu, correction) with mu the cells' longitudinal equilibrium length and correction =
    (mu - m_e) / m_e."""
    u2, v2 = fluctuation_sums(par, ms0, cell_nm, thickness_nm, nx, ny)
    me = par["m_e"]
    s = 3 * v2 + u2
    mu = 0.5 * (me + math.sqrt(me * me + 2 * s))
    return mu, (mu - me) / me
