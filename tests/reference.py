"""Slow, obviously correct NumPy versions of the kernels, built on the lattice neighbour table."""

import numpy as np


def effective_field(lattice, spins, *, exchange_T, anisotropy_T, axis, field_T):
    """B_eff = (J/mu) sum_j S_j + (2K/mu)(S.n) n + B, from the neighbour table (T)."""
    s = spins.reshape(-1, 3)
    nb = lattice.neighbours
    total = np.zeros_like(s)
    for k in range(nb.shape[1]):
        idx = nb[:, k]
        ok = idx >= 0
        total[ok] += s[idx[ok]]
    axis = np.asarray(axis, float)
    h = (exchange_T * total + anisotropy_T * (s @ axis)[:, None] * axis[None, :]
         + np.asarray(field_T))
    return h.reshape(spins.shape)


def energy(lattice, spins, *, exchange_J, anisotropy_J, axis, moment, field_T):
    """Total energy (J) with each bond counted once (E = -J sum_<ij> S.S - K (S.n)^2 - mu B.S)."""
    s = spins.reshape(-1, 3)
    b = lattice.bonds()
    e_ex = -exchange_J * np.sum(np.einsum("ij,ij->i", s[b[:, 0]], s[b[:, 1]]))
    e_an = -anisotropy_J * np.sum((s @ np.asarray(axis, float)) ** 2)
    e_ze = -moment * np.sum(s @ np.asarray(field_T, float))
    return e_ex + e_an + e_ze


def llg_rhs(s, h, gamma, alpha):
    """Gilbert LLG in Landau-Lifshitz form: dS/dt = -gamma/(1+a^2) [S x H + a S x (S x H)]."""
    sxh = np.cross(s, h)
    return -gamma / (1 + alpha**2) * (sxh + alpha * np.cross(s, sxh))


def heun_step(lattice, s, noise_T, dt, *, gamma, alpha, **field_kw):
    """One stochastic Heun step with fixed noise (T) and renormalisation (reference)."""
    h1 = effective_field(lattice, s, **field_kw) + noise_T
    d1 = llg_rhs(s, h1, gamma, alpha) * dt
    sp = s + d1
    sp /= np.linalg.norm(sp, axis=-1, keepdims=True)
    h2 = effective_field(lattice, sp, **field_kw) + noise_T
    d2 = llg_rhs(sp, h2, gamma, alpha) * dt
    out = s + 0.5 * (d1 + d2)
    return out / np.linalg.norm(out, axis=-1, keepdims=True)


def random_spins(rng, ny, nx):
    """Uniformly random unit spins, C-contiguous (ny, nx, 3)."""
    s = rng.normal(size=(ny, nx, 3))
    return np.ascontiguousarray(s / np.linalg.norm(s, axis=-1, keepdims=True))


def kernel_params():
    """(jt, kt, axis, field) in tesla for kernel tests: generic, all terms on."""
    axis = np.array([0.3, -0.2, 0.9])
    axis /= np.linalg.norm(axis)
    return 1.3, 0.8, axis, np.array([0.1, -0.25, 0.4])


def assert_standard_normal_pairs(g):
    """Pairs g (n, 2) are independent standard normals: moments within 5 standard errors,
    Kolmogorov-Smirnov against scipy.stats.norm (a general-purpose reference library), angle
    uniform on the circle and r^2 exponential with mean 2 (chi^2 with 2 degrees of freedom)."""
    import math

    from scipy import stats

    n = g.shape[0]
    for c in range(2):
        assert abs(g[:, c].mean()) < 5 / math.sqrt(n)
        assert abs(g[:, c].var() - 1) < 5 * math.sqrt(2 / n)
        assert stats.kstest(g[:, c], "norm").pvalue > 1e-3
    assert abs(np.mean(g[:, 0] * g[:, 1])) < 5 / math.sqrt(n)
    phi = np.arctan2(g[:, 1], g[:, 0])
    assert stats.kstest(phi, "uniform", args=(-math.pi, 2 * math.pi)).pvalue > 1e-3
    assert stats.kstest((g**2).sum(1), "expon", args=(0, 2)).pvalue > 1e-3
