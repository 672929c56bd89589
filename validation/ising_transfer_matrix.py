"""Row transfer matrix of the Ising model on infinite cylinders: checks of the exact lengths.

Checks two statements that validation/xi_exact.py relies on, for the square and the triangular
lattice above Tc (Ising spins, coupling K = J/kB T per bond, each bond once):

* the gap gamma of the exact formulas (square: 2 (K* - K), Onsager 1944; triangular: cosh gamma
  = (c^3 + s^3 - s)/(2 s), derived in xi_exact.py) equals -ln(lambda_1/lambda_0) of the row
  transfer matrix;
* the second-moment length xi_2nd = h sqrt(mu_2/(2 chi)) (h the row spacing, mu_2 the second
  moment of the correlation perpendicular to the rows) equals the one-particle value
  h/(2 sinh(gamma/2)) up to the three-particle states (about 1e-5 .. 1e-4 relative).

Cylinder: W spins per row, periodic along the row, infinitely long. Triangular rows are sheared:
site (i, j) bonds to (i, j +- 1), (i + 1, j), (i + 1, j + 1) (rows sqrt3/2 apart). The transfer
matrix M = V^(1/2) U V^(1/2) (V the bonds inside a row, U those between rows) is applied to
vectors of 2^W entries, never stored. With right and left leading eigenvectors R, L (the
triangular M is not symmetric; its transpose is M with the row order reversed), the
zero-momentum correlator of rows 0 and n is G(n) = <L| M_tot (M/lambda_0)^n sigma_0 |R>/<L|R>
(M_tot the row magnetisation), chi = G(0) + 2 sum_n G(n), mu_2 = 2 h^2 sum_n n^2 G(n).
Corrections for finite W fall like exp(-W/xi) (check with two widths).

Measured, xi_2nd/xi_1p - 1 (``--width 14``: about 1 s per point; 18: 1-7 s; 20: 6-85 s):
square -4.7e-6 (t = 1, W = 14), -3.7e-5 (t = 0.5, W = 18), -1.3e-4 (t = 0.3, W = 20; -1.1e-4 at
W = 22); triangular -1.2e-5 (t = 1, W = 14), -6.1e-5 (t = 0.5, W = 18), -1.5e-4 (t = 0.3,
W = 20). The gaps agree with the formulas to 1e-7 at t = 1 and to 4e-5 at t = 0.3, W = 20.

    python validation/ising_transfer_matrix.py [--width 14] [--ts 1.0 0.5 0.3]
"""

import argparse
import math
import time

import numpy as np
from ising_tc import EXACT_TC
from scipy.sparse.linalg import LinearOperator, eigs
from xi_exact import ROW, gap, xi_second_moment


def _spins(W):
    """(W, 2^W) spins +-1; site x is axis x of a (2,)*W reshape."""
    idx = np.arange(1 << W, dtype=np.int64)
    return np.array([1.0 - 2.0 * ((idx >> (W - 1 - x)) & 1) for x in range(W)])


def row_transfer(shape, W, K):
    """Function v -> M v of the row transfer matrix (scaled by a constant) and the spins."""
    s = _spins(W)
    half = np.exp(0.5 * K * (sum(s[x] * s[(x + 1) % W] for x in range(W)) - W))
    sg = np.array([1.0, -1.0])
    if shape == "square":
        g = np.exp(K * np.outer(sg, sg) - K)  # g[old, new]

        def between(v):
            t = v.reshape((2,) * W)
            for ax in range(W):
                t = np.moveaxis(np.tensordot(g, t, axes=([0], [ax])), 0, ax)
            return t.reshape(-1)
    elif shape == "triangular":
        # f[old_j, new_j, new_j+1]: old site j bonds to new sites j and j + 1
        f = np.exp(K * sg[:, None, None] * (sg[None, :, None] + sg[None, None, :]) - 2 * K)

        def between(v):
            t = np.einsum("a...,abc->bc...", v.reshape((2,) * W), f)  # new0, new1, old1..
            for j in range(1, W - 1):
                t = np.moveaxis(t, (j + 1, j), (0, 1))  # old_j, new_j, new0.., old_j+1..
                t = np.einsum("ab...,abc->bc...", t, f)  # new_j, new_j+1, new0.., old_j+1..
                t = np.moveaxis(t, (0, 1), (j, j + 1))
            t = np.moveaxis(t, W, 0)  # old_W-1, new0 .. new_W-1
            return np.einsum("ab...c,acb->b...c", t, f).reshape(-1)
    else:
        raise ValueError(f"shape must be square or triangular; got {shape!r}")
    return (lambda v: half * between(half * v)), s


def projected_correlator(shape, W, K, *, tol=1e-12, max_rows=2000):
    """Gap, second-moment xi (nearest-neighbour spacings) and chi on a width-W cylinder."""
    apply, s = row_transfer(shape, W, K)
    n = s.shape[1]
    vals, vecs = eigs(LinearOperator((n, n), matvec=apply, dtype=float), k=1, which="LR",
                      tol=1e-13)
    lam = float(vals[0].real)
    right = np.real(vecs[:, 0])
    right /= right.sum()
    # left eigenvector: the row-reversed right one (x -> -x mod W)
    left = np.transpose(right.reshape((2,) * W), [0] + list(range(W - 1, 0, -1))).reshape(-1)
    norm = float(left @ right)
    mag = s.sum(axis=0)
    v = s[0] * right
    corr = [float(left @ (mag * v)) / norm]
    while len(corr) < max_rows and (len(corr) < 5 or abs(corr[-1]) > tol * corr[0]):
        v = apply(v) / lam
        corr.append(float(left @ (mag * v)) / norm)
    corr = np.array(corr)
    rows = np.arange(corr.size)
    chi = corr[0] + 2.0 * corr[1:].sum()
    mu2 = 2.0 * ROW[shape] ** 2 * np.sum(rows**2 * corr)
    return {"gap": -math.log(corr[-1] / corr[-2]), "xi_2nd": math.sqrt(mu2 / (2.0 * chi)),
            "chi": chi, "rows": int(corr.size)}


def main():
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--width", type=int, default=14)
    p.add_argument("--ts", type=float, nargs="+", default=[1.0, 0.5, 0.3],
                   help="reduced temperatures t = T/Tc - 1 of the Ising model")
    args = p.parse_args()
    print(f"cylinder width W = {args.width}; gamma per row, xi in nearest-neighbour spacings")
    print("  shape        t      gamma TM     gamma exact   xi_2nd TM   xi_1p exact  "
          "xi_2nd/xi_1p - 1   s")
    for shape in ("square", "triangular"):
        for t in args.ts:
            k = 1.0 / (EXACT_TC[shape] * (1.0 + t))
            t0 = time.time()
            r = projected_correlator(shape, args.width, k)
            x1 = xi_second_moment(shape, k)
            print(f"  {shape:10s}  {t:.3f}  {r['gap']:.8f}  {gap(shape, k):.8f}  "
                  f"{r['xi_2nd']:9.6f}   {x1:9.6f}    {r['xi_2nd'] / x1 - 1:+.2e}     "
                  f"{time.time() - t0:.1f}", flush=True)


if __name__ == "__main__":
    main()
