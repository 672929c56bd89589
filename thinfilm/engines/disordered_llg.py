"""Stochastic LLG of a film with per-site parameters: the one driver,
:class:`thinfilm.engines.stochastic_llg.LLGSimulation`, on SiteParameters.

Kept as the name under which disorder runs were written; the helpers live in
:mod:`thinfilm.engines.film`.
"""

from thinfilm.engines.film import as_terms, film_measure, film_stable_time_step, masked_spins
from thinfilm.engines.stochastic_llg import LLGSimulation
from thinfilm.input.units import GAMMA_E_RAD_PER_S_T

__all__ = ["SiteLLG", "site_measure", "site_stable_time_step", "masked_spins"]


class SiteLLG(LLGSimulation):
    """:class:`LLGSimulation` of SiteParameters (the generic per-site kernels)."""


def site_measure(params, spins, field_T=None):
    """(m vector per occupied site (3,), energy per occupied site in meV)."""
    return film_measure(as_terms(params), spins, field_T)


def site_stable_time_step(params, temperature_K, damping, gamma=GAMMA_E_RAD_PER_S_T):
    """Largest recommended Heun step (s) at the stiffest site."""
    return film_stable_time_step(as_terms(params), temperature_K, damping, gamma)
