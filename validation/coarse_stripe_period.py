"""T = 0 stripe period of the coarse film on 2, 4 and 8 nm cells against thin-film domain
theory (Kaplan and Gehring, J. Magn. Magn. Mater. 128, 111 (1993) surface-charge series; Bloch
walls of the tanh profile, variational: thinfilm.analysis.stripe_theory). Also prints the
sharp-wall form of the same series, which misses by an order of magnitude when the wall is
much wider than the film (t = 4 nm, wall parameter 15 nm).

Usage: python validation/coarse_stripe_period.py [--film A_pJ_per_m Ku_MJ_per_m3 Ms_MA_per_m
t_nm]   (about two minutes)
"""

import argparse
import time

from thinfilm.analysis.stripe_theory import equilibrium_width
from thinfilm.engines.llb_stripes import coarse_stripe_period


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--film", nargs=4, type=float, default=[20.0, 0.67, 1.0, 4.0])
    ap.add_argument("--cells", nargs="+", type=float, default=[2.0, 4.0, 8.0])
    args = ap.parse_args()
    a, ku, ms, t = args.film
    film = {"A": a * 1e-12, "Ku": ku * 1e6, "Ms": ms * 1e6}
    th = equilibrium_width(t=t * 1e-9, **film)
    sh = equilibrium_width(t=t * 1e-9, walls="sharp", **film)
    p_th = th["period_m"] * 1e9
    print(f"film A = {a:g} pJ/m, Ku = {ku:g} MJ/m^3, Ms = {ms:g} MA/m, t = {t:g} nm")
    print(f"theory, Bloch walls (tanh, variational): period {p_th:.1f} nm, wall parameter "
          f"{th['delta_m'] * 1e9:.2f} nm")
    print(f"theory, sharp walls sigma = 4 sqrt(A K_eff): period {sh['period_m'] * 1e9:.1f} nm")
    for cell in args.cells:
        t0 = time.time()
        p, ps, es = coarse_stripe_period(cell, p_th, t_nm=t, **film)
        print(f"coarse film, {cell:g} nm cells: period {p:.1f} nm ({100 * (p / p_th - 1):+.1f} % "
              f"against the Bloch-wall theory)  [{time.time() - t0:.0f} s]", flush=True)


if __name__ == "__main__":
    main()
