"""What both drivers share about a film given as terms: its spins, measurement and time step.

A film reaches the drivers as a Model (perfect film), SiteParameters (a disorder realisation)
or a :class:`thinfilm.model.terms.TermSet`; :func:`as_terms` turns any of them into the one
TermSet the generic kernels read, and :func:`fast_model` says whether the fused kernels of a
perfect film can run it instead.
"""

import math

import numpy as np

from thinfilm.engines._kernels.site_field import site_totals
from thinfilm.engines.dipolar_term import film_terms
from thinfilm.input.units import GAMMA_E_RAD_PER_S_T, KB_J_PER_K, MEV_J
from thinfilm.model.parameters import Model
from thinfilm.model.site_parameters import SiteParameters
from thinfilm.model.term_set import TermSet

__all__ = ["as_terms", "fast_model", "masked_spins", "film_measure", "film_stable_time_step"]


def as_terms(film, site_params=None, *, dipolar_precision="double"):
    """TermSet of a Model (with optional SiteParameters of it), SiteParameters or TermSet."""
    if isinstance(film, TermSet):
        return film
    if isinstance(film, (Model, SiteParameters)):
        return film_terms(film, site_params, dipolar_precision=dipolar_precision)
    raise TypeError("the engines need a Model (call build_model(scenario) first), "
                    "SiteParameters or a TermSet")


def fast_model(film, site_params=None):
    """The uniform Model when the fused kernels of a perfect film apply, else None: a Model
    without DMI and without site parameters, or a TermSet that reduces to one."""
    if isinstance(film, Model) and site_params is None:
        return film if not film.dmi_J else None
    if isinstance(film, TermSet):
        return film.uniform_model()
    return None


def masked_spins(terms, spins):
    """Copy of spins (ny, nx, 3) as float64 C array, unit length, zero on vacancies."""
    lat = terms.lattice
    s = np.array(spins, dtype=np.float64, order="C")
    if s.shape != (lat.ny, lat.nx, 3):
        raise ValueError(f"spins must have shape {(lat.ny, lat.nx, 3)}, got {s.shape}")
    occ = terms.occupied
    norm = np.linalg.norm(s[occ], axis=-1)
    if not np.all(norm > 0) or not np.all(np.isfinite(s[occ])):
        raise ValueError("spins on occupied sites must be finite and non-zero")
    if np.max(np.abs(norm - 1.0), initial=0.0) > 1e-12:
        s[occ] /= norm[:, None]
    s[~occ] = 0.0
    return s


def film_totals(terms, spins, field_T=None):
    """(m sum (3,), energy in J) of the spins: local terms by the kernel, plus the dipolar
    energy."""
    nbr, jt, dm, kt, axis, bs, occ = terms.kernel_arrays
    b = terms.field_T if field_T is None else np.asarray(field_T, dtype=np.float64)
    mx, my, mz, ex, an, ze = site_totals(spins.reshape(-1, 3), nbr, jt, dm, kt, axis, occ,
                                         terms.moment_rel, b, bs)
    e = (ex + an + ze) * terms.moment_ref_J_per_T
    if terms.dipolar is not None:
        e += terms.dipolar.energy(spins)
    return np.array([mx, my, mz]), e


def film_measure(terms, spins, field_T=None):
    """(m vector per occupied site (3,), energy per occupied site in meV)."""
    m, e = film_totals(terms, spins, field_T)
    n = max(terms.n_occupied, 1)
    return m / n, e / n / MEV_J


def film_stable_time_step(terms, temperature_K, damping, gamma=GAMMA_E_RAD_PER_S_T):
    """Largest recommended Heun step (s): precession and noise angles <= 0.1 rad per step at the
    stiffest site (the rule of :func:`thinfilm.engines.stochastic_llg.stable_time_step` applied
    site by site, with the DMI and the dipolar bound)."""
    occ = terms.occupied.ravel()
    if not occ.any():
        return math.inf
    nbr, jt, dm, kt, axis, bs, _ = terms.kernel_arrays
    b = np.abs(jt).sum(axis=1) + np.abs(kt)
    if dm.shape[0]:
        b = b + np.linalg.norm(dm, axis=2).sum(axis=1)
    if bs.shape[0]:
        b = b + np.linalg.norm(bs, axis=1)
    bmax = b[occ].max() + float(np.linalg.norm(terms.field_T))
    dip = terms.dipolar
    if dip is not None:
        from thinfilm.engines.dipolar import dipolar_bound_T

        bmax += dipolar_bound_T(terms.lattice, dip.moment_ref, dip.thickness_nm)
    g = gamma / (1 + damping**2)
    dt_det = 0.1 / (g * bmax) if bmax > 0 else math.inf
    kt_ = KB_J_PER_K * temperature_K
    mu_min = terms.moment_J_per_T[terms.occupied].min()
    dt_noise = 0.01 * mu_min / (2 * damping * kt_ * gamma) if kt_ > 0 else math.inf
    return min(dt_det, dt_noise)
