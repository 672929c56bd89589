"""T = 0 relaxation: energy per site, straight stripe states, a steepest-descent minimiser.

``relax`` finds the local energy minimum reached from a given state by steepest descent on the
unit spheres, S <- normalise(S + tau (B - (S.B) S)) with B the effective field (exchange,
anisotropy, Zeeman and, optionally, dipolar), and Barzilai-Borwein step sizes tau (alternating
the two BB formulas; Barzilai and Borwein, IMA J. Numer. Anal. 8, 141 (1988); the same
scheme as the micromagnetic minimiser of Exl et al., J. Appl. Phys. 115, 17D118 (2014), from
memory). It converges in some hundreds of field evaluations where damped LLG needs some 1e4
steps, and it follows the descent from the initial state, so a stripe state keeps its walls.
"""

import numpy as np

from thinfilm.engines._kernels.field import effective_field
from thinfilm.engines.stochastic_llg import _dipolar_field, measure
from thinfilm.input.units import MEV_J

__all__ = ["energy_per_site", "stripe_spins", "relax"]


def energy_per_site(model, spins, dipolar=None):
    """Energy per site (J): exchange + anisotropy + Zeeman, plus the dipolar energy if on.

    ``dipolar`` as for :class:`~thinfilm.engines.stochastic_llg.LLGSimulation` (None: the
    model's switch; True, False or a DipolarField); True builds a double-precision field.
    """
    dip = _dipolar_field(model, dipolar, "double")
    e = measure(model, np.ascontiguousarray(spins, dtype=np.float64))[1] * MEV_J
    if dip is not None:
        e += dip.energy(spins) / model.lattice.n_sites
    return float(e)


def stripe_spins(lattice, width, *, wall_width=1.0, axis=(0.0, 0.0, 1.0)):
    """Straight stripes along y of ``width`` columns each (period 2 width), up first.

    Column j sits at x = j + 1/2 (in columns); the walls are at x = 0, width, 2 width, ... (between
    columns). Profile of a Bloch wall: S.n = +-tanh(u / wall_width), u the distance to the
    nearest wall, and the in-plane part sech(u / wall_width) along y, the same sense in every
    wall; ``wall_width = 0`` gives sharp walls (S = +-n). ``axis`` n must be along z for the
    Bloch part to lie along y (other axes: the in-plane part is n x x-hat, normalised).
    On periodic edges nx must be a multiple of 2 width.
    """
    width = int(width)
    if width < 1:
        raise ValueError(f"stripe width must be a positive number of columns; got {width}")
    if lattice.periodic and lattice.nx % (2 * width):
        raise ValueError(f"periodic stripes of width {width} need nx a multiple of {2 * width}; "
                         f"got nx = {lattice.nx}")
    n = np.asarray(axis, dtype=np.float64)
    n = n / np.linalg.norm(n)
    t = np.cross(n, [1.0, 0.0, 0.0])
    if np.linalg.norm(t) < 1e-12:
        t = np.array([0.0, 1.0, 0.0])
    t /= np.linalg.norm(t)
    x = np.arange(lattice.nx) + 0.5
    k = np.rint(x / width)
    u = np.abs(x - k * width)                       # distance to the nearest wall
    sign = np.where((np.floor(x / width) % 2) == 0, 1.0, -1.0)
    if wall_width > 0:
        along, across = sign * np.tanh(u / wall_width), 1.0 / np.cosh(u / wall_width)
    else:
        along, across = sign, np.zeros_like(u)
    s = np.empty((lattice.ny, lattice.nx, 3))
    s[...] = along[:, None] * n + across[:, None] * t
    s /= np.linalg.norm(s, axis=-1, keepdims=True)
    return s


def relax(model, spins, *, dipolar=None, tol=1e-9, max_iter=20000):
    """Relax ``spins`` at T = 0 to the nearest energy minimum (steepest descent, BB steps).

    Stops when the largest torque |S x B| is below ``tol`` times the largest |B| of the
    initial state. Returns dict ``spins`` (new array), ``energy_J`` (per site, as
    :func:`energy_per_site`), ``iterations``, ``torque`` (final relative torque) and
    ``converged``.
    """
    dip = _dipolar_field(model, dipolar, "double")
    code, periodic, jt, kt, axis = model.kernel_args()
    bz = model.field_T

    def field(s):
        b = np.empty_like(s)
        effective_field(s, code, periodic, jt, kt, axis, bz, b)
        if dip is not None:
            b += dip.field(s)
        return b

    s = np.array(spins, dtype=np.float64)
    s /= np.linalg.norm(s, axis=-1, keepdims=True)
    b = field(s)
    scale = float(np.abs(b).max()) or 1.0
    g = b - np.sum(s * b, axis=-1, keepdims=True) * s    # tangent field: -grad E / mu_s
    tau0 = 0.05 / scale
    tau = tau0
    torque = float(np.abs(g).max()) / scale
    it = 0
    while torque > tol and it < max_iter:
        sn = s + tau * g
        sn /= np.linalg.norm(sn, axis=-1, keepdims=True)
        bn = field(sn)
        gn = bn - np.sum(sn * bn, axis=-1, keepdims=True) * sn
        ds, dg = (sn - s).ravel(), (gn - g).ravel()
        s, g = sn, gn
        it += 1
        torque = float(np.abs(g).max()) / scale
        den = -float(ds @ dg)   # > 0 where the energy is locally convex along the step
        if den > 0:
            tau = float(ds @ ds) / den if it % 2 else den / float(dg @ dg)
        else:
            tau = tau0
    if not np.isfinite(s).all():
        raise FloatingPointError("relax: the spins became NaN")
    return {"spins": s, "energy_J": energy_per_site(model, s, dip), "iterations": it,
            "torque": torque, "converged": torque <= tol}
