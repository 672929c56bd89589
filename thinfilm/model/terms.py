"""Energy terms of a film and the immutable set they compose into (what both engines read).

A term is a small object with one interface, on spins of shape (ny, nx, 3) (float64, zero on
vacancies; a site's flat index is q = i * nx + j):

=============================  ==========================================================
``signature``                  (kind, variant), e.g. ("exchange", "uniform") or
                               ("exchange", "per-bond")
``energy(spins)``              the term's energy (J)
``add_field(spins, out)``      adds h_i = -dE/dS_i (J per unit spin) into out (ny, nx, 3);
                               the field in tesla is h_i / mu_i
``delta_energy(spins, q, s)``  exact E(S_q -> s) - E (J): not derived from the field, which
                               would be wrong for terms quadratic in S_q (anisotropy, the
                               dipolar self term)
``pack(p)``                    adds the term into the packed arrays ``p`` (:class:`Packed`,
                               joules) that the generic kernels read; a non-local term
                               returns False and the drivers evaluate its field themselves
=============================  ==========================================================

Terms: :class:`Exchange` (uniform or per bond), :class:`UniaxialAnisotropy` (uniform or
constant and axis per site), :class:`Zeeman` (uniform or per site), :class:`Vacancies`,
:class:`DMI` (interfacial Dzyaloshinskii-Moriya, uniform or per bond) and :class:`Dipolar` (point
dipoles or prism cells, open or periodic). Pair terms keep a full neighbour list (both slots of
every bond), so their energy carries 1/2 and their field and single-move change do not.

:class:`TermSet` is built once: terms of one kind are merged (couplings added), the packed
form is made, and :meth:`TermSet.uniform_model` says whether the fused kernels of a perfect
film apply (the drivers then take them by themselves).

Adding a term: write a class here with the five members above (its numpy energy, field and
move change are the reference the kernels are tested against), and make ``pack`` write it
into the packed form: a 3-vector per bond slot (antisymmetric pair coupling, as :class:`DMI`),
a scalar per slot (symmetric), an on-site axis and constant, or a field per site. A term that
fits none of these (non-local) gets its own field evaluation in the drivers, as the dipolar one.
"""

from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from thinfilm.model.lattice import Lattice
from thinfilm.model.neighbours import OFFSETS
from thinfilm.model.site_parameters import bond_slots, site_classes

__all__ = ["Exchange", "UniaxialAnisotropy", "Zeeman", "Vacancies", "DMI", "Dipolar",
           "TermSet", "Packed", "bond_directions", "film_terms"]

SQ3 = np.sqrt(3.0)


def _site_xy(shape, i, j):
    """(x, y) in units of a of index (i, j) (any integers: the grid continued past its edges)."""
    if shape == "square":
        return j * 1.0, i * 1.0
    if shape == "triangular":
        return j + 0.5 * (i % 2), i * SQ3 / 2
    return j * SQ3 / 2, 1.5 * i + np.where((i + j) % 2 == 0, 0.25, -0.25)


def bond_directions(lattice):
    """Unit vector r_ij / |r_ij| (in the plane, z = 0) of every (site, slot), (n, z, 3); zero
    where there is no bond. Periodic bonds point to the nearest image."""
    nbr = np.asarray(lattice.neighbours)
    n, z = nbr.shape
    i, j = np.divmod(np.arange(n), lattice.nx)
    cls = site_classes(lattice).ravel()
    out = np.zeros((n, z, 3))
    x0, y0 = _site_xy(lattice.shape, i, j)
    for k in range(z):
        di = OFFSETS[lattice.code, cls, k, 0]
        dj = OFFSETS[lattice.code, cls, k, 1]
        x1, y1 = _site_xy(lattice.shape, i + di, j + dj)
        dx, dy = x1 - x0, y1 - y0
        norm = np.hypot(dx, dy)
        ok = nbr[:, k] >= 0
        out[ok, k, 0] = (dx / norm)[ok]
        out[ok, k, 1] = (dy / norm)[ok]
    return out


