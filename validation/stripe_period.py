"""Equilibrium stripe width of a perpendicular monolayer of point dipoles at T = 0, against theory.

The thin-film domain theory (Yafet and Gyorgy, Phys. Rev. B 38, 9145 (1988); Kaplan and
Gehring, J. Magn. Magn. Mater. 128, 111 (1993)): stripes of width L (period 2 L) have

    e(L) = e_uniform + sigma_w / L - (2 Omega_d / pi) [ln(L / a) + C] / L        (per row, per a)

with Omega_d = 2 pi g per row (g = mu0 mu_s^2 / (4 pi a^3)), so the width that minimises it is

    L = a exp(pi sigma_w / (2 Omega_d) + 1 - C) = a exp(sigma_w / (4 g) + 1 - C).

The derivation, the cut-off constants C and the accuracy are in the docstring of
tests/validation/test_stripe_period.py. Two wall regimes, each with its own C:

* sharp (Ising-like) lattice walls, K_eff well above J/2: sigma_w = 2 J, C = C_SHARP:
  L = (pi/2) exp(-gamma_E - eps) exp(J / 2g) = 0.8710 exp(J / 2g), asymptotically exact;
* extended Bloch walls, width delta = sqrt(J / 2 K_eff) >= 2 a: sigma_w = 4 sqrt(A K_eff)
  with A = J/2, C = ln(delta / a) + C_TANH; first correction -c_pol / x to ln L from the
  polarisation of each wall by its own stray field (x = sigma_w / 4 g).

The measurement: straight stripe states of every width L near the expected minimum on
periodic 2L x ny lattices (the Ewald sums make the film infinite), relaxed at T = 0 by
:func:`thinfilm.engines.relax.relax` with exchange, anisotropy and the dipolar field, energy per
site e(L); the minimum of the curve between the integer widths is interpolated through
f(L) = L (e(L) - e_uniform), which is smooth (nearly linear in ln L).

    python validation/stripe_period.py [--ny 4] [--quick]

prints the table: parameters, x = sigma_w / 4g, the measured width, the theory and
d ln L / dx between consecutive rows.
"""

import argparse
import math
import time
from functools import lru_cache

import numpy as np
from scipy import integrate, special
from scipy.sparse import diags
from scipy.sparse.linalg import spsolve

from thinfilm.engines.dipolar import DipolarField, dipolar_constant_T
from thinfilm.engines.relax import energy_per_site, relax, stripe_spins
from thinfilm.input.units import MU_B_J_PER_T
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model

A_NM = 0.5
MU = 40 * MU_B_J_PER_T
G = dipolar_constant_T(MU, A_NM) * MU  # g = mu0 mu_s^2 / (4 pi a^3) in J


def dirichlet_beta(s):
    """beta(s) = sum_n (-1)^n (2n+1)^-s = 4^-s [zeta(s, 1/4) - zeta(s, 3/4)]."""
    return 4.0**-s * (special.zeta(s, 0.25) - special.zeta(s, 0.75))


LATTICE_SUM = 4 * special.zeta(1.5) * dirichlet_beta(1.5)  # sum' (a/r)^3, square: 9.0336
SHAPE = 0.75 * LATTICE_SUM  # K_eff = K - SHAPE g: uniform up minus in-plane, per site (6.775 g)


def column_kernel(n, kmax=30):
    """sum_m (n^2 + m^2)^-3/2 over all rows m, column distance n >= 1 (units a^-3).

    Poisson summation over m: 2 / n^2 + (8 pi / n) sum_k k K1(2 pi k n); the Bessel terms are
    1 % of the first at n = 1 and below 1e-7 of it from n = 3 on.
    """
    n = np.asarray(n, dtype=float)
    k = np.arange(1, kmax + 1)
    bessel = np.sum(k * special.k1(2 * np.pi * k * n[..., None]), -1)
    return 2 / n**2 + 8 * np.pi / n * bessel


