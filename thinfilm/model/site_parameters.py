"""Per-site parameters of an imperfect film: J per bond; K, axis, moment per site; vacancies.

Energy (each bond counted once; a vacancy carries no spin, S = 0):

    E = -sum_<ij> J_ij S_i.S_j - sum_i K_i (S_i.n_i)^2 - sum_i mu_i B.S_i

Effective field of an occupied site (tesla):

    B_eff,i = (1/mu_i) [sum_j J_ij S_j + 2 K_i (S_i.n_i) n_i] + B

Bonds are stored per site and neighbour slot, (ny, nx, z), in the slot order of
:mod:`thinfilm.model.neighbours`; the two slots of one bond (one at each end) hold the same J.
:func:`bond_slots` pairs them.
"""

from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from thinfilm.model.lattice import Lattice
from thinfilm.model.neighbours import CLASS_RULE, COUNT, OFFSETS
from thinfilm.model.parameters import Model

__all__ = ["SiteParameters", "uniform_site_parameters", "bond_slots", "site_classes"]


def site_classes(lattice):
    """Parity class of every site, (ny, nx) int64 (see :mod:`thinfilm.model.neighbours`)."""
    i, j = np.meshgrid(np.arange(lattice.ny), np.arange(lattice.nx), indexing="ij")
    rule = CLASS_RULE[lattice.code]
    if rule == 0:
        return np.zeros_like(i)
    return i % 2 if rule == 1 else (i + j) % 2


def _reverse_table(code):
    """REV[c, k] = slot k' at the neighbour (class c') whose offset is minus that of slot k."""
    z = int(COUNT[code])
    rev = np.full((2, z), -1, dtype=np.int64)
    for c in range(2):
        for k in range(z):
            di, dj = OFFSETS[code, c, k]
            # the neighbour's class: the class rule applied to the offset (periodic grids keep
            # the parity because the shapes with classes need even periods)
            rule = CLASS_RULE[code]
            cn = c if rule == 0 else ((c + di) % 2 if rule == 1 else (c + di + dj) % 2)
            for kk in range(z):
                if OFFSETS[code, cn, kk, 0] == -di and OFFSETS[code, cn, kk, 1] == -dj:
                    rev[c, k] = kk
    return rev


def bond_slots(lattice):
    """Neighbour table, reverse slot and bond id of every (site, slot).

    Returns
    -------
    nbr : ndarray (n, z) int64
        Flat neighbour index (``lattice.neighbours``), -1 where there is no bond.
    rev : ndarray (n, z) int64
        Slot of the same bond at the neighbour (-1 where no bond).
    bond_id : ndarray (n, z) int64
        0 .. n_bonds - 1, equal on the two slots of one bond; -1 where no bond. Bonds are
        numbered in increasing order of min(site * z + slot) over their two slots.
    """
    nbr = np.asarray(lattice.neighbours)
    n, z = nbr.shape
    cls = site_classes(lattice).ravel()
    rev = _reverse_table(lattice.code)[cls]
    rev = np.where(nbr >= 0, rev, -1)
    here = np.arange(n * z).reshape(n, z)
    there = np.where(nbr >= 0, nbr * z + rev, -1)
    key = np.where(nbr >= 0, np.minimum(here, there), -1)
    uniq, inv = np.unique(key[nbr >= 0], return_inverse=True)
    bond_id = np.full((n, z), -1, dtype=np.int64)
    bond_id[nbr >= 0] = inv.ravel()
    return nbr, rev, bond_id


