"""Point-dipole lattice sums sum' (a/r)^3 by direct summation with a rigorous tail bound.

The constants POINT_DIPOLE_SUM of thinfilm/input/dipolar_spec.py were taken from the package's
own Ewald sums; here they are recomputed without Ewald: sum over every site with r <= R, plus
the continuum tail 2 pi rho / R (rho = sites per a^2), plus a bound on what the continuum tail
misses. Bound (derived here, elementary): with N(r) the number of sites in 0 < |x| <= r and c the
covering radius of the lattice (largest distance from a point of the plane to its nearest site),
pi rho (r - c)^2 - 1 <= N(r) <= pi rho (r + c)^2, because the Voronoi cells of the sites within r
cover the disc of radius r - c and lie inside the disc of radius r + c. Writing the tail as the
Stieltjes integral int_R^inf r^-3 dN(r) = -N(R)/R^3 + 3 int_R^inf N(r) r^-4 dr and inserting the
two bounds gives |tail - 2 pi rho / R| <= 5 pi rho c / R^2 + 1 / R^3.

Square: also the closed form 4 zeta(3/2) beta(3/2) (Glasser and Zucker, in Theoretical
Chemistry: Advances and Perspectives 5, 1980; from memory), beta the Dirichlet beta function.
"""

import math

import numpy as np
import pytest
from scipy import special

from thinfilm.input.dipolar_spec import POINT_DIPOLE_SUM, point_window

SQ3 = math.sqrt(3.0)
# lattice vectors (nearest-neighbour distance 1), basis, sites per unit area, covering radius
GEOMETRY = {
    "square": ((1.0, 0.0), (0.0, 1.0), ((0.0, 0.0),), 1.0, math.sqrt(0.5)),
    "triangular": ((1.0, 0.0), (0.5, SQ3 / 2), ((0.0, 0.0),), 2 / SQ3, 1 / SQ3),
    # honeycomb: triangular Bravais lattice of spacing sqrt3 with two sites; the empty hexagon
    # centre is 1 from its six sites
    "honeycomb": ((SQ3, 0.0), (SQ3 / 2, 1.5), ((0.0, 0.0), (0.0, 1.0)), 4 / (3 * SQ3), 1.0),
}


def direct_sum(shape, radius):
    """(sum over sites 0 < r <= radius of r^-3 plus the continuum tail, tail bound)."""
    a1, a2, basis, rho, cover = GEOMETRY[shape]
    a1, a2 = np.array(a1), np.array(a2)
    n = int(math.ceil(radius / min(abs(a1[0]), abs(a2[1])) * 1.2)) + 2
    total = 0.0
    j = np.arange(-n, n + 1, dtype=np.float64)
    for b in basis:
        for i in range(-n, n + 1):  # one row of the Bravais lattice at a time
            x = i * a1[0] + j * a2[0] + b[0]
            y = i * a1[1] + j * a2[1] + b[1]
            r2 = x * x + y * y
            keep = (r2 > 1e-12) & (r2 <= radius * radius)
            total += float(np.sum(r2[keep] ** -1.5))
    tail = 2 * math.pi * rho / radius
    bound = 5 * math.pi * rho * cover / radius**2 + 1 / radius**3
    return total + tail, bound


def dirichlet_beta_3_2():
    """beta(3/2) = sum_k (-1)^k (2k+1)^-3/2 via the Hurwitz zeta function (exact series)."""
    return (special.zeta(1.5, 0.25) - special.zeta(1.5, 0.75)) / 4**1.5


@pytest.mark.parametrize("shape", ["square", "triangular", "honeycomb"])
def test_point_dipole_sums_match_direct_summation(shape):
    # R = 600 spacings (about 1e6 sites): the bound 5 pi rho c / R^2 is 2.9e-5 .. 3.4e-5; the
    # constants must lie inside [direct - bound, direct + bound] (plus 1e-10 for the float
    # sums). A 1e-4 relative error in a constant (6.6e-4 .. 1.1e-3) fails by 19 bounds or more.
    value, bound = direct_sum(shape, 600.0)
    assert bound < 3.5e-5
    assert abs(POINT_DIPOLE_SUM[shape] - value) <= bound + 1e-10, (value, bound)
    # the bound is honest: a shorter sum sits inside its own (wider) bound too
    value_short, bound_short = direct_sum(shape, 150.0)
    assert abs(value_short - value) <= bound + bound_short


def test_square_sum_matches_its_closed_form():
    # 4 zeta(3/2) beta(3/2) (Glasser and Zucker 1980, from memory): an outside exact value, so a
    # wrong direct sum would fail here as well as the constant
    exact = 4 * special.zeta(1.5) * dirichlet_beta_3_2()
    assert exact == pytest.approx(POINT_DIPOLE_SUM["square"], abs=1e-9)
    value, bound = direct_sum("square", 300.0)
    assert abs(value - exact) <= bound


@pytest.mark.parametrize("shape, window", [("triangular", (0.79, 0.96)),
                                           ("honeycomb", (0.88, 1.08))])
def test_readme_point_dipole_windows_follow_from_the_direct_sums(shape, window):
    # README: point dipoles only where the uniform shape energy is within 10 % of the slab's,
    # thickness/spacing 0.79-0.96 (triangular), 0.88-1.08 (honeycomb). Recomputed from the
    # direct sum: (3 S / 8 pi) (Omega / a^2) (t / a) = 1 +- 0.1, Omega the area per site; the
    # README rounds to two decimals
    value, _ = direct_sum(shape, 300.0)
    area = {"triangular": SQ3 / 2, "honeycomb": 3 * SQ3 / 4}[shape]
    unit = 3 * value / (8 * math.pi) * area
    lo, hi = 0.9 / unit, 1.1 / unit
    assert (round(lo, 2), round(hi, 2)) == window
    plo, phi = point_window(shape)
    assert abs(plo - lo) < 1e-5 * lo and abs(phi - hi) < 1e-5 * hi
