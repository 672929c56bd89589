"""The plan beyond the lattice: scaling collapse, extrapolated lengths and the resolved window.

Called by :func:`thinfilm.plan.heating_plan.make_plan`. Writes ``extrapolation.csv`` (units in
the column names; every row flagged measured, extrapolated or refused) and returns the part of
plan.json that says what was measured on a lattice and what was extrapolated.

Near Tc the absolute edges of the resolved window carry the error of Tc, but its width does not:
with xi = A |t|^-1 the window where xi exceeds a resolution R is |T - Tc| < Tc A / R, whose error
comes from the amplitude A alone. The plan therefore also gives this half-width, which sets the
temperature step an experiment needs, even where Tc itself is less certain than the window is
wide (then Tc has to be located in the experiment, and the plan says so).
"""

import math
from pathlib import Path

import numpy as np
import yaml

from thinfilm._io import atomic_write_text, write_csv
from thinfilm._numbers import fmt_value, round_pm
from thinfilm.analysis.universality import check_universality
from thinfilm.input.errors import InputError
from thinfilm.model.parameters import build_model
from thinfilm.plan.curves import clean_json
from thinfilm.plan.extrapolated import (
    EXTRAPOLATION_COLUMNS,
    collapse_from_table,
    extrapolated_lengths,
)
from thinfilm.runs.folder import read_csv_table
from thinfilm.runs.sweep_point import sized_scenario

__all__ = ["beyond_lattice", "infinite_film_points", "LARGE_DIR", "LARGE_YAML"]

#: Folder (inside the plan's folder) of the large-lattice points the plan asks for, and the
#: scenario it writes for them.
LARGE_DIR, LARGE_YAML = "large_lattice", "large_lattice.yaml"
#: Large-lattice points asked for per side of Tc, and the samples per point (cluster moves
#: decorrelate the film in a few sweeps near Tc; ours).
N_LARGE_PER_SIDE, LARGE_SAMPLES, LARGE_WARMUP = 2, 1000, 200


def _halfwidths(fit, tc_K, resolution_nm):
    """{side: (half-width K, error K)} of |T - Tc| where A |t|^-1 exceeds the resolution."""
    out = {}
    for side, key in (("above", "amplitude_nm"), ("below", "amplitude_below_nm")):
        a = fit.get(key)
        if side not in fit.get("sides", ()) or a is None or not math.isfinite(a):
            continue
        err = fit.get(key.replace("_nm", "_err_nm"))
        w = tc_K * a / resolution_nm
        out[side] = [w, None if err is None else tc_K * err / resolution_nm]
    return out


def _lengths(tab):
    """The observables table as the fits read it: correlation_length_nm is the second-moment
    length, the one estimator whose box dependence the size-convergence rule and the
    finite-size scaling form are written for (xi_L/L tends to a constant at Tc); the S(k) and
    C(r) fits enter only the convergence test (the largest estimate at a row)."""
    return tab


