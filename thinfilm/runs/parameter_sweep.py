"""Monte Carlo sweep of the atomistic film -> the parameter table, written with the sweep.

Each temperature continues from the state of the previous one (heating order). The table's
Tc is the temperature of the largest longitudinal susceptibility among the sweep's points, a
finite-size estimate on the sweep's L x L film (stated in the table header); the coarse film
uses it only in its damping forms and to choose the longitudinal law.

Checks printed by :func:`checks` (and tested in tests/test_coarse_table.py):

* K(T) / K(0) against m_e^3 at low T (Callen and Callen, J. Phys. Chem. Solids 27, 1271
  (1966), uniaxial single-ion anisotropy): the fitted exponent of K against m_e;
* A(T) / A(0) against m_e^x: the exponent x measured (mean-field theory gives 2; bulk atomistic
  models give 1.7-1.8, Atxitia et al., Phys. Rev. B 82, 134440 (2010));
* Ms(T) = m_e Ms(0) against the sweep's own <|m|> (the same numbers: a bookkeeping check).
"""

import math
from pathlib import Path

import numpy as np

from thinfilm._io import write_json
from thinfilm.input.parameter_table import COLUMNS, ParameterTable
from thinfilm.runs.macro_measure import AtomisticFilm, measure_point

__all__ = ["measure_table", "checks", "AtomisticFilm"]


def measure_table(film, L, temperatures_K, *, seed=1, warmup=1000, samples=2000, every=2,
                  out_dir=None, progress=None):
    """Sweep the atomistic film over the temperatures; return the ParameterTable (and write
    parameters.csv and parameters.json into out_dir when given)."""
    temps = sorted(float(t) for t in temperatures_K)
    if not temps or temps[0] <= 0:
        raise ValueError("the sweep needs positive temperatures")
    rows, state = [], None
    for k, t in enumerate(temps):
        r, state = measure_point(film, L, t, seed=seed + k, warmup=warmup, samples=samples,
                                 every=every, state=state)
        rows.append(r)
        if progress is not None:
            progress(k + 1, len(temps), r)
    chi = np.array([r["chi_par_per_T"] for r in rows])
    tc = temps[int(np.argmax(chi))]
    for r in rows:  # no order above Tc: the longitudinal susceptibility is N mu <m_z^2> / kT
        if r["temperature_K"] > tc:
            r["chi_par_per_T"], r["chi_par_per_T_err"] = r["chi_zz_per_T"], r["chi_zz_per_T_err"]
    errors = {c: np.array([r[c + "_err"] for r in rows]) for c in COLUMNS[1:]}
    table = ParameterTable(*(np.array([r[c] for r in rows]) for c in COLUMNS), errors=errors,
                           ms0_A_per_m=film.ms0_A_per_m, tc_K=tc,
                           thickness_nm=film.thickness_nm,
                           source=f"Monte Carlo sweep of the atomistic film, {L} x {L} sites",
                           assumptions=(
                               "Tc is the sweep temperature of the largest chi_par "
                               f"(finite-size estimate on {L} x {L} sites)",
                               "chi_par above Tc is N mu <m_z^2> / kB T (below: the "
                               "variance of |m_z|)",
                               "K and A from a straight-line fit of 1/S_perp(k) against q^2 over "
                               "|k| <= 4 (2 pi / L); valid while the transverse modes are "
                               "Gaussian (below Tc)"))
    table.zero = {"K_J_per_m3": film.k0_J_per_m3, "A_J_per_m": film.a0_J_per_m}
    if out_dir is not None:
        out = Path(out_dir)
        table.to_csv(out / "parameters.csv")
        write_json(out / "parameters.json", {"film": film.describe(), "L": L, "seed": seed,
                                             "warmup_sweeps": warmup, "samples": samples,
                                             "sweeps_between_samples": every,
                                             "table": table.describe(), "checks": checks(table)})
    return table


def checks(table, m_min=0.8):
    """Exponents of K and A against m_e over rows with m_e >= m_min, with standard errors."""
    pk, ek = table.fitted_exponent("K_J_per_m3", m_min=m_min)
    pa, ea = table.fitted_exponent("A_J_per_m", m_min=m_min)
    return {"m_min": m_min, "K_exponent": pk, "K_exponent_err": ek,
            "callen_callen_exponent": 3.0, "A_exponent": pa, "A_exponent_err": ea,
            "K_exponent_sigmas_from_3": (pk - 3.0) / ek if ek and math.isfinite(ek) else None}
