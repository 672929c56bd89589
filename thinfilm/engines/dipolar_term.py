"""The dipolar energy term (:mod:`thinfilm.model.terms` interface) on the FFT field of
:class:`thinfilm.engines.dipolar.DipolarField`, and the TermSet of a scenario's film."""

from functools import cached_property

import numpy as np

from thinfilm.model.term_set import TermSet
from thinfilm.model.terms import (
    DMI,
    Exchange,
    UniaxialAnisotropy,
    Vacancies,
    Zeeman,
    _flat,
    _per_site,
)

__all__ = ["Dipolar", "film_terms"]


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
        from thinfilm.engines.dipolar import DipolarField  # FFT libraries load on first use

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
