"""Plain NumPy references for films with per-site parameters (loops over the neighbour table)."""

import numpy as np


def site_energy(params, spins):
    """Total energy (J): -sum_<ij> J_ij S_i.S_j - sum K_i (S_i.n_i)^2 - sum mu_i B.S_i.

    Each bond once: half the sum over both slots of every bond (equal J on both).
    """
    lat = params.lattice
    s = spins.reshape(-1, 3) * params.occupied.reshape(-1, 1)
    nb = np.asarray(lat.neighbours)
    jw = params.exchange_J.reshape(nb.shape)
    e_ex = 0.0
    for q in range(nb.shape[0]):
        for k in range(nb.shape[1]):
            t = nb[q, k]
            if t >= 0:
                e_ex -= 0.5 * jw[q, k] * float(s[q] @ s[t])
    ax = params.axis.reshape(-1, 3)
    e_an = -np.sum(params.anisotropy_J.ravel() * np.einsum("ij,ij->i", s, ax) ** 2)
    e_ze = -np.sum(params.moment_J_per_T.ravel() * (s @ params.field_T))
    return e_ex + e_an + e_ze


def site_energy_from_bonds(params, spins):
    """Same energy from lattice.bonds() (each bond once; grids without self-bonds only)."""
    lat = params.lattice
    s = spins.reshape(-1, 3) * params.occupied.reshape(-1, 1)
    nb = np.asarray(lat.neighbours)
    jw = params.exchange_J.reshape(nb.shape)
    e = 0.0
    for a, b in lat.bonds():
        k = int(np.nonzero(nb[a] == b)[0][0])  # J of the bond from the slot at a
        e -= jw[a, k] * float(s[a] @ s[b])
    ax = params.axis.reshape(-1, 3)
    e -= np.sum(params.anisotropy_J.ravel() * np.einsum("ij,ij->i", s, ax) ** 2)
    e -= np.sum(params.moment_J_per_T.ravel() * (s @ params.field_T))
    return e


def site_field(params, spins):
    """B_eff,i = (1/mu_i)[sum_j J_ij S_j + 2 K_i (S_i.n_i) n_i] + B (T); 0 on vacancies."""
    lat = params.lattice
    s = spins.reshape(-1, 3) * params.occupied.reshape(-1, 1)
    nb = np.asarray(lat.neighbours)
    jw = params.exchange_J.reshape(nb.shape)
    ax = params.axis.reshape(-1, 3)
    mu = params.moment_J_per_T.ravel()
    out = np.zeros_like(s)
    for q in range(s.shape[0]):
        if not params.occupied.ravel()[q]:
            continue
        h = np.zeros(3)
        for k in range(nb.shape[1]):
            if nb[q, k] >= 0:
                h += jw[q, k] * s[nb[q, k]]
        h += 2 * params.anisotropy_J.ravel()[q] * (s[q] @ ax[q]) * ax[q]
        out[q] = h / mu[q] + params.field_T
    return out.reshape(spins.shape)


def site_heun_step(params, spins, noise_T, dt, gamma, alpha):
    """One Heun step with fixed thermal field noise_T (ny, nx, 3) (T); vacancies stay 0."""
    occ = params.occupied[..., None]

    def rhs(s, h):
        sxh = np.cross(s, h)
        return -gamma / (1 + alpha**2) * (sxh + alpha * np.cross(s, sxh))

    s = spins * occ
    d1 = rhs(s, site_field(params, s) + noise_T) * dt * occ
    sp = s + d1
    sp = np.where(occ, sp / np.where(occ, np.linalg.norm(sp, axis=-1, keepdims=True), 1), 0)
    d2 = rhs(sp, site_field(params, sp) + noise_T) * dt * occ
    out = s + 0.5 * (d1 + d2)
    return np.where(occ, out / np.where(occ, np.linalg.norm(out, axis=-1, keepdims=True), 1), 0)
