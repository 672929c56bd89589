"""The bridge: a Monte Carlo sweep of an atomistic film writes the coarse film's parameter table.

Invented film (the one of validation/coarse_vs_atomistic.py): square lattice a = 0.25 nm,
t = 0.5 nm, mu_s = 2 muB, J = 20 meV, K = 2 meV per site. Sweep 10-230 K on 64 x 64 sites;
writes <out>/parameters.csv (and .json) and prints the checks: K(T)/K(0) against m^3 (Callen
and Callen, J. Phys. Chem. Solids 27, 1271 (1966)), the exponent x of A ~ m^x (mean field 2;
bulk atomistic 1.7-1.8, Atxitia et al., Phys. Rev. B 82, 134440 (2010)), T -> 0 limits.

Usage: python validation/coarse_parameter_table.py [--out scenarios/coarse]  (about a minute)
"""

import argparse
import time

import numpy as np

from thinfilm.input.units import MEV_J, MU_B_J_PER_T
from thinfilm.runs.macro_measure import AtomisticFilm
from thinfilm.runs.parameter_sweep import checks, measure_table

FILM = AtomisticFilm(0.25, 0.5, 2 * MU_B_J_PER_T, 20 * MEV_J, 2 * MEV_J)


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", default="outputs/coarse_parameter_table")
    ap.add_argument("--size", type=int, default=64)
    args = ap.parse_args()
    t0 = time.time()
    temps = np.arange(10.0, 231.0, 10.0)

    def show(k, n, r):
        print(f"  {r['temperature_K']:6.1f} K  m_e {r['m_e']:.4f}({1e4 * r['m_e_err']:.0f})  "
              f"chi_par {r['chi_par_per_T']:.3e} /T  K {r['K_J_per_m3']:.3e}"
              f"({r['K_J_per_m3_err']:.1e}) J/m^3  A {r['A_J_per_m']:.3e}"
              f"({r['A_J_per_m_err']:.1e}) J/m", flush=True)

    tab = measure_table(FILM, args.size, temps, seed=1, warmup=800, samples=1500,
                        out_dir=args.out, progress=show)
    c = checks(tab, m_min=0.8)
    print(f"Tc (largest chi_par on {args.size} x {args.size} sites): {tab.tc_K:g} K")
    print(f"K ~ m^p over m_e >= 0.8: p = {c['K_exponent']:.2f} +- {c['K_exponent_err']:.2f} "
          f"(Callen-Callen 3)")
    print(f"A ~ m^x over m_e >= 0.8: x = {c['A_exponent']:.2f} +- {c['A_exponent_err']:.2f} "
          f"(mean field 2)")
    print(f"lowest T: A/A(0) = {tab.A_J_per_m[0] / FILM.a0_J_per_m:.3f}, K/K(0) = "
          f"{tab.K_J_per_m3[0] / FILM.k0_J_per_m3:.3f}, m_e^3 = {tab.m_e[0] ** 3:.3f}")
    print(f"table written to {args.out}/parameters.csv  [{time.time() - t0:.0f} s]")


if __name__ == "__main__":
    main()
