"""Finite-size-scaling collapse of U4 and xi/L in the Ising limit (K/J = 1000), square or
triangular lattice.

Monte Carlo (Metropolis with the axis-reflection move, optionally plus Wolff cluster moves along
the axis) on L x L tori, L = 8, 16, 32, at x = t L at 9 points in [-1.2, 1.2] (t = (T - Tc)/Tc,
Tc the exact Ising value, nu = 1 assumed only to place the temperatures); the fits use x in
[-1, 1]. For each point: the Binder cumulant of m_z and the second-moment xi/L (Cooper,
Freedman and Preston 1982: xi^2 = (S(0)/S(k) - 1)/khat^2 at the smallest wavevectors along x and
y of the torus, khat = 2 sin(k/2) on the square lattice and |k| on the triangular one, as
:mod:`thinfilm.analysis.correlation`; L = number of columns, lengths in nearest-neighbour
spacings), jackknife errors over 20 blocks. The joint collapse
(:func:`thinfilm.analysis.scaling.joint_collapse_fit`) fits Tc and nu.

References: nu = 1 (2D Ising class, Onsager, Phys. Rev. 65, 117, 1944; the triangular lattice
is in the same class); Tc = 2/ln(1 + sqrt 2) = 2.269185 J/kB (square, Onsager 1944) and
4/ln 3 = 3.640957 J/kB (triangular, Houtappel, Physica 16, 425, 1950; Wannier 1950), each bond
counted once. At K/J = 1000 the Ising coupling is softened to first order by kB T/K, so the
expected Tc is Tc (1 - Tc/1000): 2.2640 (square), 3.6277 (triangular) (derived in
validation/ising_tc.py).

Measured (triangular, ``--shape triangular --cluster --sweeps 40000 --seed 3``, as the slow
test): joint Tc = 3.6252(9) J/kB (-2.9 sigma from 3.6277), nu = 0.993(7), chi2/dof 2.06; the
xi/L collapse alone 3.6271(10), nu = 1.000(8); U4 alone 3.6227(10), nu = 0.983(9) (U4 carries
the larger corrections to scaling at L = 8).

    python validation/fss_collapse.py [--shape square|triangular] [--cluster]
        [--sweeps 100000] [--seed 1] [--save rows.npy] [--load rows.npy] [--figure collapse.png]

Units: moment 1 muB and J = 1 meV, so kB T/J = 1 is 11.6045 K; results printed in J/kB.
"""

import argparse
import math
import time

import numpy as np
from ising_tc import EXACT_TC, J_OVER_KB, corrected_tc, ising_model

from thinfilm.analysis.scaling import collapse_fit, joint_collapse_fit
from thinfilm.analysis.thermo import jackknife
from thinfilm.analysis.universality import check_universality
from thinfilm.engines.montecarlo import MonteCarlo

TC = EXACT_TC["square"]  # J/kB, Onsager 1944
TC_K1000 = corrected_tc("square")  # first-order finite-K shift (validation/ising_tc.py)
SHAPES = ("square", "triangular")
SIZES = (8, 16, 32)
X_GRID = np.linspace(-1.2, 1.2, 9)
X_WINDOW = (-1.0, 1.0)  # x = tL; wider windows reach |t| = 0.15 at L = 8, beyond scaling
METROPOLIS = ("metropolis",)
CLUSTER = ("metropolis", "cluster")


def smallest_modes(lattice):
    """Smallest non-zero wavevectors of the torus along x and along y.

    Returns a list of (phases (N,), khat): exp(-i k.r) at every site (r in nearest-neighbour
    spacings) and the wavevector length khat of the second-moment estimator: the lattice
    form 2 sin(k/2) on the square lattice (Cooper, Freedman and Preston 1982), |k| otherwise (as
    :func:`thinfilm.analysis.correlation.second_moment_length`).
    """
    a = lattice.spacing_nm
    pos = lattice.positions_nm.reshape(-1, 2) / a
    box = np.asarray(lattice.box_nm, dtype=np.float64) / a
    out = []
    for d in (0, 1):
        k = 2.0 * math.pi / box[d]
        khat = 2.0 * math.sin(k / 2.0) if lattice.shape == "square" else k
        out.append((np.exp(-1j * k * pos[:, d]), khat))
    return out


