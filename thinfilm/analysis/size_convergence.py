"""Is a correlation length measured on a finite film the length of the infinite film?

A length measured on an L x L torus is cut down by the box once it is a sizeable fraction of L
(at Tc the second-moment length is about 0.9 L on the square Ising lattice, Salas and Sokal,
J. Stat. Phys. 98, 551, 2000, from memory), and every estimator is biased towards the box:
a check of the form "L >= 6 xi" applied to the biased xi cannot notice. Rule (ours), per
temperature, walking down from the largest size:

* a row is **converged** when its film side is at least ``ratio`` (10) times the largest of the
  estimates at that row (the box cuts every estimator down, so the largest is the least
  biased), or when it agrees with the next larger size, itself converged, within ``n_sigma``
  (2) combined standard errors, and that comparison could have seen a finite-size shift of
  ``resolve`` (15 %, the shift of the second-moment length between L = 2 xi and L = 4 xi is
  of this size, common practice) -- i.e. ``n_sigma * sigma_combined <= resolve * value``;
* otherwise it is **finite-size limited**: a measurement of that film, not of the infinite
  one;
* **undefined** where the value is NaN.

The infinite-film value at a temperature is that of the converged size with the smallest
error (flag "measured"); where no size converged, :mod:`thinfilm.analysis.extrapolation` fits the
finite-size scaling form to all sizes (flag "finite-size scaling").
"""

import numpy as np

from thinfilm.input.errors import InputError

__all__ = ["size_convergence", "CONVERGED", "LIMITED", "UNDEFINED"]

CONVERGED, LIMITED, UNDEFINED = "converged", "finite-size limited", "undefined"


def size_convergence(sizes, temperatures_K, value_nm, err_nm, film_side_nm, *, others=(),
                     ratio=10.0, n_sigma=2.0, resolve=0.15):
    """Per-row convergence flags and per-temperature infinite-film values.

    Parameters
    ----------
    sizes, temperatures_K, value_nm, err_nm : array_like (n,)
        Rows of a sweep table: L, T (K), the length (nm) and its standard error (nm).
    film_side_nm : array_like (n,) or float
        Shorter side of the film of each row (nm).
    others : sequence of array_like (n,)
        Other estimators of the same length at the same rows (nm), for the ``ratio`` test.
    ratio, n_sigma, resolve : float
        The rule of the module docstring.

    Returns
    -------
    dict
        ``status`` (n,) of "converged" / "finite-size limited" / "undefined", ``reason`` (n,)
        and ``by_temperature``: dict of arrays over the distinct temperatures:
        ``temperature_K``, ``value_nm``, ``err_nm`` (of the converged size with the smallest
        error, else NaN), ``size`` (that size, else the largest size with a value),
        ``converged`` (bool).
    """
    L = np.asarray(sizes, dtype=np.float64).ravel()
    T = np.asarray(temperatures_K, dtype=np.float64).ravel()
    x = np.asarray(value_nm, dtype=np.float64).ravel()
    e = np.asarray(err_nm, dtype=np.float64).ravel()
    side = np.broadcast_to(np.asarray(film_side_nm, dtype=np.float64), x.shape).ravel()
    if not (L.size == T.size == x.size == e.size == side.size):
        raise InputError(f"size_convergence: sizes, temperatures, values, errors and film sides "
                         f"must have equal lengths ({L.size}, {T.size}, {x.size}, {e.size}, "
                         f"{side.size})")
    best = x.copy()
    for o in others:
        o = np.asarray(o, dtype=np.float64).ravel()
        if o.size != x.size:
            raise InputError(f"size_convergence: another estimator has {o.size} rows, not "
                             f"{x.size}")
        best = np.fmax(best, o)
    status = np.full(x.size, UNDEFINED, dtype=object)
    reason = np.full(x.size, "", dtype=object)
    key = np.round(T, 6)
    temps = np.unique(key)
    out = {k: np.full(temps.size, np.nan) for k in ("temperature_K", "value_nm", "err_nm", "size")}
    out["converged"] = np.zeros(temps.size, bool)
    for j, t in enumerate(temps):
        rows = np.nonzero(key == t)[0]
        rows = rows[np.argsort(-L[rows])]  # largest first
        out["temperature_K"][j] = T[rows[0]]
        above = None  # the next larger row with a value
        for i in rows:
            if not np.isfinite(x[i]):
                reason[i] = "the estimator is undefined here"
                continue
            if side[i] >= ratio * best[i]:
                status[i] = CONVERGED
                reason[i] = f"film side {side[i]:.4g} nm >= {ratio:g} x {best[i]:.3g} nm"
            elif above is not None and status[above] == CONVERGED:
                sc = np.hypot(e[i], e[above]) if np.isfinite(e[i]) and np.isfinite(e[above]) \
                    else np.nan
                agree = abs(x[i] - x[above]) <= n_sigma * sc
                sharp = n_sigma * sc <= resolve * x[above]
                if agree and sharp:
                    status[i] = CONVERGED
                    reason[i] = f"agrees with L = {L[above]:g} within {n_sigma:g} errors"
                else:
                    status[i] = LIMITED
                    what = "differs from" if sharp else "too noisy to compare with"
                    reason[i] = f"{what} L = {L[above]:g}; film side < {ratio:g} x xi"
            else:
                status[i] = LIMITED
                reason[i] = f"film side {side[i]:.4g} nm < {ratio:g} x {best[i]:.3g} nm"
                if above is None and len(rows) > 1:
                    nxt = next((k for k in rows[1:] if np.isfinite(x[k])), None)
                    if nxt is not None:
                        sc = np.hypot(e[i], e[nxt])
                        if abs(x[i] - x[nxt]) <= n_sigma * sc and n_sigma * sc <= resolve * x[i]:
                            status[i] = status[nxt] = CONVERGED
                            reason[i] = f"agrees with L = {L[nxt]:g} within {n_sigma:g} errors"
            above = i
        good = [i for i in rows if status[i] == CONVERGED]
        if good:  # the most precise converged size (a positive value before a zero one)
            i = min(good, key=lambda k: (not x[k] > 0, e[k] if np.isfinite(e[k]) else np.inf,
                                         -L[k]))
            out["converged"][j] = True
            out["value_nm"][j], out["err_nm"][j], out["size"][j] = x[i], e[i], L[i]
        else:
            valid = [i for i in rows if np.isfinite(x[i])]
            if valid:
                out["size"][j] = L[valid[0]]
    return {"status": status.astype(str), "reason": reason.astype(str), "by_temperature": out}
