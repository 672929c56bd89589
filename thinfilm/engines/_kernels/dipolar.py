"""Numba kernels of the dipolar convolution: spins <-> sublattice planes, tensor product in k-space.

Planes layout: (3, n_sub, my, L) real arrays, component c of site (i, j) at
[c, (i % p) q + j % q, i // p, j // q] (L >= mx; sites beyond the grid are zero on input).
Spectra: (3, n_sub, fy, fk) complex; tensor: (n_pairs, 3, fy, fk) complex with components
(xx, yy, xy) and zz = -(xx + yy), pair table ``pidx`` and conjugation flags ``pconj``.

These passes are memory-bound and run on one thread: one core saturates the memory bus
(``apply_tensor`` at 1024^2 in single precision: 2.1 ms on one thread and on two), and between
FFT calls a parallel launch must first wake the idle kernel threads. The LLG step does not
gather: its Heun stages write the planes themselves.
"""

import numba as nb
import numpy as np

__all__ = ["gather_planes", "scatter_planes", "apply_tensor", "dot_planes"]

_OPT = dict(cache=True, error_model="numpy", boundscheck=False)


@nb.njit(**_OPT)
def gather_planes(s, p, q, out):
    """Spins s (ny, nx, 3) into planes out (3, n_sub, my, mx); absent sites set to zero."""
    ny, nx = s.shape[0], s.shape[1]
    my, mx = out.shape[2], out.shape[3]
    for ii in range(my * p):
        big, r = ii // p, ii % p
        i = big * p + r
        for c in range(q):
            sub = r * q + c
            o0 = out[0, sub, big]
            o1 = out[1, sub, big]
            o2 = out[2, sub, big]
            if i < ny:
                for jj in range(mx):
                    j = jj * q + c
                    if j < nx:
                        o0[jj] = s[i, j, 0]
                        o1[jj] = s[i, j, 1]
                        o2[jj] = s[i, j, 2]
                    else:
                        o0[jj] = 0.0
                        o1[jj] = 0.0
                        o2[jj] = 0.0
            else:
                o0[:] = 0.0
                o1[:] = 0.0
                o2[:] = 0.0


@nb.njit(**_OPT)
def scatter_planes(y, p, q, scale, out):
    """Planes y (3, n_sub, my, L) times scale into out (ny, nx, 3)."""
    ny, nx = out.shape[0], out.shape[1]
    for i in range(ny):
        big, r = i // p, i % p
        for b in range(q):
            y0 = y[0, r * q + b, big]
            y1 = y[1, r * q + b, big]
            y2 = y[2, r * q + b, big]
            for jj in range((nx - b + q - 1) // q):
                j = jj * q + b
                out[i, j, 0] = scale * y0[jj]
                out[i, j, 1] = scale * y1[jj]
                out[i, j, 2] = scale * y2[jj]


@nb.njit(**_OPT)
def dot_planes(s, y, p, q):
    """sum_i S_i . y_i over the sites of s (ny, nx, 3), y in planes layout (float64 sum)."""
    ny, nx = s.shape[0], s.shape[1]
    total = 0.0
    for i in range(ny):
        big, r = i // p, i % p
        acc = 0.0
        for b in range(q):
            y0 = y[0, r * q + b, big]
            y1 = y[1, r * q + b, big]
            y2 = y[2, r * q + b, big]
            for jj in range((nx - b + q - 1) // q):
                j = jj * q + b
                acc += s[i, j, 0] * y0[jj] + s[i, j, 1] * y1[jj] + s[i, j, 2] * y2[jj]
        total += acc
    return total


@nb.njit(**_OPT)
def apply_tensor(x, k, pidx, pconj):
    """In place: x[:, s] <- sum_t K_st x[:, t] at every wavevector (x (3, n_sub, fy, fk))."""
    nsub, fy, fk = x.shape[1], x.shape[2], x.shape[3]
    if nsub == 1:
        for y in range(fy):
            kxx = k[0, 0, y]
            kyy = k[0, 1, y]
            kxy = k[0, 2, y]
            ax = x[0, 0, y]
            ay = x[1, 0, y]
            az = x[2, 0, y]
            for j in range(fk):
                a = kxx[j]
                b = kyy[j]
                c = kxy[j]
                mx_ = ax[j]
                my_ = ay[j]
                ax[j] = a * mx_ + c * my_
                ay[j] = c * mx_ + b * my_
                az[j] = -(a + b) * az[j]
        return
    for y in range(fy):
        mvec = np.empty((3, nsub), dtype=x.dtype)
        for j in range(fk):
            for t in range(nsub):
                mvec[0, t] = x[0, t, y, j]
                mvec[1, t] = x[1, t, y, j]
                mvec[2, t] = x[2, t, y, j]
            for s in range(nsub):
                hx = 0j
                hy = 0j
                hz = 0j
                for t in range(nsub):
                    pr = pidx[s, t]
                    a = k[pr, 0, y, j]
                    b = k[pr, 1, y, j]
                    c = k[pr, 2, y, j]
                    if pconj[s, t]:
                        a = a.conjugate()
                        b = b.conjugate()
                        c = c.conjugate()
                    hx += a * mvec[0, t] + c * mvec[1, t]
                    hy += c * mvec[0, t] + b * mvec[1, t]
                    hz -= (a + b) * mvec[2, t]
                x[0, s, y, j] = hx
                x[1, s, y, j] = hy
                x[2, s, y, j] = hz
