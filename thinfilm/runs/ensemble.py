"""Several disorder realisations (seeds seed, seed + 1, ...) of one film, and their average."""

from thinfilm.analysis.ensemble import disorder_average
from thinfilm.model.disorder import realise_disorder

__all__ = ["run_ensemble"]


def run_ensemble(model, spec, run_one, *, n_realisations=None, seed=None, keys=None):
    """Run ``run_one(params, index, seed)`` on every realisation and average the results.

    Parameters
    ----------
    model : Model
    spec : DisorderSpec
    run_one : callable
        Called with (SiteParameters, realisation index, realisation seed); returns a dict of
        scalar observables (e.g. thermodynamics of a SiteMonteCarlo run).
    n_realisations : int, optional
        Default spec.realisations.
    seed : int, optional
        First seed; default spec.seed, else 0. Realisation k uses seed + k.
    keys : iterable of str, optional
        Observables to average (default: every scalar, see disorder_average).

    Returns
    -------
    dict
        realisations (list of the run_one dicts, each with "seed" added), average (the
        :func:`thinfilm.analysis.ensemble.disorder_average` dict).
    """
    n = spec.realisations if n_realisations is None else int(n_realisations)
    s0 = (spec.seed if spec.seed is not None else 0) if seed is None else int(seed)
    out = []
    for k in range(n):
        params = realise_disorder(model, spec, s0 + k)
        res = dict(run_one(params, k, s0 + k))
        res["seed"] = s0 + k
        out.append(res)
    avg_keys = keys if keys is not None else None
    avg = disorder_average(out, avg_keys)
    avg.pop("seed", None)
    return {"realisations": out, "average": avg}
