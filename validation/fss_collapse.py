"""Finite-size-scaling collapse of U4 and xi/L in the square Ising limit (K/J = 1000).

Metropolis Monte Carlo (with the axis-reflection move) on L x L tori, L = 8, 16, 32, at
x = t L at 9 points in [-1.2, 1.2] (t = (T - Tc)/Tc, nu = 1 assumed only to place the
temperatures); the fits use x in [-1, 1]. For
each point: the Binder cumulant of m_z and the second-moment xi/L (Cooper, Freedman and
Preston 1982; xi^2 = (S(0)/S(k_min) - 1)/(2 sin(pi/L))^2), jackknife errors over 20 blocks.
The joint collapse (:func:`thinfilm.analysis.scaling.joint_collapse_fit`) fits Tc and nu.

References: Tc = 2/ln(1 + sqrt 2) = 2.269185 J/kB and nu = 1 (Onsager, Phys. Rev. 65, 117,
1944); at K/J = 1000 the Ising coupling is softened to first order by kB T/K, so the expected
Tc is 2.269185 (1 - 2.269185/1000) = 2.2640 (derived in validation/ising_tc.py).

    python validation/fss_collapse.py [--sweeps 100000] [--seed 1] [--save rows.npy]
        [--load rows.npy] [--figure collapse.png]

Units: moment 1 muB and J = 1 meV, so kB T/J = 1 is 11.6045 K; results printed in J/kB.
"""

import argparse
import math
import time

import numpy as np

from thinfilm.analysis.scaling import collapse_fit, joint_collapse_fit
from thinfilm.analysis.thermo import jackknife
from thinfilm.analysis.universality import check_universality
from thinfilm.engines.montecarlo import MonteCarlo
from thinfilm.input.units import KB_J_PER_K, MEV_J, MU_B_J_PER_T
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model

TC = 2.0 / math.log(1.0 + math.sqrt(2.0))  # J/kB, Onsager 1944
TC_K1000 = TC * (1.0 - TC / 1000.0)  # first-order finite-K shift (validation/ising_tc.py)
J_OVER_KB = MEV_J / KB_J_PER_K
SIZES = (8, 16, 32)
X_GRID = np.linspace(-1.2, 1.2, 9)
X_WINDOW = (-1.0, 1.0)  # x = tL; wider windows reach |t| = 0.15 at L = 8, beyond scaling


