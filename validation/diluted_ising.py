"""Site-diluted square Ising limit (K/J = 1000): Tc against the vacancy fraction.

Each site is empty with probability x (occupied fraction p = 1 - x). Checks:

* Tc(x) <= Tc(0) = 2/ln(1 + sqrt2) = 2.269185 J/kB (Onsager, Phys. Rev. 65, 117, 1944): removing
  ferromagnetic bonds cannot raise Tc (Griffiths' second inequality: correlations grow with
  every ferromagnetic coupling; Griffiths, J. Math. Phys. 8, 478 (1967), from memory);
* Tc = 0 for p below the site-percolation threshold p_c = 0.592746 of the square lattice
  (Newman and Ziff, Phys. Rev. Lett. 85, 4104 (2000)): no infinite cluster, no order;
* a consistency check, not a published value: for small x the mean-field-like estimate
  Tc(p) ~ p Tc(1) (each spin keeps on average 4p neighbours) and the straight line to the
  percolation point, Tc(1) (p - p_c)/(1 - p_c), are two rough guides; Tc(p) is expected between
  them (approximate, both heuristic).

Tc from the crossing of Binder cumulants of the disorder averages,
U = 1 - [<m^4>]/(3 [<m^2>]^2) (m = m_z per occupied site), errors by a jackknife over
realisations (each realisation's thermal noise is independent, so this error holds both).

Measured (L = 16/32, 16 realisations, 4000 samples): Tc(0.05) = 2.116(17), Tc(0.10) = 1.929(21),
Tc(0.20) = 1.504(36) J/kB.

Run: ``python validation/diluted_ising.py [--quick] [--fractions 0.1 0.2] [--sizes 16 32]
[--realisations 16] [--samples 4000]``: prints Tc(x) with errors and the guides.
"""

import argparse
import math
import time

import numpy as np

from thinfilm.analysis.critical import tc_from_binder_crossing
from thinfilm.analysis.ensemble import disorder_binder
from thinfilm.engines.disordered_mc import SiteMonteCarlo
from thinfilm.input.disorder_spec import DisorderSpec
from thinfilm.input.units import KB_J_PER_K, MEV_J, MU_B_J_PER_T
from thinfilm.model.disorder import realise_disorder
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model

J_OVER_KB = MEV_J / KB_J_PER_K  # K per unit of kB T/J (J = 1 meV)
TC_PURE = 2.0 / math.log(1.0 + math.sqrt(2.0))
P_C = 0.592746  # square site percolation (Newman and Ziff 2000)


def ising_model(L, k_over_j=1000.0, periodic=True):
    """L x L square film, mu = 1 muB, J = 1 meV, easy axis z with K = k_over_j J."""
    return Model(Lattice("square", L, L, 0.3, periodic), MU_B_J_PER_T, MEV_J,
                 k_over_j * MEV_J, (0.0, 0.0, 1.0))


def realisation_moments(params, t_over_j, *, n_warmup, n_samples, seed, sample_every=1):
    """Thermal <m^2>, <m^4>, <|m|> (m = m_z per occupied site) of one realisation per t."""
    out = []
    for k, t in enumerate(t_over_j):
        # serial kernel: small lattices, and threads lose badly on a shared machine
        mc = SiteMonteCarlo(params, t * J_OVER_KB, seed=seed + 7919 * k, initial_spins="ordered",
                            parallel=False)
        m = mc.run(n_warmup, n_samples, sample_every)["m_order"]
        out.append((np.mean(m**2), np.mean(m**4), np.mean(np.abs(m))))
    return np.array(out)


def binder_curves(x, sizes, t_over_j, *, n_real, n_warmup, n_samples, seed=1, sample_every=1):
    """{L: (U, U_err)} over t from the disorder-averaged moments of n_real realisations."""
    curves = {}
    spec = DisorderSpec(vacancies=x)
    for L in sizes:
        model = ising_model(L)
        mom = np.array([realisation_moments(realise_disorder(model, spec, seed + 1000 * L + r),
                                            t_over_j, n_warmup=n_warmup, n_samples=n_samples,
                                            seed=seed + 97 * r, sample_every=sample_every)
                        for r in range(n_real)])  # (n_real, n_t, 3)
        ue = [disorder_binder(mom[:, k, 0], mom[:, k, 1]) for k in range(len(t_over_j))]
        curves[L] = (np.array([u for u, _ in ue]), np.array([e for _, e in ue]))
    return curves


def diluted_tc(x, sizes, t_over_j, **kw):
    """Binder-crossing Tc (J/kB) with its bootstrap error and the curves."""
    curves = binder_curves(x, sizes, t_over_j, **kw)
    res = tc_from_binder_crossing(np.asarray(t_over_j) * J_OVER_KB, curves, seed=3)
    return {"tc": res["tc_K"] / J_OVER_KB, "tc_err": res["tc_err_K"] / J_OVER_KB,
            "u_cross": res["u_cross"], "pairs": res["pairs"], "curves": curves}


def guides(x):
    """(mean-field-like p Tc(1), chord to percolation Tc(1)(p - p_c)/(1 - p_c)) in J/kB."""
    p = 1.0 - x
    return p * TC_PURE, max(0.0, TC_PURE * (p - P_C) / (1 - P_C))


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="L = 8, 16, few realisations")
    ap.add_argument("--fractions", type=float, nargs="+", help="vacancy fractions")
    ap.add_argument("--sizes", type=int, nargs="+", help="linear sizes (at least two)")
    ap.add_argument("--realisations", type=int, help="realisations per size")
    ap.add_argument("--samples", type=int, help="samples per temperature and realisation")
    args = ap.parse_args(argv)
    if args.quick:
        sizes, n_real, ns, fractions = (8, 16), 8, 3000, (0.05, 0.1)
    else:
        sizes, n_real, ns, fractions = (16, 32), 32, 10000, (0.05, 0.1, 0.2)
    sizes = tuple(args.sizes or sizes)
    n_real = args.realisations or n_real
    ns = args.samples or ns
    fractions = tuple(args.fractions or fractions)
    for x in fractions:
        mf, chord = guides(x)
        t0 = time.perf_counter()
        grid = np.linspace(0.85 * chord + 0.15 * mf - 0.15, mf + 0.1, 9)
        res = diluted_tc(x, sizes, grid, n_real=n_real, n_warmup=1000, n_samples=ns)
        dt = time.perf_counter() - t0
        print(f"x = {x:.2f}: Tc = {res['tc']:.4f} +- {res['tc_err']:.4f} J/kB "
              f"(pure {TC_PURE:.4f}; guides: p Tc(1) = {mf:.4f}, chord to p_c = {chord:.4f}); "
              f"slope (Tc(0) - Tc(x))/(x Tc(0)) = {(TC_PURE - res['tc']) / (x * TC_PURE):.2f}; "
              f"U* = {res['u_cross']:.3f}; L = {sizes}, {n_real} realisations; {dt:.0f} s",
              flush=True)


if __name__ == "__main__":
    main()