def measure(L, t_over_j, n_sweeps, *, seed, shape="square", k_over_j=1000.0, n_blocks=20,
            moves=METROPOLIS, n_warmup=None):
    """U4 of m_z and second-moment xi/L at kB T/J = t_over_j, each with a jackknife error.

    One sample per sweep (a Metropolis sweep, plus clusters covering about N sites with
    ``moves=CLUSTER``) after ``n_warmup`` sweeps (default max(2000, n_sweeps/10)). Modes of
    equal khat are averaged before the ratio (square: x and y together); with unequal khat
    (triangular torus, L a by L a sqrt3/2) xi is the mean of the per-direction values. With
    cluster moves S(0) = N <m_z^2> in xi is the clusters' improved estimator (Wolff 1989,
    ``MonteCarlo.last_cluster_stats``; exact at zero field, its variance is far smaller above
    Tc); U4 uses the measured m_z.
    """
    model = ising_model(shape, L, k_over_j)
    lat = model.lattice
    mc = MonteCarlo(model, t_over_j * J_OVER_KB, seed=seed, initial_spins="ordered",
                    reflection=True, moves=moves)
    mc.warmup(max(2000, n_sweeps // 10) if n_warmup is None else n_warmup)
    modes = smallest_modes(lat)
    khats = sorted({kh for _, kh in modes})
    group = np.array([khats.index(kh) for _, kh in modes])
    counts = np.bincount(group)
    # real projection matrix: columns cos and sin of every mode (one BLAS product per sweep)
    proj = np.ascontiguousarray(np.concatenate([np.stack([ph.real, ph.imag], axis=1)
                                                for ph, _ in modes], axis=1))
    n = lat.n_sites
    improved = "cluster" in mc.moves
    rows = np.empty((n_sweeps, 3 + len(khats)))
    for k in range(n_sweeps):
        mc.sweep(1)
        s = mc.spins[..., 2].reshape(-1)
        m = s.mean()
        m2_s0 = mc.last_cluster_stats["m_r2_improved"] if improved else m * m
        rows[k, :3] = (m * m, m**4, m2_s0)
        f2 = (s @ proj) ** 2
        rows[k, 3:] = np.bincount(group, f2[0::2] + f2[1::2], len(khats)) / (counts * n)

    def func(v):
        m2, m4, m2_s0 = v[:3]
        xis = [math.sqrt(max(n * m2_s0 / s1 - 1.0, 0.0)) / kh
               for s1, kh in zip(v[3:], khats, strict=True)]
        return np.array([1.0 - m4 / (3.0 * m2 * m2), sum(xis) / len(xis) / L])

    val, err = jackknife(rows, func, n_blocks)
    return val, err


def scan(n_sweeps, seed=1, *, shape="square", moves=METROPOLIS):
    """Rows (L, T in J/kB, U4, U4_err, xi/L, xi/L_err) over SIZES x X_GRID, T placed about the
    exact Ising Tc of the lattice (n_sweeps at the largest L, half at the others)."""
    tc = EXACT_TC[shape]
    out = []
    for L in SIZES:
        for i, x in enumerate(X_GRID):
            t = tc * (1.0 + x / L)
            ns = n_sweeps if L == SIZES[-1] else n_sweeps // 2
            (u, xl), (ue, xle) = measure(L, t, ns, seed=seed + 100 * L + i, shape=shape,
                                         moves=moves)
            out.append((L, t, u, ue, xl, xle))
    return np.array(out)


def fit(rows, shape="square", **kw):
    """Joint and separate collapses of U4 and xi/L (temperatures in J/kB)."""
    L, T = rows[:, 0], rows[:, 1]
    kw = dict(tc_guess_K=EXACT_TC[shape], nu_guess=1.0, x_window=X_WINDOW, degree=3) | kw
    u = (L, T, rows[:, 2], rows[:, 3])
    xl = (L, T, rows[:, 4], rows[:, 5])
    return {"joint": joint_collapse_fit({"binder": u, "xi_over_L": xl}, **kw),
            "binder": collapse_fit(*u, **kw), "xi_over_L": collapse_fit(*xl, **kw)}


def figure(rows, fits, path, shape="square"):
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
    fig.suptitle(f"{shape}: Tc = {f['tc_K']:.4f}({f['tc_err_K'] * 1e4:.0f}) J/kB, "
                 f"nu = {f['nu']:.3f}({f['nu_err'] * 1e3:.0f}), chi2/dof = {f['chi2_dof']:.2f}",
                 fontsize=9)
    fig.savefig(path, dpi=120)
    plt.close(fig)


def main():
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--sweeps", type=int, default=100000, help="sweeps per point at L = 32 "
                   "(half at L = 8, 16)")
    p.add_argument("--seed", type=int, default=1)
    p.add_argument("--shape", choices=SHAPES, default="square")
    p.add_argument("--cluster", action="store_true", help="add Wolff cluster moves (along the "
                   "axis, about N sites per sweep) to every Metropolis sweep")
    p.add_argument("--save", help="write the measured rows to this .npy file")
    p.add_argument("--load", help="refit rows saved with --save instead of simulating")
    p.add_argument("--figure", help="write the collapse plot to this .png file")
    args = p.parse_args()
    t0 = time.time()
    moves = CLUSTER if args.cluster else METROPOLIS
    rows = (np.load(args.load) if args.load
            else scan(args.sweeps, args.seed, shape=args.shape, moves=moves))
    if args.save:
        np.save(args.save, rows)
    tc, tc_k = EXACT_TC[args.shape], corrected_tc(args.shape)
    print(f"{args.shape} lattice, K/J = 1000, moves {'+'.join(moves)}, sizes {SIZES}, "
          f"x = tL in [-1.2, 1.2] (fit {X_WINDOW}), {args.sweeps} sweeps at L = {SIZES[-1]}; "
          f"MC {time.time() - t0:.0f} s")
    print("   L   kT/J      U4                 xi/L")
    for r in rows:
        print(f"  {int(r[0]):2d}  {r[1]:.4f}  {r[2]:.4f} +- {r[3]:.4f}   {r[4]:.4f} +- {r[5]:.4f}")
    fits = fit(rows, args.shape)
    for name, f in fits.items():
        print(f"{name:10s} Tc = {f['tc_K']:.4f} +- {f['tc_err_K']:.4f} J/kB "
              f"(exact Ising {tc:.4f}: {(f['tc_K'] - tc) / f['tc_err_K']:+.1f} sigma; "
              f"K/J = 1000 shift {tc_k:.4f}: {(f['tc_K'] - tc_k) / f['tc_err_K']:+.1f} "
              f"sigma)  nu = {f['nu']:.3f} +- {f['nu_err']:.3f}  chi2/dof = {f['chi2_dof']:.2f} "
              f"(dof {f['dof']})  x in [{f['x_range'][0]:.2f}, {f['x_range'][1]:.2f}]")
    print(check_universality(fits["joint"], 1000.0)["verdict"])
    if args.figure:
        figure(rows, fits, args.figure, args.shape)
        print(f"figure {args.figure}")
    print(f"wall time {time.time() - t0:.0f} s")


if __name__ == "__main__":
    main()
