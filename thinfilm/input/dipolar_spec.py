"""The ``material.dipolar`` key: what a site is for the dipole-dipole interaction.

* ``dipolar: true`` with lattice parameters (``moment``): point dipoles at the sites, as before.
* ``dipolar: {thickness: "1.2 nm"}`` with lattice parameters: each site is the uniformly
  magnetised prism spacing x spacing x thickness carrying the moment (square lattice only).
* ``dipolar: true`` with continuum parameters: a site already is a cell of the film, area Omega
  times ``material.thickness`` (mu_s = Ms Omega t), so that thickness is used automatically:
  prism sites on the square lattice. The triangular and honeycomb cells are hexagons, for which
  thinfilm has no prism tensor: there the sites stay point dipoles, which is accepted only
  where their uniform shape energy is within POINT_TOLERANCE of the continuum mu0 Ms^2 / 2
  (a narrow band of thickness / spacing near 1); elsewhere it is an input error.

A thickness that cannot take effect (a second thickness in the continuum form, a hexagonal
lattice) is an input error naming the key.
"""

import math

from thinfilm.input.continuum import site_area

__all__ = ["parse_dipolar", "point_shape_ratio", "point_window", "POINT_DIPOLE_SUM",
           "POINT_TOLERANCE", "PRISM_ASPECT_RANGE"]

# sum' (a / r)^3 over each lattice (Ewald sums of thinfilm.model.dipolar_tensor, checked in
# tests/test_prism_scenario.py; recomputed by direct summation with a rigorous tail bound in
# tests/validation/test_lattice_sums_direct.py; square: 4 zeta(3/2) beta(3/2))
POINT_DIPOLE_SUM = {"square": 9.03362168310, "triangular": 11.0341757349,
                    "honeycomb": 6.57885192260}
POINT_TOLERANCE = 0.10  # accepted |point-dipole shape energy / continuum - 1|
PRISM_ASPECT_RANGE = (1e-3, 100.0)  # thickness / spacing (thinfilm.model.prism_tensor)


def point_shape_ratio(shape, t_over_a):
    """(E_perp - E_inplane) per volume of uniform point dipoles of moment Ms Omega t on the
    lattice, over the continuum mu0 Ms^2 / 2: (3 S / 8 pi) (Omega / a^2) (t / a), with S the
    lattice sum (E_perp - E_in = (3/4) mu0 mu_s^2 S / (4 pi a^3) per site)."""
    return 3 * POINT_DIPOLE_SUM[shape] / (8 * math.pi) * site_area(shape, 1.0) * t_over_a


def point_window(shape):
    """(lo, hi) of thickness / spacing where point_shape_ratio is within POINT_TOLERANCE of 1."""
    unit = point_shape_ratio(shape, 1.0)
    return (1 - POINT_TOLERANCE) / unit, (1 + POINT_TOLERANCE) / unit


def _check_aspect(reader, key, thickness_m, spacing_nm, what):
    lo, hi = PRISM_ASPECT_RANGE
    ratio = thickness_m * 1e9 / spacing_nm
    if not lo <= ratio <= hi:
        raise reader.error(
            f"{what} / lattice.spacing = {ratio:.3g} is outside [{lo:g}, {hi:g}], the range of "
            f"the prism-site dipolar tensor (thinner cells are sheets whose touching neighbours "
            f"diverge like log(spacing / thickness); thicker ones are needles, slow to sum); "
            f"change the lattice spacing or the thickness", key)


def parse_dipolar(m, lattice, continuum_thickness_m=None):
    """(dipolar on, site thickness in nm or None) from the material reader ``m``.

    ``lattice`` is the LatticeSpec; ``continuum_thickness_m`` the film thickness when the
    material is given by continuum parameters (None for lattice parameters).
    """
    raw = m.raw("dipolar", False)
    if isinstance(raw, dict):
        d = m.sub("dipolar")
        d.check_keys({"thickness"})
        thickness = d.quantity("thickness", "length", positive=True)
        on = True
    else:
        on, thickness, d = m.flag("dipolar", default=False), None, None
    if thickness is not None:
        if continuum_thickness_m is not None:
            raise d.error("cannot take effect: with continuum parameters a site is a cell of "
                          "the film, spacing x spacing x material.thickness, and that thickness "
                          "is used for the dipolar field automatically; remove "
                          "material.dipolar.thickness (write dipolar: true)", "thickness")
        if lattice.shape != "square":
            raise d.error(f"cannot take effect on a {lattice.shape} lattice: prism sites are "
                          f"implemented for the square lattice only (the {lattice.shape} "
                          f"cells are hexagons); remove it for point dipoles, or use "
                          f"lattice.shape: square", "thickness")
        _check_aspect(d, "thickness", thickness, lattice.spacing_nm, "material.dipolar.thickness")
        return True, float(f"{thickness * 1e9:.12g}")
    if not on or continuum_thickness_m is None:
        return on, None
    if lattice.shape == "square":
        _check_aspect(m, "thickness", continuum_thickness_m, lattice.spacing_nm,
                      "material.thickness")
        return True, float(f"{continuum_thickness_m * 1e9:.12g}")
    ratio_t = continuum_thickness_m * 1e9 / lattice.spacing_nm
    lo, hi = point_window(lattice.shape)
    if not lo <= ratio_t <= hi:
        shape_ratio = point_shape_ratio(lattice.shape, ratio_t)
        raise m.error(
            f"on a {lattice.shape} lattice the sites stay point dipoles (thinfilm has prism "
            f"sites for the square lattice only; these cells are hexagons), and for cells of "
            f"thickness / spacing = {ratio_t:.3g} point dipoles are inaccurate: their uniform "
            f"shape energy is {shape_ratio:.3g} x the continuum mu0 Ms^2 / 2 (within "
            f"{POINT_TOLERANCE:.0%} only for {lo:.3g} <= thickness / spacing <= {hi:.3g}). Use "
            f"lattice.shape: square (prism sites, exact for any thickness), a spacing in that "
            f"range, or lattice parameters (moment per site) for point dipoles on purpose",
            "dipolar")
    return True, None