@lru_cache
def c_sharp():
    """Cut-off constant of sharp lattice walls: gamma_E + 1 + ln(2/pi) + eps, eps = 0.01245.

    sum_n w(n) K(n) / 2 = ln L + C_SHARP + O(L^-2) for the triangle wave w (period 2L) of the
    number of opposite-sign column pairs at distance n; gamma_E and 1 + ln(2/pi) (Wallis) come
    from K = 2/n^2, eps = (1/2) sum_n n (K(n) - 2/n^2) from the Bessel terms.
    """
    n = np.arange(1, 40)
    eps = 0.5 * float(np.sum(n * (column_kernel(n) - 2 / n**2.0)))
    return np.euler_gamma + 1 + math.log(2 / math.pi) + eps


@lru_cache
def c_tanh():
    """Cut-off constant of a continuum tanh wall: gamma_E + ln(2/pi) + I_F = -0.0191.

    I_F = int_0^inf (F(v)^2 - [v < 1]) dv / v with the wall's form factor
    F(v) = (pi v / 2) / sinh(pi v / 2) (Fourier transform of (1/2) d tanh(x/delta)/dx, v = q delta).
    """
    def f2(v):
        return (0.5 * math.pi * v / math.sinh(0.5 * math.pi * v)) ** 2 if v > 0 else 1.0

    i1 = integrate.quad(lambda v: (f2(v) - 1) / v, 0, 1)[0]
    i2 = integrate.quad(lambda v: f2(v) / v, 1, 60)[0]
    return np.euler_gamma + math.log(2 / math.pi) + i1 + i2


@lru_cache
def c_polarisation(half_width=400.0, n=2**17):
    """c_pol = c0 / 16 = 0.524: ln L* shifts by -c_pol / x as the wall tilts in its stray field.

    Second order in g / (K_eff delta) = 1 / x: the charge field of the wall,
    mu h = (g / delta) h(u), h = 2 pi |k| m_z(k) (u = x / delta, m_z = -tanh u), tilts the
    moments by phi solving H0 phi = -f / 2 with f = h sech u and the Poeschl-Teller operator
    H0 = K_eff (-d^2/du^2 + 1 - 2 sech^2 u); the wall energy drops by
    (g^2 / (4 K_eff delta)) c0, c0 = <f, H0^-1 f> (with K_eff = 1), i.e. x by c0 / (16 x).
    Solved on a grid of n points over |u| < half_width (finite differences, converged to 1e-5).
    """
    u = (np.arange(n) - n / 2 + 0.5) * (2 * half_width / n)
    h = u[1] - u[0]
    sech = np.exp(-np.abs(u)) * 2 / (1 + np.exp(-2 * np.abs(u)))
    k = 2 * np.pi * np.fft.fftfreq(n, h)
    # |k| m_z(k) = -i sign(k) (dm_z/du)(k): the Hilbert transform of the decaying derivative
    hh = np.real(np.fft.ifft(-2j * np.pi * np.sign(k) * np.fft.fft(-(sech**2))))
    f = hh * sech
    op = diags([-np.ones(n - 1) / h**2, 2 / h**2 + 1 - 2 * sech**2, -np.ones(n - 1) / h**2],
               [-1, 0, 1], format="csc")
    return float(np.sum(f * spsolve(op, f)) * h) / 16


def width_sharp(j_over_g):
    """Theory width (sites) of stripes with sharp walls: exp(J / 2g + 1 - C_SHARP)."""
    return math.exp(j_over_g / 2 + 1 - c_sharp())


def bloch_wall(j_over_g, keff_over_g):
    """(delta in a, sigma_w / g per row) of the continuum Bloch wall, A = J / 2."""
    return math.sqrt(j_over_g / (2 * keff_over_g)), 2 * math.sqrt(2 * j_over_g * keff_over_g)


