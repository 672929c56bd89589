"""Metropolis Monte Carlo with per-site parameters: the one driver,
:class:`thinfilm.engines.montecarlo.MonteCarlo`, on SiteParameters (generic sweeps).

Observables are per occupied site: m_vector = sum S / N_occ, energy per occupied site, and
m_order = m.n along the mean axis when the mean K > 0, else abs(m). ``n_sites`` in the run dict
is N_occ, so :func:`thinfilm.analysis.thermo.thermodynamics` gives per-spin quantities.
"""

from thinfilm.engines.montecarlo import MonteCarlo

__all__ = ["SiteMonteCarlo"]


class SiteMonteCarlo(MonteCarlo):
    """:class:`MonteCarlo` of SiteParameters (kept name of the disorder engine)."""

    @property
    def n_occupied(self):
        return self._n_sites
