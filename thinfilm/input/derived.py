"""Derived scales printed by `thinfilm check`: mean-field Tc, dipolar shape anisotropy, wall
width, exchange length, DMI scales."""

import math

import numpy as np
from scipy import optimize, special

from thinfilm.input.continuum import exchange_factor, site_area
from thinfilm.input.dipolar_spec import POINT_DIPOLE_SUM
from thinfilm.input.units import KB_J_PER_K, MU0

__all__ = ["mean_field_tc_K", "wall_parameter_nm", "exchange_length_nm", "dipolar_shape_cost_J",
           "dmi_scales"]


def _cos2_mean(sigma):
    """<cos^2 theta> of a free unit spin with weight exp(sigma cos^2 theta) (sigma = K/kBT).

    Closed forms: sigma > 0: 1/(2 u D(u)) - 1/(2 sigma), u = sqrt(sigma), D the Dawson
    function; sigma < 0: 1/(2s) - exp(-s)/(sqrt(pi s) erf(sqrt s)), s = -sigma.
    """
    if abs(sigma) < 1e-3:
        return 1.0 / 3.0 + 4.0 * sigma / 45.0
    if sigma > 0:
        u = math.sqrt(sigma)
        return 1.0 / (2.0 * u * special.dawsn(u)) - 1.0 / (2.0 * sigma)
    s = -sigma
    return 1.0 / (2.0 * s) - math.exp(-s) / (math.sqrt(math.pi * s) * special.erf(math.sqrt(s)))


def mean_field_tc_K(model):
    """Single-site mean-field Tc (K).

    Linearising the self-consistency of the order-axis moment gives kB Tc = z J <cos^2>_0,
    with <cos^2>_0 the single-ion average at Tc for an easy axis (zJ/3 at K = 0, zJ as
    K/J -> infinity); for an easy plane the in-plane order gives kB Tc = z J <sin^2>_0 / 2.
    Mean field ignores fluctuations; in 2D it overestimates Tc (and for K = 0 there is no
    transition at all: Mermin and Wagner 1966).
    """
    z = model.lattice.coordination
    jj, kk = model.exchange_J, model.anisotropy_J
    if jj <= 0:
        return 0.0

    if kk >= 0:
        def f(t):
            return t - z * jj * _cos2_mean(kk / t)
    else:
        def f(t):
            return t - z * jj * (1 - _cos2_mean(kk / t)) / 2.0

    # solve in energy units t = kB Tc (J)
    lo, hi = 1e-6 * z * jj, 2.0 * z * jj
    root = optimize.brentq(f, lo, hi, xtol=1e-12 * z * jj)
    return root / KB_J_PER_K


def dipolar_shape_cost_J(model):
    """Dipolar energy per site (J) of the uniform perpendicular state above the in-plane one.

    For an infinite film (the periodic lattice); 0 without the dipolar interaction. Point
    dipoles: (3/4) sum' (a/r)^3 g with g = mu0 mu_s^2 / (4 pi a^3), since the energy per site is
    (g/2) sum' (a/r)^3 (1 - 3 cos^2) and the in-plane lattice sums of these lattices are
    isotropic (<cos^2> = 1/2). Prism sites of volume V: the slab's mu0 Ms^2 V / 2 =
    mu0 mu_s^2 / (2 V) (demagnetising factors 1 and 0 of a uniformly magnetised film).
    """
    if not model.dipolar:
        return 0.0
    lat = model.lattice
    a_m = lat.spacing_nm * 1e-9
    mu = model.moment_J_per_T
    if model.dipolar_thickness_nm is None:
        return 0.75 * POINT_DIPOLE_SUM[lat.shape] * MU0 * mu**2 / (4 * math.pi * a_m**3)
    volume = site_area(lat.shape, lat.spacing_nm) * model.dipolar_thickness_nm * 1e-27
    return MU0 * mu**2 / (2 * volume)


def wall_parameter_nm(model):
    """Bloch-wall parameter Delta = sqrt(A/K_eff) in nm from the lattice parameters.

    With A t = J / c (c = 2, 2/sqrt3, 2 sqrt3 for square, triangular, honeycomb) and
    K_eff t = (K - dipolar shape cost) / Omega (:func:`dipolar_shape_cost_J`; K without the
    dipolar interaction), Delta = sqrt(J Omega / (c K_eff)). The wall width is pi Delta
    (Lilley 1950). Returns None for K_eff <= 0 (no perpendicular domains).
    """
    k_eff = model.anisotropy_J - dipolar_shape_cost_J(model)
    if k_eff <= 0 or model.exchange_J <= 0:
        return None
    lat = model.lattice
    a = lat.spacing_nm
    omega = site_area(lat.shape, a)
    return float(np.sqrt(model.exchange_J * omega / (exchange_factor(lat.shape) * k_eff)))


def exchange_length_nm(stiffness_J_per_m, magnetisation_A_per_m):
    """Exchange length l_ex = sqrt(2A / (mu0 Ms^2)) in nm."""
    return math.sqrt(2 * stiffness_J_per_m / (MU0 * magnetisation_A_per_m**2)) * 1e9


def dmi_scales(model):
    """Scales of the interfacial DMI (None without DMI): a dict with

    * ``dmi_J_per_m2_times_t`` D t (J/m) = 2 d / (c a) (c the exchange factor; the mapping of
      :func:`thinfilm.input.continuum.dmi_factor`);
    * ``spiral_period_nm`` 4 pi A / abs(D) = 2 pi J a / abs(d) (the T = 0 spin spiral of an
      isotropic film, continuum limit; common practice, from memory);
    * ``critical_ratio`` abs(D) / D_c with D_c = 4 sqrt(A K_eff) / pi, above which the uniform
      state is unstable to spirals/stripes (Heide, Bihlmayer and Bluegel, Phys. Rev. B 78,
      140403 (2008)), None for K_eff <= 0;
    * ``wall_energy_J_per_m2_times_t`` sigma t = (4 sqrt(A K_eff) - pi abs(D)) t, the energy of a
      Neel wall of the sense the DMI favours (Thiaville et al., EPL 100, 57002 (2012)); None for
      K_eff <= 0.

    K_eff = K - dipolar shape cost (:func:`dipolar_shape_cost_J`), per area Omega.
    """
    d = getattr(model, "dmi_J", 0.0)
    if not d:
        return None
    lat = model.lattice
    a = lat.spacing_nm
    c = exchange_factor(lat.shape)
    a_m = a * 1e-9
    at = model.exchange_J / c  # A t (J)
    dt = 2.0 * d / (c * a_m)  # D t (J/m)
    out = {"dmi_J_per_m2_times_t": dt, "spiral_period_nm": 2 * math.pi * model.exchange_J * a
           / abs(d), "critical_ratio": None, "wall_energy_J_per_m2_times_t": None}
    k_eff = model.anisotropy_J - dipolar_shape_cost_J(model)
    if k_eff > 0:
        kt = k_eff / site_area(lat.shape, a_m)  # K_eff t (J/m^2)
        root = math.sqrt(at * kt)  # sqrt(A K_eff) t (J/m)
        out["critical_ratio"] = abs(dt) * math.pi / (4 * root)
        out["wall_energy_J_per_m2_times_t"] = 4 * root - math.pi * abs(dt)
    return out