def width_bloch(j_over_g, keff_over_g, corrected=True):
    """Theory width (sites) with extended Bloch walls: delta exp(x + 1 - C_TANH [- c_pol / x])."""
    delta, sigma = bloch_wall(j_over_g, keff_over_g)
    x = sigma / 4
    return delta * math.exp(x + 1 - c_tanh() - (c_polarisation() / x if corrected else 0.0))


# ------------------------------------------------------------------------------- measurement

def _model(j_over_g, k_over_g, nx, ny):
    lat = Lattice("square", nx, ny, A_NM, True)
    return Model(lat, MU, j_over_g * G, k_over_g * G, dipolar=True)


def uniform_energy(j_over_g, k_over_g, ny=4):
    """Energy per site (units g) of the uniform perpendicular state (the L -> infinity limit)."""
    m = _model(j_over_g, k_over_g, 2, ny)
    s = np.zeros((ny, 2, 3))
    s[..., 2] = 1.0
    return energy_per_site(m, s) / G


def stripe_energy(j_over_g, k_over_g, width, *, ny=4, wall_width=1.0, tol=1e-9):
    """(energy per site in g, relaxed spins) of straight stripes of ``width`` sites at T = 0."""
    m = _model(j_over_g, k_over_g, 2 * width, ny)
    dip = DipolarField(m.lattice, MU)
    res = relax(m, stripe_spins(m.lattice, width, wall_width=wall_width), dipolar=dip, tol=tol)
    if not res["converged"]:
        raise RuntimeError(f"relax did not converge at width {width}: torque {res['torque']:.2g}")
    return res["energy_J"] / G, res["spins"]


def equilibrium_width(j_over_g, k_over_g, guess, *, ny=4, span=0.35, points=9, wall_width=None):
    """Width L* (sites, interpolated) minimising the stripe energy per site, and the data.

    Energies at up to ``points`` integer widths spread evenly in ln L over guess e^(+-span); the
    window moves until its lowest energy is inside. Then f(L) = L (e(L) - e_uniform) is fitted
    with a quadratic in ln L and e_uniform + f(L) / L minimised on the continuum.
    Returns dict ``width``, ``widths``, ``energies`` (g per site), ``e_uniform``, ``spins`` (at
    the integer width of lowest energy).
    """
    if wall_width is None:
        keff = k_over_g - SHAPE
        wall_width = math.sqrt(j_over_g / (2 * keff)) if keff > 0 else 1.0
    e_u = uniform_energy(j_over_g, k_over_g, ny)
    cache = {}
    centre = math.log(guess)
    for _ in range(20):
        widths = sorted({max(1, int(round(math.exp(centre + t))))
                         for t in np.linspace(-span, span, points)})
        for w in widths:
            if w not in cache:
                cache[w] = stripe_energy(j_over_g, k_over_g, w, ny=ny, wall_width=wall_width)
        es = [cache[w][0] for w in widths]
        i = int(np.argmin(es))
        if 0 < i < len(widths) - 1:
            break
        centre = math.log(widths[i])
    else:
        raise RuntimeError("equilibrium_width: no interior minimum found")
    widths = np.array(widths, dtype=float)
    es = np.array(es)
    coef = np.polyfit(np.log(widths), widths * (es - e_u), 2)
    grid = np.exp(np.linspace(math.log(widths[0]), math.log(widths[-1]), 4001))
    e_fit = e_u + np.polyval(coef, np.log(grid)) / grid
    return {"width": float(grid[np.argmin(e_fit)]), "widths": widths, "energies": es,
            "e_uniform": e_u, "spins": cache[int(widths[i])][1]}


def log_slopes(x, widths):
    """d ln L / dx between consecutive points."""
    return np.diff(np.log(widths)) / np.diff(x)


SHARP_J = (4.0, 5.0, 6.0, 7.0, 8.0)            # K_eff = J: delta = 0.7 a, walls stay sharp
BLOCH_2 = (6.0, 8.0, 10.0, 12.0, 14.0)         # K_eff = J / 8: delta = 2 a, x = J / 4g
BLOCH_3 = (12.0, 15.0, 18.0, 21.0)             # K_eff = J / 18: delta = 3 a, x = J / 6g


