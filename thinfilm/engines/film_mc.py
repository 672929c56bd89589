"""The generic Monte Carlo sweeps of :class:`thinfilm.engines.montecarlo.MonteCarlo`: any film
given as terms (:mod:`thinfilm.model.terms`), on flat site arrays.

Local terms only: the row-coloured Metropolis sweeps of
:mod:`thinfilm.engines._kernels.site_metropolis` (rows of one class in parallel). With a dipolar
term: the exact sequential scheme of :mod:`thinfilm.engines._kernels.site_metropolis_dipolar`
(one site at a time against the current dipolar field, the field of every site updated after
each accepted move through real-space response kernels; O(N^2) per sweep, serial). The field is
recomputed by FFT at the start of every call, so round-off of the updates does not build up
across calls.
"""

import numpy as np

from thinfilm.engines._kernels.site_metropolis import row_classes, site_mc_run
from thinfilm.engines._kernels.site_metropolis_dipolar import dipolar_mc_run
from thinfilm.engines.film import masked_spins
from thinfilm.model.lattice import Lattice

__all__ = ["GenericSweeps", "dipolar_responses"]


def dipolar_responses(dipolar):
    """Real-space response kernels of a :class:`thinfilm.model.terms.Dipolar` term.

    Returns (resp, ci, cj): resp (n_sub, Ry, Rx, 3, 3) the field (T, per unit spin of moment
    mu_ref) of a unit moment of sublattice ``sub`` (Bravais cell position (a, b), sub = a q + b)
    placed at (ci[sub], cj[sub]); the field at p of a source at q is resp[sub_q, pi - qi + ci,
    pj - qj + cj] (indices taken modulo the lattice with periodic edges). Periodic edges use the
    film itself; open edges a free film large enough to hold every offset.
    """
    from thinfilm.engines.dipolar import DipolarField

    lat = dipolar.lattice
    p, q = lat.period
    if lat.periodic:
        grid, oy, ox = lat, 0, 0
    else:
        oy = -(-lat.ny // p) * p
        ox = -(-lat.nx // q) * q
        grid = Lattice(lat.shape, ox + q + lat.nx, oy + p + lat.ny, lat.spacing_nm, False)
    field = DipolarField(grid, dipolar.moment_ref, precision="double",
                         thickness_nm=dipolar.thickness_nm)
    resp = np.zeros((p * q, grid.ny, grid.nx, 3, 3))
    ci = np.zeros(p * q, dtype=np.int64)
    cj = np.zeros(p * q, dtype=np.int64)
    for a in range(p):
        for b in range(q):
            sub = a * q + b
            ci[sub], cj[sub] = oy + a, ox + b
            for c in range(3):
                s = np.zeros((grid.ny, grid.nx, 3))
                s[oy + a, ox + b, c] = 1.0
                resp[sub, :, :, :, c] = field.field(s)
    return resp, ci, cj


class GenericSweeps:
    """Spins (flat, zero on vacancies) and the generic sweeps of one TermSet."""

    def __init__(self, terms, parallel):
        self.terms = terms
        lat = terms.lattice
        self.parallel = bool(parallel)
        self._order, self._bounds = row_classes(lat.ny, lat.periodic)
        self.counts = np.zeros((lat.ny, 3), dtype=np.int64)
        self.spins = np.zeros((lat.ny, lat.nx, 3))
        self._dip = None
        if terms.dipolar is not None:
            self._dip = dipolar_responses(terms.dipolar)
            self._hd = np.zeros((lat.n_sites, 3))

    def set_spins(self, value):
        self.spins = masked_spins(self.terms, value)

    def series(self, n_samples, sample_every, beta, sigma, seed, stream, sweep0, reflect, n_or):
        """n_samples x (sample_every sweeps + totals); returns ((n, 4) totals, new sweep)."""
        ts = self.terms
        nbr, jt, dm, kt, axis, bs, occ = ts.kernel_arrays
        out = np.empty((max(n_samples, 1), 4))
        self.counts[:] = 0
        s = self.spins.reshape(-1, 3)
        b = np.ascontiguousarray(ts.field_T)
        if self._dip is None:
            sweep = site_mc_run(s, ts.lattice.nx, self._order, self._bounds, nbr, jt, dm, kt,
                                axis, bs, occ, ts.moment_rel, b, beta, sigma, seed, stream,
                                sweep0, n_samples, sample_every, reflect, n_or, self.counts,
                                out, self.parallel)
        else:
            resp, ci, cj = self._dip
            self._hd[...] = ts.dipolar.field_T(self.spins).reshape(-1, 3)
            lat = ts.lattice
            sweep = dipolar_mc_run(s, lat.nx, nbr, jt, dm, kt, axis, bs, occ, ts.moment_rel, b,
                                   beta, sigma, seed, stream, sweep0, n_samples, sample_every,
                                   reflect, n_or, self.counts, out, self._hd, resp, ci, cj,
                                   *lat.period, lat.periodic)
        return out[:n_samples], sweep

    def totals(self):
        """(1, 4) totals of the current spins (energy in mu_ref T, dipolar included)."""
        from thinfilm.engines.film import film_totals

        m, e = film_totals(self.terms, self.spins)
        return np.array([[m[0], m[1], m[2], e / self.terms.moment_ref_J_per_T]])
