"""Per-site effective field and energy sums of the generic (packed) film form, flat site arrays.

Arrays (n = ny nx sites, flat index i * nx + j, z neighbour slots in the order of
:mod:`thinfilm.model.neighbours`), as packed by :class:`thinfilm.model.terms.TermSet`:

* s (n, 3) spins, zero on vacancies;
* nbr (n, z) neighbour table, -1 for no bond;
* jt (n, z) J_ij / mu_i (T): exchange per neighbour slot;
* dm (n, z, 3) D_ij / mu_i (T): Dzyaloshinskii-Moriya vector per slot (D_ji = -D_ij), or an
  array with 0 rows when the film has no such term;
* kt (n,) 2 K_i / mu_i (T), axis (n, 3) unit axes;
* bs (n, 3) per-site Zeeman field (T) added to the uniform B (zeros when there is none);
* occ (n,) uint8, 0 on vacancies; rel (n,) mu_i / mu_ref.

Field of an occupied site (T), without the dipolar field:

    h_i = sum_k [jt_ik S_k + dm_ik x S_k] + kt_i (S_i.n_i) n_i + B + bs_i

The pair part f_i = sum_k [jt_ik S_k + dm_ik x S_k] + B + bs_i does not depend on S_i, so the
energy change of a single-site move is -(S' - S).f_i - (kt_i/2)[(S'.n_i)^2 - (S.n_i)^2]
(units mu_i T).
"""

import numba as nb

__all__ = ["site_field", "site_pair_field", "site_zeeman", "site_exchange_field", "site_totals",
           "site_field_all"]

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
def site_pair_field(s, q, nbr, jt, dm):
    """Exchange and DMI field of site q (T): sum_k [jt_qk S_k + dm_qk x S_k]."""
    hx, hy, hz = site_exchange_field(s, q, nbr, jt)
    if dm.shape[0] > 0:
        for k in range(nbr.shape[1]):
            t = nbr[q, k]
            if t >= 0:
                dx = dm[q, k, 0]
                dy = dm[q, k, 1]
                dz = dm[q, k, 2]
                hx += dy * s[t, 2] - dz * s[t, 1]
                hy += dz * s[t, 0] - dx * s[t, 2]
                hz += dx * s[t, 1] - dy * s[t, 0]
    return hx, hy, hz


@nb.njit(inline="always", **_OPT)
def site_zeeman(q, bs, bx, by, bz):
    """Zeeman field of site q (T): the uniform B plus the per-site map (zeros without a map:
    B + 0.0 is B exactly; a branch here made the LLG kernel several times slower)."""
    return bx + bs[q, 0], by + bs[q, 1], bz + bs[q, 2]


@nb.njit(inline="always", **_OPT)
def site_field(s, q, nbr, jt, dm, kt, axis, bs, bx, by, bz):
    """Effective field (T) of occupied site q, without thermal and dipolar field."""
    hx, hy, hz = site_pair_field(s, q, nbr, jt, dm)
    ax = axis[q, 0]
    ay = axis[q, 1]
    az = axis[q, 2]
    sn = kt[q] * (s[q, 0] * ax + s[q, 1] * ay + s[q, 2] * az)
    zx, zy, zz = site_zeeman(q, bs, bx, by, bz)
    return hx + sn * ax + zx, hy + sn * ay + zy, hz + sn * az + zz


@nb.njit(parallel=True, **_OPT)
def site_field_all(s, nbr, jt, dm, kt, axis, occ, b, bs, out):
    """Effective field (T) of every site into out (n, 3); zero on vacancies."""
    for q in nb.prange(s.shape[0]):
        if occ[q]:
            hx, hy, hz = site_field(s, q, nbr, jt, dm, kt, axis, bs, b[0], b[1], b[2])
        else:
            hx = 0.0
            hy = 0.0
            hz = 0.0
        out[q, 0] = hx
        out[q, 1] = hy
        out[q, 2] = hz


@nb.njit(**_OPT)
def site_totals(s, nbr, jt, dm, kt, axis, occ, rel, b, bs):
    """(mx, my, mz, pair, anisotropy, zeeman): sum of S over occupied sites and the energy sums
    in units of mu_ref * T (multiply by mu_ref in J/T for joules).

    pair = -(1/2) sum_i rel_i S_i.sum_k (jt_ik S_k + dm_ik x S_k): exchange and DMI with each
    bond once; anisotropy = -sum_i rel_i (kt_i/2)(S_i.n_i)^2; zeeman = -sum_i rel_i
    (B + bs_i).S_i. Serial, so the sum order is fixed.
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
        hx, hy, hz = site_pair_field(s, q, nbr, jt, dm)
        zx, zy, zz = site_zeeman(q, bs, b[0], b[1], b[2])
        r = rel[q]
        e_ex += r * (sx * hx + sy * hy + sz * hz)
        sn = sx * axis[q, 0] + sy * axis[q, 1] + sz * axis[q, 2]
        e_an += r * kt[q] * sn * sn
        e_ze += r * (sx * zx + sy * zy + sz * zz)
    return mx, my, mz, -0.5 * e_ex, -0.5 * e_an, -e_ze