def _slots(lattice, values, name):
    """Per-slot array (n, z) from a scalar or a (ny, nx, z) array; zero where there is no bond."""
    nbr = np.asarray(lattice.neighbours)
    v = np.asarray(values, dtype=np.float64)
    if v.ndim == 0:  # the scalar is kept as .value by the term
        return np.where(nbr >= 0, float(v), 0.0), "uniform"
    v = v.reshape(nbr.shape)
    _, rev, _ = bond_slots(lattice)
    ok = nbr >= 0
    if np.any(v[~ok] != 0) or not np.array_equal(v[ok], v[nbr[ok], rev[ok]]):
        raise ValueError(f"{name} must be zero in slots without a bond and equal on both slots "
                         "of every bond")
    return v, "per-bond"


def _per_site(lattice, values, tail=()):
    v = np.asarray(values, dtype=np.float64)
    n = lattice.n_sites
    if v.shape == tail:
        return np.broadcast_to(v, (n, *tail)).copy(), "uniform"
    return v.reshape((n, *tail)).copy(), "per-site"


def _flat(spins):
    return np.asarray(spins, dtype=np.float64).reshape(-1, 3)


@dataclass
class Packed:
    """The generic form in joules, flat: jj (n, z), dd (n, z, 3), kk (n,), axis (n, 3),
    b_uniform (3,) (T), bs (n, 3) (T)."""

    jj: np.ndarray
    dd: np.ndarray
    kk: np.ndarray
    axis: np.ndarray
    b_uniform: np.ndarray
    bs: np.ndarray
    has_dm: bool = False
    has_bs: bool = False
    axis_set: bool = False


# ---------------------------------------------------------------------------------------- terms
class _PairTerm:
    """Bilinear pair term on the full neighbour list: E = -(1/2) sum_i S_i.h_i, and the field
    h_q does not depend on S_q, so a single move changes E by -(S' - S).h_q."""

    def _site_field(self, s, q):  # h_q (J) from the flat spins
        raise NotImplementedError

    def energy(self, spins):
        h = np.zeros_like(_flat(spins))
        self.add_field(spins, h)
        return -0.5 * float(np.sum(_flat(spins) * h))

    def delta_energy(self, spins, q, s_new):
        s = _flat(spins)
        return -float(np.dot(np.asarray(s_new) - s[q], self._site_field(s, q)))

    def merged(self, other):
        """One term of the kind with the couplings added (uniform stays uniform)."""
        lat = self.lattice
        if self.value is not None and other.value is not None:
            return type(self)(lat, self.value + other.value)
        return type(self)(lat, (self.slots + other.slots).reshape(lat.ny, lat.nx, -1))


class Exchange(_PairTerm):
    """E = -sum_<ij> J_ij S_i.S_j (each bond once). ``exchange_J``: a scalar J per bond (J), or
    an (ny, nx, z) array per neighbour slot (equal on the two slots of a bond)."""

    def __init__(self, lattice, exchange_J):
        self.lattice = lattice
        self.jj, variant = _slots(lattice, exchange_J, "exchange_J")
        self.slots = self.jj
        self.value = float(exchange_J) if variant == "uniform" else None
        self.signature = ("exchange", variant)

    def add_field(self, spins, out):
        s = _flat(spins)
        nbr = np.asarray(self.lattice.neighbours)
        h = np.einsum("qk,qkc->qc", self.jj, s[np.maximum(nbr, 0)])
        out.reshape(-1, 3)[...] += h

    def _site_field(self, s, q):
        nbr = self.lattice.neighbours[q]
        ok = nbr >= 0
        return self.jj[q, ok] @ s[nbr[ok]]


    def pack(self, p):
        p.jj += self.jj
        return True


