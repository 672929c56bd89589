"""Continuum film parameters (A, Ku, Ms, thickness) -> lattice parameters (mu_s, J, K).

Each site is a cell of area Omega (the area per site) and height t (the film thickness).
Matching the exchange energy of a slow spin spiral, J (1 - cos q.d) summed over the bonds of
a site, to the continuum A t Omega q^2 gives J = 2 A t Omega / sum_bonds (d . q_hat)^2:

    square      J = 2 A t,           Omega = a^2
    triangular  J = 2 A t / sqrt(3), Omega = sqrt(3) a^2 / 2
    honeycomb   J = 2 sqrt(3) A t,   Omega = 3 sqrt(3) a^2 / 4

with a the nearest-neighbour distance; mu_s = Ms Omega t and K = Ku Omega t. With
``shape_anisotropy`` the thin-film demagnetising energy is folded into the uniaxial term,
K = (Ku - mu0 Ms^2 / 2) Omega t, which needs the axis along the film normal.

With ``dipolar: true`` the same cell is the dipolar site: on the square lattice the prism
a x a x t (its demagnetising tensor gives the slab's mu0 Ms^2 / 2 for any t / a), on the
hexagonal-cell lattices a point dipole where that is accurate (:mod:`thinfilm.input.dipolar_spec`).
"""

import numpy as np

from thinfilm.input.units import MU0

__all__ = ["continuum_to_lattice", "site_area", "exchange_factor", "warn_continuum_cells"]

SQ3 = np.sqrt(3.0)


def site_area(shape, a):
    """Area per site (m^2) for nearest-neighbour distance a (m)."""
    return {"square": a * a, "triangular": SQ3 / 2 * a * a, "honeycomb": 3 * SQ3 / 4 * a * a}[shape]


def exchange_factor(shape):
    """J / (A t) for the lattice shape (dimensionless)."""
    return {"square": 2.0, "triangular": 2.0 / SQ3, "honeycomb": 2.0 * SQ3}[shape]


def dmi_factor(shape):
    """d / (D t a) for the lattice shape: the interfacial DMI per bond of a continuum density D
    (J/m^2) in a film of thickness t, d = 4 D t Omega / (z a) (Omega the area per site, z the
    neighbours), derived like the exchange mapping from a cycloid of small wave vector q: the
    bond sum (d a q / 2) sum_k (r_k.q_hat)^2 = d a q z / 4 per site against D t q Omega of the
    continuum energy D t [m_z div m - (m.grad) m_z]. Square 1 (d = D a t, Fert, Cros and
    Sampaio, Nat. Nanotechnol. 8, 152 (2013), from memory), triangular 1/sqrt3, honeycomb sqrt3:
    half the exchange factor, so d / J = D a / (2 A) on every lattice."""
    return exchange_factor(shape) / 2.0


def continuum_to_lattice(shape, a, stiffness, anisotropy_density, magnetisation, thickness, *,
                         shape_anisotropy=False, axis=(0, 0, 1)):
    """Map continuum film parameters onto one spin per lattice site.

    Parameters
    ----------
    shape : str
        Lattice shape.
    a : float
        Nearest-neighbour distance (m).
    stiffness : float
        Exchange stiffness A (J/m).
    anisotropy_density : float
        Uniaxial anisotropy energy density Ku (J/m^3); > 0 easy axis.
    magnetisation : float
        Saturation magnetisation Ms (A/m).
    thickness : float
        Film thickness t (m).
    shape_anisotropy : bool
        Subtract mu0 Ms^2 / 2 from Ku (axis must be the film normal z).

    Returns
    -------
    moment (J/T), exchange J (J), anisotropy K (J)
    """
    omega = site_area(shape, a)
    ku = anisotropy_density
    if shape_anisotropy:
        n = np.asarray(axis, dtype=float)
        n = n / np.linalg.norm(n)
        if abs(abs(n[2]) - 1.0) > 1e-9:
            raise ValueError("shape_anisotropy can be folded in only with the axis along the "
                             "film normal [0, 0, 1]")
        ku = ku - MU0 * magnetisation**2 / 2
    return (magnetisation * omega * thickness, exchange_factor(shape) * stiffness * thickness,
            ku * omega * thickness)


COARSE_SPACING_NM = 0.6  # a continuum film on sites at least this far apart is a cell model


def warn_continuum_cells(path, spacing_nm, continuum, t_max):
    """One-paragraph warning: continuum parameters on nm cells at a finite temperature."""
    if not continuum or spacing_nm < COARSE_SPACING_NM or t_max <= 0:
        return
    import warnings

    from thinfilm.input.errors import ThinFilmWarning

    warnings.warn(
        f"{path}: lattice.spacing {spacing_nm:g} nm with continuum parameters at "
        f"{t_max:g} K puts one classical spin on each {spacing_nm:g} nm cell with the "
        "parameters as given and the thermal field of the full temperature. Measured A, Ku and "
        "Ms already contain the thermal fluctuations of the real film, and the cell spins add "
        "their own on top, so the fluctuations are counted twice; and since J = 2 A t does not "
        "depend on the cell while K and mu_s grow with its area, Tc and m(T) change with the "
        "cell size (validation/coarse_vs_atomistic.py: 6.6-10 % too high at 0.3 Tc on 1-4 nm "
        "cells). Use this only at T = 0 or for atomic spacings; for a film at the scale of an "
        "image at finite temperature use a coarse_film scenario (stochastic LLB fed by the "
        "temperature-dependent parameters, README 'Atomistic lattice or coarse film').",
        ThinFilmWarning, stacklevel=3)
