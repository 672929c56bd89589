"""Universality class implied by the anisotropy, the check of a fitted nu, and the BKT fit.

Assumptions (for every function here): unit classical 3-component spins on a 2D lattice,
short-range (nearest-neighbour) isotropic exchange J > 0, single-ion anisotropy
``-K sum (S.n)^2`` as the only anisotropy, no dipolar interaction and zero field. Then

* K > 0 (easy axis): Z2 symmetry, 2D Ising class, ``nu = 1`` exactly (Onsager 1944).
* K < 0 (easy plane, isotropic inside the plane): O(2) symmetry, Berezinskii-Kosterlitz-
  Thouless transition (Kosterlitz 1974): no power law; above T_BKT
  ``xi = a exp(b / sqrt(T/T_BKT - 1))``. An in-plane anisotropy of the lattice or a field
  would change this.
* K = 0: isotropic O(3); Mermin-Wagner (1966): no transition at T > 0, xi finite at every
  T > 0 (growing roughly like exp(2 pi J/kB T), from memory). Neither a power law nor a BKT
  form with T_BKT > 0 applies; a fitted "Tc" is a finite-size crossover.
"""

import numpy as np
from scipy import optimize

from thinfilm.input.errors import InputError

__all__ = ["universality_class", "check_universality", "bkt_length", "bkt_fit"]

ISING_NU = 1.0  # 2D Ising, exact (Onsager, Phys. Rev. 65, 117, 1944)


def universality_class(anisotropy):
    """Class implied by the sign of the single-ion anisotropy K (any energy unit).

    Returns
    -------
    dict
        ``name`` ("2d_ising", "bkt" or "o3_no_transition"), ``nu`` (1.0 or None),
        ``power_law`` (bool: does xi ~ abs(t)^-nu apply), ``source``, ``note``.
    """
    k = float(anisotropy)
    if not np.isfinite(k):
        raise InputError(f"universality_class: anisotropy {anisotropy!r} is not a number")
    if k > 0:
        return {"name": "2d_ising", "nu": ISING_NU, "power_law": True,
                "source": "Onsager, Phys. Rev. 65, 117 (1944): nu = 1 exactly",
                "note": "easy axis: Z2 symmetry, 2D Ising class"}
    if k < 0:
        return {"name": "bkt", "nu": None, "power_law": False,
                "source": ("Kosterlitz, J. Phys. C 7, 1046 (1974) (reference from memory): "
                           "xi = a exp(b/sqrt(T/T_BKT - 1))"),
                "note": "easy plane: O(2) symmetry, BKT transition; fit bkt_fit, not a power law"}
    return {"name": "o3_no_transition", "nu": None, "power_law": False,
            "source": "Mermin & Wagner, Phys. Rev. Lett. 17, 1133 (1966)",
            "note": "K = 0: isotropic exchange, no transition at T > 0; a Binder crossing or a "
                    "collapse shows only a finite-size crossover"}


def check_universality(collapse, anisotropy, *, n_sigma=3.0):
    """Compare a collapse's nu with the class implied by the anisotropy.

    Parameters
    ----------
    collapse : dict
        A result of :func:`thinfilm.analysis.scaling.collapse_fit` (needs nu, nu_err).
    anisotropy : float
        Single-ion anisotropy K (sign only; any unit). K > 0 easy axis.
    n_sigma : float
        Allowed deviation ``abs(nu - 1) <= n_sigma * nu_err`` for the Ising class.

    Returns
    -------
    dict
        The :func:`universality_class` entries plus ``nu_fit``, ``nu_err``, ``deviation_sigma``
        ((nu - nu_class)/nu_err, nan when the class has no nu), ``consistent`` (bool, or None
        when no power law is expected) and ``verdict`` (one sentence).
    """
    cls = universality_class(anisotropy)
    nu, err = float(collapse["nu"]), float(collapse["nu_err"])
    out = dict(cls, nu_fit=nu, nu_err=err)
    if cls["nu"] is None:
        out.update(deviation_sigma=float("nan"), consistent=None,
                   verdict=f"{cls['note']}; the fitted nu = {nu:.3g} +- {err:.2g} has no "
                           f"class value to be compared with")
        return out
    dev = (nu - cls["nu"]) / err if err > 0 else float("inf")
    ok = bool(abs(dev) <= n_sigma)
    out.update(deviation_sigma=float(dev), consistent=ok,
               verdict=(f"nu = {nu:.3f} +- {err:.3f} is {'consistent' if ok else 'NOT consistent'}"
                        f" with the 2D Ising value 1 ({dev:+.1f} sigma, bound {n_sigma:g} sigma)"))
    return out


def bkt_length(temperatures_K, t_bkt_K, b, a_nm):
    """BKT form xi = a exp(b / sqrt(T/T_BKT - 1)) in nm for T > T_BKT (nan at or below)."""
    T = np.asarray(temperatures_K, dtype=np.float64)
    u = T / t_bkt_K - 1.0
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(u > 0, a_nm * np.exp(b / np.sqrt(np.where(u > 0, u, 1.0))), np.nan)