def beyond_lattice(scenario, out, *, tc_K, tc_err_K, resolution_nm, field_of_view_nm=None,
                   collapse=None):
    """Collapse, extrapolated xi and domain size, and the resolved window; writes the CSV.

    ``collapse`` is the U4 collapse already fitted for the Tc record (tc.json ``collapse``):
    it is reused, not fitted again, so the plan shows one collapse (a text: the reason the
    record has none).

    Returns a JSON-ready dict: ``collapse`` (or ``collapse_refused``), ``fits``,
    ``resolved_window`` (absolute edges with errors, or the reason they are refused),
    ``resolved_halfwidth_K`` ({side: [K, error K]}), ``universality``, ``csv`` and ``note``.
    """
    tab = _lengths(read_csv_table(out / "observables.csv"))
    tab, large_note = _with_large(tab, out)
    tab = _forms_by_tc(tab, tc_K)
    sides = {}

    def film_side(size):
        if size not in sides:
            sides[size] = float(min(build_model(sized_scenario(scenario, size)).lattice.box_nm))
        return sides[size]

    k = scenario.material.anisotropy_J
    res = {"resolution_nm": resolution_nm}
    if isinstance(collapse, str):
        res["collapse_refused"] = collapse
    elif collapse is not None:
        res["collapse"] = dict(collapse, universality=check_universality(collapse, k))
    else:
        try:
            res["collapse"] = collapse_from_table(tab, film_side, tc_guess_K=tc_K, anisotropy=k)
        except InputError as exc:
            res["collapse_refused"] = str(exc)
    try:
        ext = extrapolated_lengths(tab, film_side, tc_K=tc_K, tc_err_K=tc_err_K or 0.0,
                                   anisotropy=k, resolution_nm=resolution_nm)
    except InputError as exc:
        res.update(extrapolation_refused=str(exc), csv=None)
        return clean_json(res)
    res.update(fits=ext["fits"], resolved_window=ext["resolved_window"],
               universality=ext["universality"], note=ext["note"], csv=None,
               converged=ext.get("converged"))
    if large_note:
        res["large_lattice_used"] = large_note
    cols = ext["columns"]
    if cols is not None:
        names = [c for c in EXTRAPOLATION_COLUMNS if c in cols]
        rows = list(zip(*[cols[c] for c in names], strict=True))
        write_csv(out / "extrapolation.csv", names, rows)
        res["csv"] = "extrapolation.csv"
        res["columns"] = {c: EXTRAPOLATION_COLUMNS[c] for c in names}
        res["curve"] = {"temperature_K": cols["temperature_K"],
                        "correlation_length_nm": cols["correlation_length_nm"],
                        "correlation_length_err_nm": cols["correlation_length_err_nm"],
                        "flag": cols["correlation_length_flag"],
                        "converged_length_nm": cols["converged_length_nm"],
                        "converged_length_err_nm": cols["converged_length_err_nm"]}
        req = _large_request(scenario, out, cols, tc_K, film_side)
        if req:
            res["large_lattice_request"] = req
        fit = ext["fits"].get("correlation_length", {})
        res["resolved_halfwidth_K"] = _halfwidths(fit, tc_K, resolution_nm)
        if field_of_view_nm is not None:
            res["view_halfwidth_K"] = _halfwidths(fit, tc_K, field_of_view_nm)
        widths = [w for w, _ in res["resolved_halfwidth_K"].values() if np.isfinite(w)]
        if widths and tc_err_K and max(widths) < tc_err_K:
            res["tc_note"] = (f"the resolved window (half-width {fmt_value(max(widths), None, 2)}"
                              f" K) is narrower than the error of Tc "
                              f"({round_pm(tc_K, tc_err_K)[1]} K): locate Tc in the "
                              f"experiment and step by less than the half-width around it")
    return clean_json(res)


def _forms_by_tc(tab, tc_K):
    """correlation_length_nm re-chosen with the plan's Tc where the table has both forms of the
    second moment: the full form above Tc, the connected one below (as the sweep does with its
    own Tc; a large-lattice run of a few temperatures has no Tc of its own worth the name)."""
    if "correlation_length_full_nm" not in tab or tc_K is None:
        return tab
    out = dict(tab)
    below = tab["temperature_K"] < tc_K
    for c in ("correlation_length_nm", "correlation_length_nm_err"):
        full = c.replace("correlation_length", "correlation_length_full")
        conn = c.replace("correlation_length", "correlation_length_connected")
        out[c] = np.where(below, tab[conn], tab[full])
    return out


def _with_large(tab, out):
    """The sweep table with the rows of ``out/large_lattice/observables.csv`` appended, when
    that run exists (the large-lattice points the plan asked for); and a note saying so."""
    path = Path(out) / LARGE_DIR / "observables.csv"
    if not path.is_file():
        return tab, None
    big = read_csv_table(path)
    keys = [k for k in tab if k in big and tab[k].dtype.kind == "f" and big[k].dtype.kind == "f"]
    merged = {k: np.concatenate([tab[k], big[k]]) for k in keys}
    sizes = sorted({int(v) for v in big["size"]})
    temps = sorted({round(float(v), 4) for v in big["temperature_K"]})
    return merged, {"folder": f"{LARGE_DIR}/", "sizes": sizes, "temperatures_K": temps}


