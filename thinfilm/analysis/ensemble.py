"""Disorder averages over realisations: mean, sample-to-sample spread and the error of the mean."""

import math

import numpy as np

__all__ = ["disorder_average", "disorder_binder"]


def disorder_average(results, keys=None):
    """Average scalar observables over per-realisation result dicts.

    Parameters
    ----------
    results : list of dict
        One dict per realisation (e.g. :func:`thinfilm.analysis.thermo.thermodynamics`).
    keys : iterable of str, optional
        Observables to average; default every key whose value is a finite-or-nan real scalar in
        all dicts and that does not end in "_err".

    Returns
    -------
    dict
        {key: {"mean": [O], "spread": sample-to-sample std (ddof 1; 0 for one realisation),
        "error": spread / sqrt(n) (error of the disorder average), "thermal_error": rms of the
        per-realisation "<key>_err" / sqrt(n) when present, "n": n}}
    """
    results = list(results)
    if not results:
        raise ValueError("disorder_average needs at least one realisation")
    if keys is None:
        keys = [k for k, v in results[0].items() if not k.endswith("_err") and _scalar(v)
                and all(_scalar(r.get(k)) for r in results)]
    out = {}
    n = len(results)
    for k in keys:
        v = np.array([float(r[k]) for r in results])
        spread = float(v.std(ddof=1)) if n > 1 else 0.0
        entry = {"mean": float(v.mean()), "spread": spread, "error": spread / math.sqrt(n), "n": n}
        if all(k + "_err" in r for r in results):
            e = np.array([float(r[k + "_err"]) for r in results])
            entry["thermal_error"] = float(np.sqrt(np.mean(e**2)) / math.sqrt(n))
        out[k] = entry
    return out


def _scalar(v):
    return isinstance(v, (int, float, np.integer, np.floating)) and not isinstance(v, bool)


def disorder_binder(m2, m4):
    """Binder cumulant of the disorder averages, U = 1 - [<m^4>]/(3 [<m^2>]^2), with its
    jackknife error over realisations (leave one realisation out).

    m2, m4 : array_like (n_realisations,) thermal averages <m^2>, <m^4> of each realisation.
    """
    m2 = np.asarray(m2, dtype=np.float64)
    m4 = np.asarray(m4, dtype=np.float64)
    n = m2.size
    u = 1.0 - m4.mean() / (3.0 * m2.mean() ** 2)
    if n < 2:
        return float(u), float("nan")
    s2, s4 = m2.sum(), m4.sum()
    uj = 1.0 - ((s4 - m4) / (n - 1)) / (3.0 * ((s2 - m2) / (n - 1)) ** 2)
    err = math.sqrt((n - 1) / n * np.sum((uj - uj.mean()) ** 2))
    return float(u), float(err)