class DMI(_PairTerm):
    """Interfacial Dzyaloshinskii-Moriya interaction, E = sum_<ij> D_ij.(S_i x S_j) with
    D_ij = d_ij (z x r_ij) / |r_ij| (each bond once; D_ji = -D_ij).

    ``dmi_J``: d per bond (J), a scalar or an (ny, nx, z) per-slot array (equal on both slots).
    With d > 0 the energy favours S_i x S_j along -(z x r_ij): walls and spirals of one sense
    (see :func:`thinfilm.analysis.chirality.wall_chirality`). Continuum density
    D (J/m^2) <-> d: :func:`thinfilm.input.continuum.dmi_factor`.
    """

    def __init__(self, lattice, dmi_J):
        self.lattice = lattice
        self.d, variant = _slots(lattice, dmi_J, "dmi_J")
        self.slots = self.d
        self.value = float(dmi_J) if variant == "uniform" else None
        self.signature = ("dmi", variant)
        r = bond_directions(lattice)
        zxr = np.stack([-r[..., 1], r[..., 0], np.zeros_like(r[..., 0])], axis=-1)
        self.vectors = self.d[..., None] * zxr  # D_ij per slot (n, z, 3), J

    def add_field(self, spins, out):
        s = _flat(spins)
        nbr = np.asarray(self.lattice.neighbours)
        sn = s[np.maximum(nbr, 0)]
        out.reshape(-1, 3)[...] += np.cross(self.vectors, sn).sum(axis=1)

    def _site_field(self, s, q):
        nbr = self.lattice.neighbours[q]
        ok = nbr >= 0
        return np.cross(self.vectors[q, ok], s[nbr[ok]]).sum(axis=0)


    def pack(self, p):
        p.dd += self.vectors
        p.has_dm = True
        return True


class UniaxialAnisotropy:
    """E = -sum_i K_i (S_i.n_i)^2. ``anisotropy_J``: K (J) scalar or (ny, nx); ``axis``: a unit
    3-vector or (ny, nx, 3) unit axes."""

    def __init__(self, lattice, anisotropy_J, axis=(0.0, 0.0, 1.0)):
        self.lattice = lattice
        self.k, v1 = _per_site(lattice, anisotropy_J)
        ax, v2 = _per_site(lattice, axis, (3,))
        norm = np.linalg.norm(ax, axis=1)
        if not np.all(norm > 0):
            raise ValueError("anisotropy axes must be non-zero 3-vectors")
        self.axis = ax / norm[:, None]
        self.signature = ("anisotropy", "per-site" if "per-site" in (v1, v2) else "uniform")

    def add_field(self, spins, out):
        s = _flat(spins)
        sn = np.einsum("qc,qc->q", s, self.axis)
        out.reshape(-1, 3)[...] += (2 * self.k * sn)[:, None] * self.axis

    def energy(self, spins):
        sn = np.einsum("qc,qc->q", _flat(spins), self.axis)
        return -float(np.sum(self.k * sn * sn))

    def delta_energy(self, spins, q, s_new):
        n = self.axis[q]
        return -float(self.k[q] * (np.dot(s_new, n) ** 2 - np.dot(_flat(spins)[q], n) ** 2))

    def merged(self, other):
        if not np.allclose(self.axis, other.axis, atol=1e-12):
            raise ValueError("two uniaxial anisotropies with different axes at one site cannot "
                             "be packed into one uniaxial term; give one anisotropy per site")
        lat = self.lattice
        per = "per-site" in (self.signature[1], other.signature[1])
        k = self.k + other.k
        return UniaxialAnisotropy(lat, k.reshape(lat.ny, lat.nx) if per else k[0],
                                  self.axis.reshape(lat.ny, lat.nx, 3) if per else self.axis[0])

    def pack(self, p):
        p.kk += self.k
        p.axis[...] = self.axis
        p.axis_set = True
        return True


