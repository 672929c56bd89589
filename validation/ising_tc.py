"""Ising limit of the anisotropic Heisenberg model: Binder-crossing Tc vs the exact values.

With K/J -> infinity the spins are pinned to +-n and the model is the Ising model (bonds once),
so the U4(m_z) crossings must reproduce the exact critical temperatures:

* square 2/ln(1 + sqrt2) = 2.269185 J/kB (Onsager, Phys. Rev. 65, 117, 1944)
* triangular 4/ln 3 = 3.640957 J/kB (Houtappel, Physica 16, 425, 1950; Wannier 1950)
* honeycomb 2/ln(2 + sqrt3) = 1.518651 J/kB (Houtappel 1950)

Units: moment 1 muB, J = 1 meV, so T = t * 11.6045 K with t = kB T/J. At finite K each spin
wobbles in its well (-K cos^2 theta ~ -K + K theta^2) with <theta^2> = kB T/K, so
<cos theta> ~ 1 - kB T/(2K) and the Ising coupling of a bond is J_eff ~ J (1 - kB T/K).
To first order (derived here, not from a source) Tc(K) ~ Tc_Ising (1 - kB Tc_Ising/K):
-0.23 % (square), -0.36 % (triangular), -0.15 % (honeycomb) at K/J = 1000. The script prints
both references.

Run: ``python validation/ising_tc.py [--quick]`` (prints Tc per lattice, errors, run time).
"""

import argparse
import math
import time

import numpy as np

from thinfilm.analysis.critical import tc_from_binder_crossing
from thinfilm.analysis.thermo import thermodynamics
from thinfilm.engines.montecarlo import MonteCarlo
from thinfilm.input.units import KB_J_PER_K, MEV_J, MU_B_J_PER_T
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model

J_OVER_KB = MEV_J / KB_J_PER_K  # K per unit of kB T/J when J = 1 meV
EXACT_TC = {  # kB Tc / J
    "square": 2.0 / math.log(1.0 + math.sqrt(2.0)),
    "triangular": 4.0 / math.log(3.0),
    "honeycomb": 2.0 / math.log(2.0 + math.sqrt(3.0)),
}


def ising_model(shape, L, k_over_j=1000.0):
    """L x L periodic lattice, mu = 1 muB, J = 1 meV, easy axis z with K = k_over_j * J."""
    lat = Lattice(shape, L, L, 0.3, True)
    return Model(lat, MU_B_J_PER_T, MEV_J, k_over_j * MEV_J, (0.0, 0.0, 1.0))


def corrected_tc(shape, k_over_j=1000.0):
    """Exact Ising Tc with the first-order finite-anisotropy shift, Tc (1 - Tc/(K/J))."""
    tc = EXACT_TC[shape]
    return tc * (1.0 - tc / k_over_j)


def scan(shape, sizes, t_over_j, *, n_warmup, n_samples, seed=1, k_over_j=1000.0,
         sample_every=1):
    """Thermodynamics over reduced temperatures t = kB T/J for each size.

    n_samples and sample_every are ints or {L: int}. Returns {L: list of thermodynamics
    dicts (one per temperature)}; m_order is m_z.
    """
    out = {}
    for L in sizes:
        rows = []
        model = ising_model(shape, L, k_over_j)
        for k, t in enumerate(t_over_j):
            temp = t * J_OVER_KB
            mc = MonteCarlo(model, temp, seed=seed + 1000 * L + k, initial_spins="ordered")
            ns = n_samples[L] if isinstance(n_samples, dict) else n_samples
            every = sample_every[L] if isinstance(sample_every, dict) else sample_every
            r = mc.run(n_warmup, ns, every)
            rows.append(thermodynamics(r["energy_J"], r["m_order"], r["m_vector"],
                                       model.lattice.n_sites, temp))
        out[L] = rows
    return out


def binder_tc(shape, sizes, t_over_j, **kw):
    """Binder-crossing Tc (units of J/kB) with its bootstrap error, and the raw scan."""
    data = scan(shape, sizes, t_over_j, **kw)
    temps = np.asarray(t_over_j) * J_OVER_KB
    curves = {L: (np.array([d["binder"] for d in data[L]]),
                  np.array([d["binder_err"] for d in data[L]])) for L in sizes}
    res = tc_from_binder_crossing(temps, curves, seed=7)
    res["tc"] = res["tc_K"] / J_OVER_KB
    res["tc_err"] = res["tc_err_K"] / J_OVER_KB
    res["scan"] = data
    return res


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--quick", action="store_true", help="L = 8, 16 only, short runs")
    args = p.parse_args(argv)
    if args.quick:
        sizes, ns, grid = (8, 16), {8: 8000, 16: 8000}, (0.97, 0.99, 1.01, 1.03)
    else:
        sizes = (16, 32, 48)
        ns = {16: 30000, 32: 30000, 48: 30000}
        grid = (0.98, 0.99, 0.995, 1.0, 1.005, 1.01, 1.02)
    for shape, tc in EXACT_TC.items():
        t0 = time.perf_counter()
        res = binder_tc(shape, sizes, [g * tc for g in grid], n_warmup=2000, n_samples=ns)
        dt = time.perf_counter() - t0
        pairs = ", ".join(f"L{a}/L{b}: {p['tc_K'] / J_OVER_KB:.4f}({p['tc_err_K'] / J_OVER_KB:.4f})"
                          for p in res["pairs"] for a, b in [p["sizes"]])
        tk = corrected_tc(shape)
        print(f"{shape:10s} Tc = {res['tc']:.4f} +- {res['tc_err']:.4f} J/kB "
              f"(exact Ising {tc:.4f}, dev {(res['tc'] - tc) / res['tc_err']:+.1f} sigma; "
              f"with T/K shift {tk:.4f}, dev {(res['tc'] - tk) / res['tc_err']:+.1f} sigma); "
              f"U* = {res['u_cross']:.3f}; pairs {pairs}; {dt:.0f} s", flush=True)


if __name__ == "__main__":
    main()
