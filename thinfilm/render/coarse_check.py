"""`thinfilm check` for a coarse-film scenario: the resolved film and, at each temperature of
the schedule, the parameters the engine will use (or why it refuses)."""

import math

from thinfilm.analysis.stripe_theory import equilibrium_width
from thinfilm.engines.llb import CoarseFilm
from thinfilm.input.coarse_spec import load_coarse
from thinfilm.input.units import MU0

__all__ = ["print_coarse_check"]


def print_coarse_check(path, max_rows=12):
    sc = load_coarse(path)
    tab = sc.table()
    print(f"coarse-film scenario {sc.name!r} ({sc.source}) is valid.")
    print(f"  cells       {sc.nx} x {sc.ny} prisms {sc.cell_nm:g} x {sc.cell_nm:g} x "
          f"{tab.thickness_nm:g} nm, {'periodic' if sc.periodic else 'open'} edges, film "
          f"{sc.nx * sc.cell_nm:.4g} x {sc.ny * sc.cell_nm:.4g} nm")
    print(f"  parameters  {sc.table_path}: {tab.source}; Ms(0) = {tab.ms0_A_per_m:.4g} A/m, "
          f"Tc = {tab.tc_K:.4g} K")
    for a in tab.assumptions:
        print(f"    assumption: {a}")
    print(f"  dipolar     {'prism cells (demagnetising tensor, FFT)' if sc.dipolar else 'off'}; "
          f"LLB coupling {sc.coupling:g}; cell renormalisation "
          f"{'on' if sc.renormalise else 'OFF (fluctuations below the film scale counted twice)'}")
    film = CoarseFilm(tab, sc.cell_nm, sc.nx, sc.ny, periodic=sc.periodic, coupling=sc.coupling,
                      renormalise=sc.renormalise)
    print("  T (K)    Ms (A/m)   K (J/m^3)  A (J/m)    K_eff (J/m^3)  sqrt(A/K_eff)  "
          "cell correction  time step  stripe period (theory)")
    temps = sc.temperatures_K
    step = max(1, len(temps) // max_rows)
    for T in list(temps[::step]) + ([temps[-1]] if (len(temps) - 1) % step else []):
        try:
            p = film.parameters(T)
        except ValueError as exc:
            print(f"  {T:7.4g}  refused: {exc}")
            continue
        ms = p["m_e"] * tab.ms0_A_per_m
        keff = p["K_J_per_m3"] - MU0 * ms**2 / 2
        wall = math.sqrt(p["A_J_per_m"] / keff) * 1e9 if keff > 0 else float("nan")
        note = "  (cell > wall parameter: walls unresolved)" if wall < sc.cell_nm else ""
        period = "-"
        if keff > 0 and sc.dipolar:
            try:
                w = equilibrium_width(A=p["A_J_per_m"], Ku=p["K_J_per_m3"], Ms=ms,
                                      t=tab.thickness_nm * 1e-9)
                period = f"{w['period_m'] * 1e9:.4g} nm"
            except ValueError:
                period = "none found"
        elif keff <= 0:
            period = "in-plane (K_eff < 0)"
        print(f"  {T:7.4g}  {ms:9.4g}  {p['K_J_per_m3']:9.4g}  {p['A_J_per_m']:9.4g}  "
              f"{keff:12.4g}  {wall:10.4g} nm  {100 * p['renormalisation']:12.2f} %  "
              f"{film.stable_time_step(p) * 1e15:.3g} fs  {period}{note}")