def _profile(tb, T, ly, w):
    """Weighted linear fit of ln xi = ln a + b g at fixed T_BKT: (chi2, [ln a, b])."""
    g = 1.0 / np.sqrt(T / tb - 1.0)
    A = np.stack([np.ones_like(g), g], axis=1) * w[:, None]
    c, *_ = np.linalg.lstsq(A, ly * w, rcond=None)
    r = A @ c - ly * w
    return float(r @ r), c


def bkt_fit(temperatures_K, xi_nm, xi_err_nm, *, film_side_nm=None, min_ratio=6.0,
            n_grid=400):
    """Fit xi = a exp(b / sqrt(T/T_BKT - 1)) (Kosterlitz 1974) to xi above T_BKT.

    The fit is made to ln xi with weights xi/xi_err. T_BKT is first located on a grid of
    ``n_grid`` values below the lowest temperature (profile chi^2 with ln a, b solved linearly),
    then refined with all three parameters free; errors from the curvature (scaled by
    sqrt(chi2/dof) when that exceeds 1). T_BKT is strongly correlated with b: expect large
    errors unless the data reach close to T_BKT.

    Parameters
    ----------
    temperatures_K, xi_nm, xi_err_nm : array_like (n,)
        Temperatures (K) above T_BKT, correlation lengths and standard errors (nm).
    film_side_nm : array_like (n,) or float, optional
        Side of the simulated film at each point (nm); points with
        ``film_side_nm < min_ratio * xi`` are dropped (finite-size effects).
    min_ratio : float
        Required film side / xi.
    n_grid : int
        Grid points of the T_BKT search.

    Returns
    -------
    dict
        t_bkt_K, t_bkt_err_K, b, b_err, a_nm, a_err_nm, cov (3x3 over T_BKT, ln a, b),
        chi2, dof, chi2_dof, n_points, used (bool mask), temperature_range_K.

    Raises
    ------
    InputError
        Fewer than 5 usable points, no minimum of chi^2 below the lowest temperature, or
        b <= 0 (the length does not fall with temperature).
    """
    T = np.asarray(temperatures_K, dtype=np.float64).ravel()
    xi = np.asarray(xi_nm, dtype=np.float64).ravel()
    e = np.asarray(xi_err_nm, dtype=np.float64).ravel()
    if not (T.size == xi.size == e.size):
        raise InputError("bkt_fit: temperatures_K, xi_nm and xi_err_nm must have equal lengths")
    use = np.isfinite(T) & np.isfinite(xi) & np.isfinite(e) & (xi > 0) & (e > 0) & (T > 0)
    if film_side_nm is not None:
        side = np.broadcast_to(np.asarray(film_side_nm, dtype=np.float64), T.shape)
        use &= side >= min_ratio * xi
    if use.sum() < 5:
        raise InputError(f"bkt_fit: {int(use.sum())} usable points (finite, positive, film side "
                         f">= {min_ratio:g} xi); the three-parameter BKT fit needs at least 5")
    Tu, ly, w = T[use], np.log(xi[use]), xi[use] / e[use]
    grid = np.min(Tu) * (1.0 - np.geomspace(1e-3, 0.95, n_grid))
    chis = np.array([_profile(tb, Tu, ly, w)[0] for tb in grid])
    k = int(np.argmin(chis))
    _, c0 = _profile(grid[k], Tu, ly, w)
    if k in (0, n_grid - 1) or c0[1] <= 0:
        raise InputError(f"bkt_fit: no essential singularity below {np.min(Tu):.4g} K: the best "
                         f"T_BKT lies at the edge of the search range ({grid[k]:.4g} K) or the "
                         f"length does not fall with T (b = {c0[1]:.3g})")

    def resid(p):
        return (p[1] + p[2] / np.sqrt(Tu / p[0] - 1.0) - ly) * w

    lo = [grid[-1], -np.inf, -np.inf]
    hi = [np.min(Tu) * (1 - 1e-6), np.inf, np.inf]
    r = optimize.least_squares(resid, [grid[k], c0[0], c0[1]], bounds=(lo, hi), x_scale="jac")
    chi2, dof = float(r.fun @ r.fun), int(use.sum() - 3)
    cov = np.linalg.pinv(r.jac.T @ r.jac) * max(1.0, chi2 / max(dof, 1))
    err = np.sqrt(np.diag(cov))
    a = float(np.exp(r.x[1]))
    return {"t_bkt_K": float(r.x[0]), "t_bkt_err_K": float(err[0]), "b": float(r.x[2]),
            "b_err": float(err[2]), "a_nm": a, "a_err_nm": a * float(err[1]), "cov": cov,
            "chi2": chi2, "dof": dof, "chi2_dof": chi2 / max(dof, 1), "n_points": int(use.sum()),
            "used": use, "temperature_range_K": (float(Tu.min()), float(Tu.max()))}