def measure(L, t_over_j, n_sweeps, *, seed, k_over_j=1000.0, n_blocks=20):
    """U4 of m_z and second-moment xi/L at kB T/J = t_over_j, each with a jackknife error."""
    lat = Lattice("square", L, L, 1.0, True)
    model = Model(lat, MU_B_J_PER_T, MEV_J, k_over_j * MEV_J, (0.0, 0.0, 1.0))
    mc = MonteCarlo(model, t_over_j * J_OVER_KB, seed=seed, initial_spins="ordered",
                    reflection=True)
    mc.warmup(max(2000, n_sweeps // 10))
    ph = np.exp(-2j * np.pi * np.arange(L) / L)
    n = L * L
    rows = np.empty((n_sweeps, 3))
    for k in range(n_sweeps):
        mc.sweep(1)
        s = mc.spins[..., 2]
        m = s.mean()
        f1 = abs(s.sum(axis=0) @ ph) ** 2 + abs(s.sum(axis=1) @ ph) ** 2
        rows[k] = (m * m, m**4, f1 / (2 * n))
    khat = 2.0 * math.sin(math.pi / L)

    def func(v):
        m2, m4, s1 = v
        ratio = n * m2 / s1 - 1.0
        return np.array([1.0 - m4 / (3.0 * m2 * m2),
                         math.sqrt(max(ratio, 0.0)) / khat / L])

    val, err = jackknife(rows, func, n_blocks)
    return val, err


def scan(n_sweeps, seed=1):
    """Rows (L, T in J/kB, U4, U4_err, xi/L, xi/L_err) over SIZES x X_GRID."""
    out = []
    for L in SIZES:
        for i, x in enumerate(X_GRID):
            t = TC * (1.0 + x / L)
            ns = n_sweeps if L == SIZES[-1] else n_sweeps // 2
            (u, xl), (ue, xle) = measure(L, t, ns, seed=seed + 100 * L + i)
            out.append((L, t, u, ue, xl, xle))
    return np.array(out)


def fit(rows, **kw):
    """Joint and separate collapses of U4 and xi/L (temperatures in J/kB)."""
    L, T = rows[:, 0], rows[:, 1]
    kw = dict(tc_guess_K=TC, nu_guess=1.0, x_window=X_WINDOW, degree=3) | kw
    u = (L, T, rows[:, 2], rows[:, 3])
    xl = (L, T, rows[:, 4], rows[:, 5])
    return {"joint": joint_collapse_fit({"binder": u, "xi_over_L": xl}, **kw),
            "binder": collapse_fit(*u, **kw), "xi_over_L": collapse_fit(*xl, **kw)}


def figure(rows, fits, path):
    """Collapse plot: U4 and xi/L against x = t L^(1/nu) at the joint fit, with master curves."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from thinfilm.analysis.scaling import master_curve, scaling_variable

    f = fits["joint"]
    x = scaling_variable(rows[:, 0], rows[:, 1], f["tc_K"], f["nu"])
    xs = np.linspace(*f["x_window"], 200)
    fig, axes = plt.subplots(1, 2, figsize=(8, 3.4), layout="constrained")
    for ax, (name, col, label) in zip(axes, (("binder", 2, "U4"), ("xi_over_L", 4, "xi/L")),
                                      strict=True):
        for L in SIZES:
            k = rows[:, 0] == L
            ax.errorbar(x[k], rows[k, col], rows[k, col + 1], fmt="o", ms=3, label=f"L = {L}")
        ax.plot(xs, master_curve(f, xs, name), "k-", lw=1, label="master curve")
        ax.axvspan(*f["x_window"], color="0.9", zorder=0)
        ax.set_xlabel("x = t L^(1/nu) (1)")
        ax.set_ylabel(f"{label} (1)")
    handles, labels = axes[0].get_legend_handles_labels()
    fig.legend(handles, labels, loc="outside right center")
    fig.suptitle(f"Tc = {f['tc_K']:.4f}({f['tc_err_K'] * 1e4:.0f}) J/kB, "
                 f"nu = {f['nu']:.3f}({f['nu_err'] * 1e3:.0f}), chi2/dof = {f['chi2_dof']:.2f}",
                 fontsize=9)
    fig.savefig(path, dpi=120)
    plt.close(fig)


def main():
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--sweeps", type=int, default=100000, help="sweeps per point at L = 32 "
                   "(half at L = 8, 16)")
    p.add_argument("--seed", type=int, default=1)
    p.add_argument("--save", help="write the measured rows to this .npy file")
    p.add_argument("--load", help="refit rows saved with --save instead of simulating")
    p.add_argument("--figure", help="write the collapse plot to this .png file")
    args = p.parse_args()
    t0 = time.time()
    rows = np.load(args.load) if args.load else scan(args.sweeps, args.seed)
    if args.save:
        np.save(args.save, rows)
    print(f"square lattice, K/J = 1000, sizes {SIZES}, x = tL in [-1.2, 1.2] (fit {X_WINDOW}), "
          f"{args.sweeps} sweeps at L = {SIZES[-1]}; MC {time.time() - t0:.0f} s")
    print("   L   kT/J      U4                 xi/L")
    for r in rows:
        print(f"  {int(r[0]):2d}  {r[1]:.4f}  {r[2]:.4f} +- {r[3]:.4f}   {r[4]:.4f} +- {r[5]:.4f}")
    for name, f in fit(rows).items():
        print(f"{name:10s} Tc = {f['tc_K']:.4f} +- {f['tc_err_K']:.4f} J/kB "
              f"(Onsager {TC:.4f}: {(f['tc_K'] - TC) / f['tc_err_K']:+.1f} sigma; "
              f"K/J = 1000 shift {TC_K1000:.4f}: {(f['tc_K'] - TC_K1000) / f['tc_err_K']:+.1f} "
              f"sigma)  nu = {f['nu']:.3f} +- {f['nu_err']:.3f}  chi2/dof = {f['chi2_dof']:.2f} "
              f"(dof {f['dof']})  x in [{f['x_range'][0]:.2f}, {f['x_range'][1]:.2f}]")
    fits = fit(rows)
    print(check_universality(fits["joint"], 1000.0)["verdict"])
    if args.figure:
        figure(rows, fits, args.figure)
        print(f"figure {args.figure}")
    print(f"wall time {time.time() - t0:.0f} s")


if __name__ == "__main__":
    main()
