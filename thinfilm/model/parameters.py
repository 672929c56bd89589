"""Energy terms -> an immutable Model of plain arrays and scalars the kernels read.

Energy (each nearest-neighbour bond counted once):

    E = -J sum_<ij> S_i.S_j - K sum_i (S_i.n)^2 - mu_s sum_i B.S_i
        [+ d sum_<ij> (z x r_ij).(S_i x S_j), with DMI]

Effective field (tesla): B_eff,i = -(1/mu_s) dE/dS_i = (J/mu_s) sum_j S_j + (2K/mu_s)(S_i.n) n + B.
"""

from dataclasses import dataclass, field

import numpy as np

from thinfilm.input.units import MEV_J
from thinfilm.model.lattice import Lattice

__all__ = ["Model", "build_model"]


@dataclass(frozen=True)
class Model:
    """Finalised spin model. Build it with :func:`build_model`.

    Attributes
    ----------
    lattice : Lattice
    moment_J_per_T : float
        Moment per site mu_s (J/T).
    exchange_J : float
        J per bond (J); E = -J S_i.S_j.
    anisotropy_J : float
        K per site (J); E = -K (S.n)^2, K > 0 easy axis, K < 0 easy plane.
    axis : ndarray, shape (3,)
        Unit anisotropy axis n.
    field_T : ndarray, shape (3,)
        Uniform Zeeman field B (T).
    dipolar : bool
        Dipole-dipole interaction between the site moments (stochastic LLG only; the field is
        :class:`thinfilm.engines.dipolar.DipolarField`).
    dipolar_thickness_nm : float or None
        With ``dipolar``: each site is the uniformly magnetised prism a x a x t of this
        thickness (square lattice only) instead of a point dipole; None: point dipoles.
    dmi_J : float
        Interfacial Dzyaloshinskii-Moriya constant d per bond (J): E = sum_<ij> D_ij.(S_i x S_j),
        D_ij = d (z x r_ij)/|r_ij| (:class:`thinfilm.model.terms.DMI`); 0: none.

    The model is also a set of energy terms: :func:`thinfilm.model.terms.film_terms`.
    """

    lattice: Lattice
    moment_J_per_T: float
    exchange_J: float
    anisotropy_J: float
    axis: np.ndarray = field(default_factory=lambda: np.array([0.0, 0.0, 1.0]))
    field_T: np.ndarray = field(default_factory=lambda: np.zeros(3))
    dipolar: bool = False
    dipolar_thickness_nm: float | None = None
    dmi_J: float = 0.0

    def __post_init__(self):
        axis = np.asarray(self.axis, dtype=np.float64)
        norm = np.linalg.norm(axis)
        if axis.shape != (3,) or not norm > 0:
            raise ValueError(f"anisotropy axis must be a non-zero 3-vector; got {axis!r}")
        axis = axis / norm
        fld = np.asarray(self.field_T, dtype=np.float64).reshape(3)
        axis.setflags(write=False)
        fld.setflags(write=False)
        object.__setattr__(self, "axis", axis)
        object.__setattr__(self, "field_T", fld)
        if not self.moment_J_per_T > 0:
            raise ValueError("the moment per site must be positive")
        if self.dipolar_thickness_nm is not None:
            from thinfilm.model.dipolar_tensor import check_prism_lattice

            if not self.dipolar:
                raise ValueError("dipolar_thickness_nm needs dipolar=True")
            object.__setattr__(self, "dipolar_thickness_nm", float(self.dipolar_thickness_nm))
            check_prism_lattice(self.lattice, self.dipolar_thickness_nm)

    # reduced quantities: fields in tesla, as the kernels read them
    @property
    def exchange_T(self):
        """J / mu_s in tesla."""
        return self.exchange_J / self.moment_J_per_T

    @property
    def anisotropy_T(self):
        """2K / mu_s in tesla (the anisotropy field when S is along n)."""
        return 2.0 * self.anisotropy_J / self.moment_J_per_T

    @property
    def dmi_meV(self):
        return self.dmi_J / MEV_J

    @property
    def exchange_meV(self):
        return self.exchange_J / MEV_J

    @property
    def anisotropy_meV(self):
        return self.anisotropy_J / MEV_J

    def with_field(self, field_T):
        """Copy of the model with another Zeeman field (T)."""
        return Model(self.lattice, self.moment_J_per_T, self.exchange_J, self.anisotropy_J,
                     self.axis, np.asarray(field_T, dtype=np.float64), self.dipolar,
                     self.dipolar_thickness_nm, self.dmi_J)

    def kernel_args(self):
        """Tuple (code, periodic, exchange_T, anisotropy_T, axis) for the field kernels."""
        lat = self.lattice
        return (lat.code, lat.periodic, self.exchange_T, self.anisotropy_T, self.axis)


def build_model(scenario):
    """Build a :class:`Model` from a validated Scenario (see :mod:`thinfilm.scenario`)."""
    from thinfilm.input.scenario import Scenario

    if not isinstance(scenario, Scenario):
        raise TypeError("build_model needs a Scenario: call load_scenario(path_or_dict) first")
    lat = Lattice(scenario.lattice.shape, scenario.lattice.nx, scenario.lattice.ny,
                  scenario.lattice.spacing_nm, scenario.lattice.periodic)
    m = scenario.material
    return Model(lat, m.moment_J_per_T, m.exchange_J, m.anisotropy_J, m.axis,
                 np.asarray(scenario.field_T, dtype=np.float64), m.dipolar,
                 m.dipolar_thickness_nm, getattr(m, "dmi_J", 0.0))
