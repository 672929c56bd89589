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
from thinfilm.engines._kernels.wolff import N_STATS
from thinfilm.engines.film import masked_spins
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model
from thinfilm.model.site_parameters import SiteParameters

__all__ = ["GenericSweeps", "dipolar_responses", "init_generic", "check_sampler_args"]


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


def init_generic(mc, model, terms, site_params, temperature_K, reflection, init, moves):
    """Set up a MonteCarlo ``mc`` on the generic sweeps of ``terms`` (any film that is not a
    perfect film without DMI and dipolar field)."""
    moves = (moves,) if isinstance(moves, str) else tuple(moves)
    if "cluster" in moves:
        raise ValueError(
            "cluster moves need a perfect film without DMI or dipolar field: the embedded-"
            "cluster reflection must be a symmetry of every on-site and pair energy, and "
            "per-site anisotropy axes, the DMI (odd under the reflection of both spins) and "
            "the long-range dipolar coupling break it; use Metropolis moves")
    mc.model = model if isinstance(model, Model) else None
    mc.params = site_params if site_params is not None else (
        model if isinstance(model, SiteParameters) else None)
    mc.terms = terms
    mc.path = "generic" if terms.dipolar is None else "generic-dipolar"
    if terms.dipolar is not None:
        mc.parallel = False  # the exact dipolar scheme is sequential
    an = terms.term("anisotropy")
    k_mean = float(an.k[terms.occupied.ravel()].mean()) if an is not None else 0.0
    mc._n_sites = terms.n_occupied
    mc._mu = terms.moment_ref_J_per_T
    mc._easy_axis = k_mean > 0
    mc._axis = np.ascontiguousarray(terms.mean_axis, dtype=np.float64)
    mc.reflection = mc._easy_axis if reflection == "auto" else bool(reflection)
    mc.moves = ("metropolis",)
    mc._cl = None
    mc._cl_stats = np.zeros(N_STATS)
    mc.last_cluster_stats = None
    mc.temperature_K = temperature_K
    mc._g = GenericSweeps(terms, mc.parallel)
    mc._g.set_spins(mc._initial(init))


def check_sampler_args(lat, stream, over_relaxation):
    """The argument rules every Monte Carlo sampler shares (ValueError otherwise)."""
    if lat.periodic and (lat.nx < 2 or lat.ny < 2):
        raise ValueError("periodic Monte Carlo needs at least 2 rows and 2 columns "
                         "(a single periodic row or column bonds a site to itself)")
    if int(stream) < 1:
        raise ValueError("Monte Carlo uses random streams >= 1 (0 is the LLG noise)")
    if int(over_relaxation) < 0:
        raise ValueError("over_relaxation must be >= 0")
