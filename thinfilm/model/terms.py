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
:class:`DMI` (interfacial Dzyaloshinskii-Moriya, uniform or per bond) here, and
:class:`thinfilm.engines.dipolar_term.Dipolar` (point dipoles or prism cells, open or periodic;
it needs the FFT field of the engines stage). Pair terms keep a full neighbour list (both slots of
every bond), so their energy carries 1/2 and their field and single-move change do not.

:class:`thinfilm.model.term_set.TermSet` is built once: terms of one kind are merged
(couplings added), the packed form is made, and ``TermSet.uniform_model`` says whether the
fused kernels of a perfect film apply (the drivers then take them by themselves).

Adding a term: write a class here with the five members above (its numpy energy, field and
move change are the reference the kernels are tested against), and make ``pack`` write it
into the packed form: a 3-vector per bond slot (antisymmetric pair coupling, as :class:`DMI`),
a scalar per slot (symmetric), an on-site axis and constant, or a field per site. A term that
fits none of these (non-local) gets its own field evaluation in the drivers, as the dipolar one.
"""

from dataclasses import dataclass

import numpy as np

from thinfilm.model.neighbours import OFFSETS
from thinfilm.model.site_parameters import bond_slots, site_classes

__all__ = ["Exchange", "UniaxialAnisotropy", "Zeeman", "Vacancies", "DMI", "Packed",
           "bond_directions"]

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