def run_sharp(js=SHARP_J, ny=4):
    rows = []
    for j in js:
        th = width_sharp(j)
        # start from tanh walls of the continuum width sqrt(J / 2 K_eff) = 0.71: they relax to
        # sharp ones (a sharp start is a stationary point and would not show it)
        res = equilibrium_width(j, j + SHAPE, th, ny=ny, wall_width=math.sqrt(0.5))
        tilt = float(np.abs(res["spins"][..., :2]).max())
        rows.append((j, j, j / 2, res["width"], th, tilt))
    return rows


def run_bloch(delta, js, ny=4):
    rows = []
    for j in js:
        keff = j / (2 * delta**2)
        x = bloch_wall(j, keff)[1] / 4
        th = width_bloch(j, keff)
        res = equilibrium_width(j, keff + SHAPE, th, ny=ny)
        rows.append((j, keff, x, res["width"], th, width_bloch(j, keff, corrected=False)))
    return rows


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--ny", type=int, default=4, help="rows of the periodic lattices (default 4)")
    ap.add_argument("--quick", action="store_true", help="fewer points")
    a = ap.parse_args(argv)
    print(f"square lattice sum {LATTICE_SUM:.6f}, shape cost {SHAPE:.5f} g; C_SHARP "
          f"{c_sharp():.5f}, C_TANH {c_tanh():.5f}, c_pol {c_polarisation():.4f}")
    t0 = time.time()
    sharp = run_sharp(SHARP_J[:3] if a.quick else SHARP_J, a.ny)
    print("\nsharp walls (K_eff = J): theory L = exp(J/2g + 1 - C_SHARP) = 0.8710 exp(J/2g)")
    print(f"{'J/g':>6} {'K_eff/g':>8} {'x=J/2g':>7} {'L meas':>8} {'L theory':>9} {'ratio':>7} "
          f"{'dlnL/dx':>8} {'max tilt':>9}")
    sl = log_slopes(np.array([r[2] for r in sharp]), np.array([r[3] for r in sharp]))
    for i, r in enumerate(sharp):
        s = f"{sl[i - 1]:8.4f}" if i else " " * 8
        print(f"{r[0]:6.2f} {r[1]:8.3f} {r[2]:7.3f} {r[3]:8.3f} {r[4]:9.3f} {r[3] / r[4]:7.4f} "
              f"{s} {r[5]:9.1e}")
    for delta, js in ((2.0, BLOCH_2), (3.0, BLOCH_3)):
        js = js[:2] if a.quick else js
        rows = run_bloch(delta, js, a.ny)
        x = np.array([r[2] for r in rows])
        lw = np.array([r[3] for r in rows])
        sl = log_slopes(x, lw)
        print(f"\nBloch walls, delta = {delta:g} a (K_eff = J/{2 * delta**2:g}): theory "
              f"L = delta exp(x + 1 - C_TANH - c_pol/x); leading order without -c_pol/x; "
              f"predicted d ln L/dx = 1 + c_pol/(x1 x2)")
        print(f"{'J/g':>6} {'K_eff/g':>8} {'x':>7} {'L meas':>8} {'L theory':>9} {'ratio':>7} "
              f"{'leading':>8} {'ratio':>7} {'dlnL/dx':>8} {'predicted':>9}")
        for i, r in enumerate(rows):
            s = (f"{sl[i - 1]:8.4f} {1 + c_polarisation() / (x[i] * x[i - 1]):9.4f}" if i
                 else "")
            print(f"{r[0]:6.2f} {r[1]:8.3f} {r[2]:7.3f} {r[3]:8.3f} {r[4]:9.3f} "
                  f"{r[3] / r[4]:7.4f} {r[5]:8.3f} {r[3] / r[5]:7.4f} {s}")
    print(f"\n{time.time() - t0:.1f} s")


if __name__ == "__main__":
    main()
