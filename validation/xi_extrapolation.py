"""Extrapolation of xi(T) towards Tc on the exact square-Ising correlation length.

Synthetic data: xi = 1/[2(K* - K)] above Tc and 1/[4(K - K*)] below, tanh K* = exp(-2K),
K = J/kB T (Onsager 1944; McCoy and Wu 1973, textbook; below-Tc form from memory), a = 1 nm,
2 % Gaussian noise at 0.06 <= |t| <= 0.3, a 64 nm film (points with xi > 64/6 nm would be
dropped), Tc known to 0.1 %.
Prints the fit, the validity limits, the band at a few temperatures against the exact xi, the
1-sigma coverage over many seeds and the window where xi exceeds a target.

    python validation/xi_extrapolation.py [--seeds 200] [--target 30] [--figure xi.png]
"""

import argparse

import numpy as np

from thinfilm.analysis.extrapolation import fit_critical_length, predict_length
from thinfilm.analysis.length_window import temperatures_for_length

TC = 2.0 / np.log(1.0 + np.sqrt(2.0))  # J/kB, Onsager 1944
T_FIT = np.array([0.06, 0.08, 0.1, 0.13, 0.16, 0.2, 0.25, 0.3])
T_ASK = np.array([-0.1, -0.03, -0.01, 0.01, 0.02, 0.03, 0.1])


def xi_exact(T):
    K = 1.0 / np.asarray(T, dtype=float)
    ks = np.arctanh(np.exp(-2.0 * K))
    return np.where(T > TC, 1.0 / (2.0 * (ks - K)), 1.0 / (4.0 * (K - ks)))


def one_fit(seed, rel=0.02, tc_rel=0.001, side=64.0):
    rng = np.random.default_rng(seed)
    T = TC * np.concatenate([1 - T_FIT, 1 + T_FIT])
    xi = xi_exact(T)
    tc = TC * (1 + tc_rel * rng.standard_normal())
    y = xi * (1 + rel * rng.standard_normal(T.size))
    return T, y, rel * xi, fit_critical_length(T, y, rel * xi, tc_K=tc, tc_err_K=tc_rel * TC,
                                               film_side_nm=side, amplitude_ratio=2.0)


def main():
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--seeds", type=int, default=200)
    p.add_argument("--target", type=float, default=30.0, help="target length (nm)")
    p.add_argument("--figure", help="write a plot of data, fit and band to this .png file")
    args = p.parse_args()
    T, y, e, f = one_fit(0)
    print(f"fit: Tc = {f['tc_K']:.5f} +- {f['tc_err_K']:.5f} J/kB, A = {f['amplitude_nm']:.4f} "
          f"+- {f['amplitude_err_nm']:.4f} nm, c = {f['correction']}, chi2/dof = "
          f"{f['chi2_dof']:.2f}; valid |t| >= {f['valid_t_min']} ({f['limit_reason']})")
    Tq = TC * (1 + T_ASK)
    q = predict_length(f, Tq, strict=False)
    print("     t      xi fit (nm)          exact   flag")
    for t, v, d, x, fl in zip(T_ASK, q["value_nm"], q["err_nm"], xi_exact(Tq), q["flag"],
                              strict=True):
        print(f"  {t:+.3f}  {v:8.3f} +- {d:6.3f}   {x:8.3f}   {fl}")
    hits, n = np.zeros(T_ASK.size), np.zeros(T_ASK.size)
    for s in range(args.seeds):
        _, _, _, fs = one_fit(s + 1)
        r = predict_length(fs, Tq, strict=False)
        ok = r["flag"] != "refused"
        hits += ok & (np.abs(r["value_nm"] - xi_exact(Tq)) < r["err_nm"])
        n += ok
    cov = ", ".join(f"{t:+.2f}: {h / k:.2f}" if k else f"{t:+.2f}: -" for t, h, k in
                    zip(T_ASK, hits, n, strict=True))
    print(f"1-sigma coverage over {args.seeds} seeds (68 % expected): {cov}")
    w = temperatures_for_length(f, args.target, strict=False)
    print(f"xi > {args.target:g} nm for T in {w['window_K']} J/kB, errors {w['window_err_K']}, "
          f"flags {w['flags']} {w['reasons']}")
    if args.figure:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt

        fig, ax = plt.subplots(figsize=(6, 3.6), layout="constrained")
        ax.errorbar(T, y, e, fmt="o", ms=3, label="data (2 % noise)")
        ax.plot(T[~f["used"]], y[~f["used"]], "x", color="r",
                label="not used (xi > L/6 or |t| > t_max)")
        for s in f["sides"]:
            lo, hi = f["valid_range_K"][s]
            g = np.linspace(lo, hi, 200)
            b = predict_length(f, g)
            ax.fill_between(g, b["value_nm"] - b["err_nm"], b["value_nm"] + b["err_nm"],
                            alpha=0.3, color="C1", label="fit +- 1 sigma" if s == "above" else None)
            ax.plot(g, xi_exact(g), "k-", lw=0.8, label="exact" if s == "above" else None)
        ax.set_yscale("log")
        ax.set_xlabel("T (J/kB)")
        ax.set_ylabel("xi (nm)")
        fig.legend(loc="outside right center")
        fig.savefig(args.figure, dpi=120)
        print(f"figure {args.figure}")


if __name__ == "__main__":
    main()