class Zeeman:
    """E = -sum_i mu_i (B + b_i).S_i: a uniform field B (T, 3-vector) and an optional per-site
    map b_i (T, (ny, nx, 3)); ``moment_J_per_T`` mu_i, scalar or (ny, nx) (0 on vacancies).
    The drivers may replace B (field ramps); the map stays."""

    def __init__(self, lattice, field_T, moment_J_per_T, map_T=None):
        self.lattice = lattice
        self.uniform_T = np.asarray(field_T, dtype=np.float64).reshape(3).copy()
        self.map_T = None if map_T is None else np.asarray(map_T, dtype=np.float64).reshape(
            lattice.n_sites, 3).copy()
        self.mu, _ = _per_site(lattice, moment_J_per_T)
        self.b = self.uniform_T[None, :] + (0.0 if self.map_T is None else self.map_T)
        self.signature = ("zeeman", "uniform" if self.map_T is None else "per-site")

    def add_field(self, spins, out):
        out.reshape(-1, 3)[...] += self.mu[:, None] * self.b

    def energy(self, spins):
        return -float(np.sum(self.mu[:, None] * self.b * _flat(spins)))

    def delta_energy(self, spins, q, s_new):
        return -float(self.mu[q] * np.dot(self.b[q], np.asarray(s_new) - _flat(spins)[q]))

    def merged(self, other):
        lat = self.lattice
        maps = [m for m in (self.map_T, other.map_T) if m is not None]
        return Zeeman(lat, self.uniform_T + other.uniform_T, self.mu.reshape(lat.ny, lat.nx),
                      None if not maps else sum(maps).reshape(lat.ny, lat.nx, 3))

    def with_uniform(self, field_T):
        lat = self.lattice
        return Zeeman(lat, field_T, self.mu.reshape(lat.ny, lat.nx),
                      None if self.map_T is None else self.map_T.reshape(lat.ny, lat.nx, 3))

    def pack(self, p):
        p.b_uniform += self.uniform_T
        if self.map_T is not None:
            p.bs += self.map_T
            p.has_bs = True
        return True


class Vacancies:
    """Non-magnetic sites (S = 0, no moment, no bonds). ``occupied``: (ny, nx) bool. Carries no
    energy itself; the set removes the vacancies' moments and bonds from every other term."""

    signature = ("vacancies", "per-site")

    def __init__(self, lattice, occupied):
        self.lattice = lattice
        self.occupied = np.asarray(occupied, dtype=bool).reshape(lattice.ny, lattice.nx)

    def add_field(self, spins, out):
        pass

    def energy(self, spins):
        return 0.0

    def delta_energy(self, spins, q, s_new):
        return 0.0

    def merged(self, other):
        return Vacancies(self.lattice, self.occupied & other.occupied)

    def pack(self, p):
        return True