@dataclass(frozen=True)
class SiteParameters:
    """Per-site arrays of one disorder realisation (physical units); kernels read the reduced forms.

    Attributes
    ----------
    lattice : Lattice
    moment_ref_J_per_T : float
        Reference moment mu_ref (J/T): the Model's moment; beta and the noise scale use it.
    exchange_J : ndarray (ny, nx, z)
        J of the bond in each neighbour slot (J); 0 for no bond or a vacancy at either end.
    anisotropy_J : ndarray (ny, nx)
        K_i (J); 0 on vacancies.
    axis : ndarray (ny, nx, 3)
        Unit anisotropy axis n_i.
    moment_J_per_T : ndarray (ny, nx)
        mu_i (J/T); 0 on vacancies.
    occupied : ndarray (ny, nx) bool
        False on vacancies (non-magnetic sites).
    field_T : ndarray (3,)
        Uniform Zeeman field B (T).
    mean_axis : ndarray (3,)
        Axis along which the order parameter is measured (the Model's axis).
    grain_id : ndarray (ny, nx) int64 or None
        Grain of each site (grain realisations), else None.
    """

    lattice: Lattice
    moment_ref_J_per_T: float
    exchange_J: np.ndarray
    anisotropy_J: np.ndarray
    axis: np.ndarray
    moment_J_per_T: np.ndarray
    occupied: np.ndarray
    field_T: np.ndarray = field(default_factory=lambda: np.zeros(3))
    mean_axis: np.ndarray = field(default_factory=lambda: np.array([0.0, 0.0, 1.0]))
    grain_id: np.ndarray | None = None

    def __post_init__(self):
        lat = self.lattice
        ny, nx, z = lat.ny, lat.nx, lat.coordination
        shapes = {"exchange_J": (ny, nx, z), "anisotropy_J": (ny, nx), "axis": (ny, nx, 3),
                  "moment_J_per_T": (ny, nx), "occupied": (ny, nx)}
        for name, shp in shapes.items():
            a = np.ascontiguousarray(getattr(self, name),
                                     dtype=bool if name == "occupied" else np.float64)
            if a.shape != shp:
                raise ValueError(f"{name} must have shape {shp}; got {a.shape}")
            a.setflags(write=False)
            object.__setattr__(self, name, a)
        occ = self.occupied
        if not np.all(self.moment_J_per_T[occ] > 0):
            raise ValueError("every occupied site needs a positive moment")
        if np.any(self.moment_J_per_T[~occ] != 0) or np.any(self.anisotropy_J[~occ] != 0):
            raise ValueError("vacancies must carry zero moment and zero anisotropy")
        norm = np.linalg.norm(self.axis, axis=-1)
        if np.max(np.abs(norm - 1.0), initial=0.0) > 1e-12:
            raise ValueError("anisotropy axes must be unit vectors")
        nbr, rev, _ = bond_slots(lat)
        jf = self.exchange_J.reshape(-1, z)
        ok = nbr >= 0
        if np.any(jf[~ok] != 0):
            raise ValueError("exchange_J must be zero in slots without a bond")
        if not np.array_equal(jf[ok], jf[nbr[ok], rev[ok]]):
            raise ValueError("exchange_J must be equal on the two slots of every bond")
        dead = ~occ.ravel()
        if np.any(jf[dead] != 0) or np.any(jf[ok][dead[nbr[ok]]] != 0):
            raise ValueError("bonds to or from vacancies must have zero exchange")
        for name in ("field_T", "mean_axis"):
            a = np.array(getattr(self, name), dtype=np.float64).reshape(3)
            a.setflags(write=False)
            object.__setattr__(self, name, a)
        if not self.moment_ref_J_per_T > 0:
            raise ValueError("the reference moment must be positive")

    # ------------------------------------------------------------ counts
    @property
    def n_occupied(self):
        return int(self.occupied.sum())

    # ------------------------------------------------------------ reduced kernel arrays
    @cached_property
    def neighbours(self):
        """Flat neighbour table (n, z) int64, -1 for no bond (the lattice's)."""
        return np.asarray(self.lattice.neighbours)

    def _per_moment(self, x):
        mu = self.moment_J_per_T
        safe = np.where(self.occupied, mu, 1.0)
        return np.where(self.occupied[(...,) + (None,) * (x.ndim - 2)],
                        x / safe[(...,) + (None,) * (x.ndim - 2)], 0.0)

    @cached_property
    def exchange_T(self):
        """J_ij / mu_i per slot, (n, z) (T): the exchange field per neighbour spin."""
        z = self.lattice.coordination
        return np.ascontiguousarray(self._per_moment(self.exchange_J).reshape(-1, z))

    @cached_property
    def anisotropy_T(self):
        """2 K_i / mu_i, (n,) (T)."""
        return np.ascontiguousarray(self._per_moment(2.0 * self.anisotropy_J).ravel())

    @cached_property
    def axis_flat(self):
        return np.ascontiguousarray(self.axis.reshape(-1, 3))

    @cached_property
    def moment_rel(self):
        """mu_i / mu_ref, (n,); 0 on vacancies."""
        return np.ascontiguousarray((self.moment_J_per_T / self.moment_ref_J_per_T).ravel())

    @cached_property
    def noise_scale(self):
        """sqrt(mu_ref / mu_i), (n,): thermal-field std relative to a site of moment mu_ref; 0 on
        vacancies."""
        rel = self.moment_rel
        return np.where(rel > 0, 1.0 / np.sqrt(np.where(rel > 0, rel, 1.0)), 0.0)

    @cached_property
    def occupied_flat(self):
        return np.ascontiguousarray(self.occupied.ravel().astype(np.uint8))

    def kernel_args(self):
        """(nbr, exchange_T, anisotropy_T, axis, occupied) for the per-site kernels."""
        return (self.neighbours, self.exchange_T, self.anisotropy_T, self.axis_flat,
                self.occupied_flat)

    def with_field(self, field_T):
        """Copy with another Zeeman field (T)."""
        return SiteParameters(self.lattice, self.moment_ref_J_per_T, self.exchange_J,
                              self.anisotropy_J, self.axis, self.moment_J_per_T, self.occupied,
                              np.asarray(field_T, dtype=np.float64), self.mean_axis,
                              self.grain_id)

    def describe(self):
        """Summary for manifests: counts and means over occupied sites / bonds."""
        occ = self.occupied
        jb = self.exchange_J[self.exchange_J != 0]
        return {"n_occupied": self.n_occupied, "vacancy_fraction": float(1 - occ.mean()),
                "mean_exchange_J": float(jb.mean()) if jb.size else 0.0,
                "mean_anisotropy_J": float(self.anisotropy_J[occ].mean()) if occ.any() else 0.0,
                "mean_moment_J_per_T": float(self.moment_J_per_T[occ].mean()) if occ.any() else 0.0,
                "n_grains": None if self.grain_id is None else int(np.unique(self.grain_id).size)}


def uniform_site_parameters(model):
    """SiteParameters equal to a uniform Model (every array filled with the Model's values)."""
    if not isinstance(model, Model):
        raise TypeError("uniform_site_parameters needs a Model")
    lat = model.lattice
    ny, nx, z = lat.ny, lat.nx, lat.coordination
    nbr = np.asarray(lat.neighbours).reshape(ny, nx, z)
    return SiteParameters(
        lat, model.moment_J_per_T,
        np.where(nbr >= 0, model.exchange_J, 0.0),
        np.full((ny, nx), model.anisotropy_J),
        np.broadcast_to(model.axis, (ny, nx, 3)),
        np.full((ny, nx), model.moment_J_per_T),
        np.ones((ny, nx), dtype=bool), model.field_T, model.axis)
