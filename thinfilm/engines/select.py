"""Engine choice: the uniform fast path for a perfect film, the per-site path with disorder."""

from thinfilm.engines.disordered_llg import SiteLLG
from thinfilm.engines.disordered_mc import SiteMonteCarlo
from thinfilm.engines.montecarlo import MonteCarlo
from thinfilm.engines.stochastic_llg import LLGSimulation

__all__ = ["make_llg", "make_monte_carlo"]


def make_llg(model, site_params=None, **kw):
    """LLGSimulation(model, **kw) when site_params is None, else SiteLLG(site_params, **kw)."""
    return LLGSimulation(model, **kw) if site_params is None else SiteLLG(site_params, **kw)


def make_monte_carlo(model, temperature_K, site_params=None, **kw):
    """MonteCarlo(model, T, **kw) when site_params is None, else SiteMonteCarlo(site_params, T,
    **kw); both have the same run() API."""
    if site_params is None:
        return MonteCarlo(model, temperature_K, **kw)
    return SiteMonteCarlo(site_params, temperature_K, **kw)