class Dipolar:
    """Dipole-dipole energy of the site moments mu_i S_i, E = -(1/2) sum_i mu_i S_i.B_i, with the
    field B of :class:`thinfilm.engines.dipolar.DipolarField` (point dipoles, or prism cells of
    ``thickness_nm``; open or periodic edges as the lattice) applied to (mu_j / mu_ref) S_j.

    Non-local: ``pack`` returns False; the drivers add :meth:`field_T` in each LLG stage, and the
    Monte Carlo engine keeps the field up to date after every accepted move
    (:mod:`thinfilm.engines.dipolar_mc`).
    """

    def __init__(self, lattice, moment_J_per_T, moment_ref_J_per_T, *, thickness_nm=None,
                 precision="double"):
        self.lattice = lattice
        self.mu, _ = _per_site(lattice, moment_J_per_T)
        self.moment_ref = float(moment_ref_J_per_T)
        self.rel = self.mu / self.moment_ref
        self.thickness_nm = thickness_nm
        self.precision = precision
        self.signature = ("dipolar", "prism" if thickness_nm is not None else "point")
        self._self = {}

    @cached_property
    def dipolar_field(self):
        from thinfilm.engines.dipolar import DipolarField

        return DipolarField(self.lattice, self.moment_ref, precision=self.precision,
                            thickness_nm=self.thickness_nm)

    def weighted(self, spins):
        """(mu_i / mu_ref) S_i, (ny, nx, 3): what the FFT convolution reads."""
        lat = self.lattice
        return (_flat(spins) * self.rel[:, None]).reshape(lat.ny, lat.nx, 3)

    def field_T(self, spins, out=None):
        """Dipolar field B_i (T), (ny, nx, 3)."""
        return self.dipolar_field.field(self.weighted(spins), out)

    def add_field(self, spins, out):
        out.reshape(-1, 3)[...] += self.mu[:, None] * self.field_T(spins).reshape(-1, 3)

    def energy(self, spins):
        b = self.field_T(spins).reshape(-1, 3)
        return -0.5 * float(np.sum(self.mu[:, None] * _flat(spins) * b))

    def self_tensor_T(self, q):
        """W_qq (3, 3), T per unit (mu_ref) spin: the field at q of its own moment (prism self
        demagnetisation and, periodic, its own images)."""
        lat = self.lattice
        p, qq = lat.period
        i, j = divmod(int(q), lat.nx)
        key = (i % p, j % qq)
        if key not in self._self:
            w = np.empty((3, 3))
            for c in range(3):
                s = np.zeros((lat.ny, lat.nx, 3))
                s[i, j, c] = 1.0
                w[:, c] = self.dipolar_field.field(s)[i, j]
            self._self[key] = w
        return self._self[key]

    def delta_energy(self, spins, q, s_new):
        s = _flat(spins)
        ds = np.asarray(s_new) - s[q]
        b = self.field_T(spins).reshape(-1, 3)[q]
        mu, rel = self.mu[q], self.rel[q]
        return float(-mu * ds @ b - 0.5 * mu * rel * ds @ self.self_tensor_T(q) @ ds)

    def merged(self, other):
        raise ValueError("a film has one dipolar term")

    def pack(self, p):
        return False


# ---------------------------------------------------------------------------------------- set
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
        bs = np.ascontiguousarray(p.bs) if p.has_bs else np.zeros((0, 3))
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


def film_terms(model, site_params=None, *, dipolar_precision="double"):
    """The :class:`TermSet` of a uniform Model, or of a disorder realisation (SiteParameters)
    of it. The model's DMI (``model.dmi_J``) is scaled per bond like the exchange with
    disorder (d_ij = d J_ij / J: a weakened or missing bond loses its DMI in proportion), and
    the model's dipolar field acts on the per-site moments."""
    from thinfilm.model.parameters import Model
    from thinfilm.model.site_parameters import SiteParameters

    if isinstance(model, TermSet):
        return model
    if isinstance(model, SiteParameters) and site_params is None:
        model, site_params = None, model
    lat = model.lattice if model is not None else site_params.lattice
    if model is not None and not isinstance(model, Model):
        raise TypeError("film_terms needs a Model (call build_model(scenario) first)")
    dmi = 0.0 if model is None else float(getattr(model, "dmi_J", 0.0))
    if site_params is None:
        mu = model.moment_J_per_T
        terms = [Exchange(lat, model.exchange_J),
                 UniaxialAnisotropy(lat, model.anisotropy_J, model.axis),
                 Zeeman(lat, model.field_T, mu)]
        if dmi:
            terms.append(DMI(lat, dmi))
        ref, mean_axis, grains = mu, model.axis, None
    else:
        p = site_params
        mu = p.moment_J_per_T
        terms = [Exchange(lat, p.exchange_J), UniaxialAnisotropy(lat, p.anisotropy_J, p.axis),
                 Zeeman(lat, p.field_T, mu)]
        if not p.occupied.all():
            terms.append(Vacancies(lat, p.occupied))
        if dmi:
            terms.append(DMI(lat, dmi * p.exchange_J / model.exchange_J))
        ref, mean_axis, grains = p.moment_ref_J_per_T, p.mean_axis, p.grain_id
    if model is not None and model.dipolar:
        terms.append(Dipolar(lat, mu, ref, thickness_nm=model.dipolar_thickness_nm,
                             precision=dipolar_precision))
    return TermSet(lat, mu, tuple(terms), ref, mean_axis, grains)
