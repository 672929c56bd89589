"""The immutable set of a film's energy terms (:mod:`thinfilm.model.terms`): merged by kind,
packed once into the generic form the kernels read, with the test for the fused fast path."""

from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from thinfilm.model.lattice import Lattice
from thinfilm.model.terms import Packed, Zeeman

__all__ = ["TermSet"]


@dataclass(frozen=True)
class TermSet:
    """An immutable film model: a lattice, its moments and a set of energy terms.

    Parameters
    ----------
    lattice : Lattice
    moment_J_per_T : float or ndarray (ny, nx)
        mu_i (J/T); 0 on vacancies (set by a :class:`Vacancies` term if not already).
    terms : sequence of terms
        Merged by kind at construction (one term per kind).
    moment_ref_J_per_T : float, optional
        Reference moment mu_ref (beta and the noise scale use it); default the largest mu_i.
    mean_axis : 3-vector, optional
        Axis of the order parameter (default the mean anisotropy axis, else z).
    grain_id : ndarray (ny, nx), optional
        Carried for the analysers.
    """

    lattice: Lattice
    moment_J_per_T: object
    terms: tuple
    moment_ref_J_per_T: float | None = None
    mean_axis: np.ndarray | None = None
    grain_id: np.ndarray | None = None
    _by_kind: dict = field(default_factory=dict, repr=False)

    def __post_init__(self):
        lat = self.lattice
        by = {}
        for t in self.terms:
            kind = t.signature[0]
            by[kind] = t if kind not in by else by[kind].merged(t)
        mu = np.broadcast_to(np.asarray(self.moment_J_per_T, dtype=np.float64),
                             (lat.ny, lat.nx)).copy()
        occ = by["vacancies"].occupied if "vacancies" in by else np.ones((lat.ny, lat.nx), bool)
        mu[~occ] = 0.0
        if not np.all(mu[occ] > 0):
            raise ValueError("every occupied site needs a positive moment")
        mu.setflags(write=False)
        occ = occ.copy()
        occ.setflags(write=False)
        ref = float(mu.max()) if self.moment_ref_J_per_T is None else float(
            self.moment_ref_J_per_T)
        object.__setattr__(self, "moment_J_per_T", mu)
        object.__setattr__(self, "moment_ref_J_per_T", ref)
        object.__setattr__(self, "terms", tuple(by.values()))
        object.__setattr__(self, "_by_kind", by)
        object.__setattr__(self, "occupied", occ)
        if self.mean_axis is None:
            a = by["anisotropy"].axis.mean(axis=0) if "anisotropy" in by else np.zeros(3)
            a = a if np.linalg.norm(a) > 0 else np.array([0.0, 0.0, 1.0])
        else:
            a = np.asarray(self.mean_axis, dtype=np.float64)
        object.__setattr__(self, "mean_axis", a / np.linalg.norm(a))
        if "vacancies" in by and not occ.all():
            for kind in ("exchange", "dmi"):
                if kind in by:
                    nbr = np.asarray(lat.neighbours)
                    dead = ~occ.ravel()
                    vals = by[kind].jj if kind == "exchange" else by[kind].d
                    bad = dead[:, None] | (dead[np.maximum(nbr, 0)] & (nbr >= 0))
                    if np.any(vals[bad] != 0):
                        raise ValueError(f"bonds to or from vacancies must have zero {kind}")

    # ------------------------------------------------------------------ description
    @property
    def signatures(self):
        """Sorted tuple of the (kind, variant) signatures of the merged terms."""
        return tuple(sorted(t.signature for t in self.terms))

    def term(self, kind):
        """The merged term of a kind ("exchange", "anisotropy", "zeeman", "dmi", "dipolar",
        "vacancies"), or None."""
        return self._by_kind.get(kind)

    @property
    def dipolar(self):
        return self._by_kind.get("dipolar")

    @property
    def n_occupied(self):
        return int(self.occupied.sum())

    @property
    def field_T(self):
        """The uniform Zeeman field (T) (zero if the film has none or only a map)."""
        return self.packed.b_uniform

    # ------------------------------------------------------------------ reference evaluation
    def _masked(self, spins):
        s = np.array(spins, dtype=np.float64).reshape(self.lattice.ny, self.lattice.nx, 3)
        s[~self.occupied] = 0.0
        return s

    def energy(self, spins):
        """Total energy (J), the sum of the terms' energies."""
        s = self._masked(spins)
        return float(sum(t.energy(s) for t in self.terms))

    def field_J(self, spins):
        """-dE/dS_i summed over the terms (J per unit spin), (ny, nx, 3)."""
        s = self._masked(spins)
        out = np.zeros_like(s)
        for t in self.terms:
            t.add_field(s, out)
        out[~self.occupied] = 0.0
        return out

    def delta_energy(self, spins, q, s_new):
        """Exact energy change (J) of setting spin q to s_new (sum over the terms)."""
        s = self._masked(spins)
        return float(sum(t.delta_energy(s, q, s_new) for t in self.terms))

    # ------------------------------------------------------------------ packed form
    @cached_property
    def packed(self):
        """The local terms in the generic form (:class:`Packed`, joules and tesla)."""
        lat = self.lattice
        n, z = lat.n_sites, lat.coordination
        p = Packed(np.zeros((n, z)), np.zeros((n, z, 3)), np.zeros(n),
                   np.tile([0.0, 0.0, 1.0], (n, 1)), np.zeros(3), np.zeros((n, 3)))
        for t in self.terms:
            t.pack(p)
        return p

    @cached_property
    def kernel_arrays(self):
        """(nbr, jt, dm, kt, axis, bs, occ): the packed form per moment (tesla) for the
        kernels of :mod:`thinfilm.engines._kernels.site_field`."""
        p = self.packed
        mu = self.moment_J_per_T.ravel()
        inv = np.where(mu > 0, 1.0 / np.where(mu > 0, mu, 1.0), 0.0)
        z = self.lattice.coordination
        jt = np.ascontiguousarray(p.jj * inv[:, None])
        dm = (np.ascontiguousarray(p.dd * inv[:, None, None]) if p.has_dm
              else np.zeros((0, z, 3)))
        kt = np.ascontiguousarray(2.0 * p.kk * inv)
        bs = np.ascontiguousarray(p.bs)  # zeros without a map: bx + 0.0 == bx exactly
        occ = np.ascontiguousarray(self.occupied.ravel().astype(np.uint8))
        nbr = np.ascontiguousarray(np.asarray(self.lattice.neighbours))
        return nbr, jt, dm, kt, np.ascontiguousarray(p.axis), bs, occ

    @cached_property
    def moment_rel(self):
        """mu_i / mu_ref, (n,); 0 on vacancies."""
        return np.ascontiguousarray(self.moment_J_per_T.ravel() / self.moment_ref_J_per_T)

    @cached_property
    def noise_scale(self):
        """sqrt(mu_ref / mu_i), (n,); 0 on vacancies."""
        rel = self.moment_rel
        return np.where(rel > 0, 1.0 / np.sqrt(np.where(rel > 0, rel, 1.0)), 0.0)

    def with_field(self, field_T):
        """Copy with another uniform Zeeman field (T) (a field map is kept)."""
        lat = self.lattice
        old = self.term("zeeman")
        new = (Zeeman(lat, field_T, self.moment_J_per_T) if old is None
               else old.with_uniform(field_T))
        terms = [t for t in self.terms if t.signature[0] != "zeeman"] + [new]
        return TermSet(lat, self.moment_J_per_T, tuple(terms), self.moment_ref_J_per_T,
                       self.mean_axis, self.grain_id)

    # ------------------------------------------------------------------ fast path
    def uniform_model(self):
        """The uniform :class:`thinfilm.model.parameters.Model` of this set when the fused
        kernels of a perfect film can run it (uniform exchange, anisotropy and Zeeman, optional
        dipolar, one moment, no vacancies, no other term), else None."""
        from thinfilm.model.parameters import Model

        allowed = {("exchange", "uniform"), ("anisotropy", "uniform"), ("zeeman", "uniform"),
                   ("dipolar", "point"), ("dipolar", "prism")}
        if not set(self.signatures) <= allowed or "exchange" not in self._by_kind:
            return None
        mu = self.moment_J_per_T
        if not self.occupied.all() or np.any(mu != mu.flat[0]):
            return None
        an = self.term("anisotropy")
        dip = self.dipolar
        return Model(self.lattice, float(mu.flat[0]), self.term("exchange").value,
                     0.0 if an is None else float(an.k[0]),
                     (0.0, 0.0, 1.0) if an is None else an.axis[0], self.field_T.copy(),
                     dip is not None, None if dip is None else dip.thickness_nm)
