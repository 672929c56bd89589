"""Per-site effective field and energy sums for films with disorder (flat site arrays).

Arrays (n = ny nx sites, flat index i * nx + j, z neighbour slots in the order of
:mod:`thinfilm.model.neighbours`):

* s (n, 3) spins, zero on vacancies;
* nbr (n, z) neighbour table, -1 for no bond;
* jt (n, z) J_ij / mu_i (T), kt (n,) 2 K_i / mu_i (T), axis (n, 3) unit axes;
* occ (n,) uint8, 0 on vacancies; rel (n,) mu_i / mu_ref.

Field of an occupied site (T): h_i = sum_k jt[i, k] S_nbr[i, k] + kt_i (S_i.n_i) n_i + B.
"""

import numba as nb

__all__ = ["site_field", "site_exchange_field", "site_totals", "site_field_all"]

_OPT = dict(cache=True, error_model="numpy", boundscheck=False)


@nb.njit(inline="always", **_OPT)
def site_exchange_field(s, q, nbr, jt):
    """sum_k jt[q, k] S_nbr[q, k] (T) of site q: (hx, hy, hz)."""
    hx = 0.0
    hy = 0.0
    hz = 0.0
    for k in range(nbr.shape[1]):
        t = nbr[q, k]
        if t >= 0:
            w = jt[q, k]
            hx += w * s[t, 0]
            hy += w * s[t, 1]
            hz += w * s[t, 2]
    return hx, hy, hz


@nb.njit(inline="always", **_OPT)
def site_field(s, q, nbr, jt, kt, axis, bx, by, bz):
    """Effective field (T) of occupied site q, without thermal field: (hx, hy, hz)."""
    hx, hy, hz = site_exchange_field(s, q, nbr, jt)
    ax = axis[q, 0]
    ay = axis[q, 1]
    az = axis[q, 2]
    sn = kt[q] * (s[q, 0] * ax + s[q, 1] * ay + s[q, 2] * az)
    return hx + sn * ax + bx, hy + sn * ay + by, hz + sn * az + bz


@nb.njit(parallel=True, **_OPT)
def site_field_all(s, nbr, jt, kt, axis, occ, b, out):
    """Effective field (T) of every site into out (n, 3); zero on vacancies (for tests)."""
    for q in nb.prange(s.shape[0]):
        if occ[q]:
            hx, hy, hz = site_field(s, q, nbr, jt, kt, axis, b[0], b[1], b[2])
        else:
            hx = 0.0
            hy = 0.0
            hz = 0.0
        out[q, 0] = hx
        out[q, 1] = hy
        out[q, 2] = hz


@nb.njit(**_OPT)
def site_totals(s, nbr, jt, kt, axis, occ, rel, b):
    """(mx, my, mz, exchange, anisotropy, zeeman): sum of S over occupied sites and the three
    energy sums in units of mu_ref * T (multiply by mu_ref in J/T for joules).

    exchange = -(1/2) sum_i rel_i sum_k jt_ik S_i.S_k = -sum_<ij> J_ij S_i.S_j / mu_ref,
    anisotropy = -sum_i rel_i (kt_i/2) (S_i.n_i)^2, zeeman = -sum_i rel_i B.S_i. Serial, so the
    sum order is fixed.
    """
    mx = 0.0
    my = 0.0
    mz = 0.0
    e_ex = 0.0
    e_an = 0.0
    e_ze = 0.0
    for q in range(s.shape[0]):
        if not occ[q]:
            continue
        sx = s[q, 0]
        sy = s[q, 1]
        sz = s[q, 2]
        mx += sx
        my += sy
        mz += sz
        hx, hy, hz = site_exchange_field(s, q, nbr, jt)
        r = rel[q]
        e_ex += r * (sx * hx + sy * hy + sz * hz)
        sn = sx * axis[q, 0] + sy * axis[q, 1] + sz * axis[q, 2]
        e_an += r * kt[q] * sn * sn
        e_ze += r * (sx * b[0] + sy * b[1] + sz * b[2])
    return mx, my, mz, -0.5 * e_ex, -0.5 * e_an, -e_ze