def _large_request(scenario, out, cols, tc_K, film_side):
    """Large-lattice points for sweep temperatures near Tc where no size converged.

    Up to :data:`N_LARGE_PER_SIDE` sweep temperatures per side of Tc, the closest to Tc whose
    length is known only through finite-size scaling; one size L, the smallest power of two
    whose film side is at least 10 x (xi + 2 errors) at all of them (at most 1024). Writes the
    scenario ``large_lattice.yaml`` beside the plan when the scenario came from a file, and
    returns the request with the commands (None when nothing needs a larger lattice).
    """
    T = np.asarray(cols["temperature_K"], dtype=float)
    flag = np.asarray(cols["correlation_length_flag"])
    xi = np.asarray(cols["correlation_length_nm"], dtype=float)
    err = np.asarray(cols["correlation_length_err_nm"], dtype=float)
    sweep_T = set(np.round(read_csv_table(out / "observables.csv")["temperature_K"], 6))
    cand = [i for i in range(T.size) if flag[i] == "finite-size scaling"
            and round(float(T[i]), 6) in sweep_T and np.isfinite(xi[i])]
    pick = []
    for above in (True, False):
        side = sorted((i for i in cand if (T[i] > tc_K) == above), key=lambda i: abs(T[i] - tc_K))
        pick += side[:N_LARGE_PER_SIDE]
    if not pick:
        return None
    need = max(10.0 * (xi[i] + 2.0 * (err[i] if np.isfinite(err[i]) else 0.0)) for i in pick)
    size = 64
    while film_side(size) < need and size < 1024:
        size *= 2
    temps = sorted(float(T[i]) for i in pick)
    req = {"temperatures_K": temps, "size": size, "film_side_nm": film_side(size),
           "needed_side_nm": need,
           "why": ("no lattice size of the sweep converged at these temperatures near Tc; their "
                   "lengths come from finite-size scaling alone"),
           "enough": bool(film_side(size) >= need)}
    src = Path(str(scenario.source))
    if not src.is_file():
        req["commands"] = None
        req["how"] = (f"run the scenario with sizes: [{size}], temperature: the list above, "
                      f"sweep order independent and cluster moves into {out / LARGE_DIR}, then "
                      f"build the plan again with reuse")
        return req
    data = yaml.safe_load(src.read_text(encoding="utf-8"))
    data["sizes"] = [size]
    data["temperature"] = [f"{t:.6g} K" for t in temps]
    sweep = dict(data.get("sweep") or {})
    # the S(k) and C(r) fits, precise where L >> xi, average over the snapshots
    sweep.update(order="independent", snapshots=max(int(sweep.get("snapshots", 0)), 100))
    data["sweep"] = sweep
    dyn = dict(data.get("dynamics") or {})
    dyn.update(method="monte-carlo", moves=["metropolis", "cluster"],
               sweeps={"warmup": LARGE_WARMUP, "samples": LARGE_SAMPLES})
    data["dynamics"] = dyn
    data.pop("movie", None)
    data["name"] = f"{data.get('name', 'film')}-large-lattice"
    head = ("# Written by thinfilm plan: large-lattice points near Tc for the plan of "
            f"{src.name}\n# (Monte Carlo with cluster moves, L = {size}).\n")
    yml = Path(out) / LARGE_YAML
    atomic_write_text(yml, head + yaml.safe_dump(data, sort_keys=False))
    req["scenario"] = LARGE_YAML
    req["commands"] = [f"thinfilm run {yml} -o {Path(out) / LARGE_DIR}",
                       f"thinfilm plan {src} -o {out} --reuse"]
    return req


def infinite_film_points(plan):
    """Plan points with the infinite-film correlation length where the sweep determines it.

    Each point keeps the largest lattice's value as ``correlation_length_lattice_nm``. Its
    ``correlation_length_nm`` is interpolated in ln xi against T, on its own side of Tc, from
    the extrapolation curve (flag: measured, finite-size scaling or extrapolated, the weakest
    of the two neighbours), or outside the curve from the converged lattice values of the
    neighbouring sweep temperatures (flag "measured"); where neither reaches, the lattice
    value stays, flagged "finite-size limited" (an underestimate). ``resolved`` follows.
    """
    ext = plan.get("extrapolation") or {}
    res = plan["instrument"]["resolution_nm"]
    tc = plan["tc_K"]
    for p in plan.get("points") or []:
        p["correlation_length_lattice_nm"] = p["correlation_length_nm"]
        p["correlation_length_flag"] = "finite-size limited"

    def table(t, x, flag):
        t = np.asarray(t, dtype=float)
        x = np.array([np.nan if v is None else v for v in x], dtype=float)
        return t, x, np.asarray(flag, dtype=object)

    sources = []
    cur = ext.get("curve")
    if cur:
        sources.append(table(cur["temperature_K"], cur["correlation_length_nm"], cur["flag"]))
    conv = ext.get("converged")
    if conv:
        ok = [bool(c) for c in conv["converged"]]
        sources.append(table(conv["temperature_K"], conv["value_nm"],
                             np.where(ok, "measured", "refused")))
    order = {"measured": 0, "finite-size scaling": 1, "extrapolated": 2}
    for p in plan.get("points") or []:
        temp = p["temperature_K"]
        for t, x, flag in sources:
            ok = np.isfinite(x) & (x > 0) & (flag != "refused") & ((t > tc) == (temp > tc))
            if ok.sum() < 2 or not t[ok].min() <= temp <= t[ok].max():
                continue
            ts, ls, fs = t[ok], np.log(x[ok]), flag[ok]
            o = np.argsort(ts)
            ts, ls, fs = ts[o], ls[o], fs[o]
            k = int(np.clip(np.searchsorted(ts, temp), 1, ts.size - 1))
            # neighbours in the sweep must be adjacent there: no gap across a refused value
            p["correlation_length_nm"] = float(np.exp(np.interp(temp, ts, ls)))
            p["correlation_length_flag"] = str(max(fs[k], fs[k - 1], key=order.get))
            p["resolved"] = bool(p["correlation_length_nm"] > res)
            break
    return plan
