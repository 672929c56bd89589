"""Thin-film stripe domain theory: equilibrium domain width of a perpendicular film.

A film of thickness t, magnetisation Ms uniform across the thickness, easy axis z (Ku),
exchange stiffness A, stripes of width D (period 2D) along y. Energy per film area relative to
nothing (the uniform state has e = (mu0 Ms^2 / 2) t):

    e(D) = (t / D) sigma_wall + (mu0 Ms^2 t / 2) sum_{n odd} (8 / (pi n)^2) F_n^2 g(k_n t)

with k_n = pi n / D, g(x) = (1 - exp(-x)) / x the magnetostatic factor of a surface-charge
wave of wave number k in a film of thickness t (the charges +-Ms cos(kx) on the two faces),
and F_n the wall form factor:

* sharp walls (Kaplan and Gehring, J. Magn. Magn. Mater. 128, 111 (1993), the model they
  solve asymptotically for D >> t): F = 1 and sigma_wall = 4 sqrt(A K_eff), K_eff = Ku -
  mu0 Ms^2 / 2 (the wall's own demagnetising energy counted locally inside sigma); their
  asymptotic result D = (pi t / 2)... is replaced here by the numerical minimum of the same
  series, which it approximates for D >> t;
* Bloch walls of the profile m_z = tanh(x / Delta) (variational; derived here): F_n =
  (pi k_n Delta / 2) / sinh(pi k_n Delta / 2) (the Fourier transform of the wall's
  derivative, sech^2), sigma_wall = 2 A / Delta + 2 Ku Delta (exchange and bare Ku: the
  demagnetising energy of the wall is all in the series), minimised over Delta as well.

For t << Delta the two differ at leading order: the sharp-wall series cuts the stray-field
logarithm at t, the Bloch-wall series at the wall width, so the sharp-wall width is smaller
by a factor of order Delta / t (the point of Bernand-Mantel, Slastikov and Muratov, arXiv
2410.20373). The coarse film is compared with the Bloch-wall form; the sharp-wall number is
printed beside it.
"""

import math

import numpy as np
from scipy import optimize

from thinfilm.input.units import MU0

__all__ = ["stripe_energy", "equilibrium_width", "N_TERMS"]

N_TERMS = 20001  # odd harmonics summed (convergence: the tail falls as 1 / n^3)


def _series(D, t, delta):
    n = np.arange(1, 2 * N_TERMS, 2, dtype=np.float64)
    k = math.pi * n / D
    x = k * t
    g = -np.expm1(-x) / x
    if delta > 0:
        q = 0.5 * math.pi * k * delta
        with np.errstate(over="ignore"):
            form = np.where(q < 700, q / np.sinh(np.minimum(q, 700)), 0.0)
    else:
        form = 1.0
    return float(np.sum(8.0 / (math.pi * n) ** 2 * form**2 * g))


def stripe_energy(D, *, A, Ku, Ms, t, delta=None):
    """Energy per area (J/m^2) of stripes of width D (m). delta None: sharp walls with
    sigma = 4 sqrt(A K_eff); else the Bloch-wall form with wall parameter delta (m)."""
    kd = MU0 * Ms**2 / 2
    if delta is None:
        keff = Ku - kd
        if keff <= 0:
            raise ValueError("K_eff = Ku - mu0 Ms^2 / 2 must be positive for perpendicular stripes")
        return t / D * 4 * math.sqrt(A * keff) + kd * t * _series(D, t, 0.0)
    return t / D * (2 * A / delta + 2 * Ku * delta) + kd * t * _series(D, t, delta)


def equilibrium_width(*, A, Ku, Ms, t, walls="bloch", bounds_m=(1e-9, 1e-3)):
    """Domain width D (m) at the minimum of :func:`stripe_energy` (and the wall parameter for
    Bloch walls). Returns dict(D_m, period_m, delta_m or None, energy_J_per_m2)."""
    keff = Ku - MU0 * Ms**2 / 2
    if keff <= 0:
        raise ValueError("K_eff = Ku - mu0 Ms^2 / 2 must be positive for perpendicular stripes")
    d0 = math.sqrt(A / keff)
    lo = math.log(max(bounds_m[0], d0) if walls == "bloch" else bounds_m[0])
    hi = math.log(bounds_m[1])

    def e_of(lnD):
        D = math.exp(lnD)
        if walls == "sharp":
            return stripe_energy(D, A=A, Ku=Ku, Ms=Ms, t=t)
        r = optimize.minimize_scalar(
            lambda ld: stripe_energy(D, A=A, Ku=Ku, Ms=Ms, t=t, delta=math.exp(ld)),
            bounds=(math.log(d0 / 10), math.log(min(d0 * 10, D / 3))), method="bounded",
            options={"xatol": 1e-7})
        return r.fun

    grid = np.linspace(lo, hi, 60)
    vals = [e_of(g) for g in grid]
    i = int(np.argmin(vals))
    if i in (0, len(grid) - 1):
        raise ValueError("no stripe minimum inside the bounds (the uniform state may be stable)")
    r = optimize.minimize_scalar(e_of, bracket=(grid[i - 1], grid[i], grid[i + 1]),
                                 options={"xtol": 1e-9})
    D = math.exp(r.x)
    delta = None
    if walls == "bloch":
        rr = optimize.minimize_scalar(
            lambda ld: stripe_energy(D, A=A, Ku=Ku, Ms=Ms, t=t, delta=math.exp(ld)),
            bounds=(math.log(d0 / 10), math.log(min(d0 * 10, D / 3))), method="bounded",
            options={"xatol": 1e-9})
        delta = math.exp(rr.x)
    return {"D_m": D, "period_m": 2 * D, "delta_m": delta, "energy_J_per_m2": r.fun}
