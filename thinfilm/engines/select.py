"""Engine choice: one LLG driver and one Monte Carlo driver take any film; the names of the
disorder engines are kept for runs with site parameters."""

from thinfilm.engines.disordered_llg import SiteLLG
from thinfilm.engines.disordered_mc import SiteMonteCarlo
from thinfilm.engines.montecarlo import MonteCarlo
from thinfilm.engines.stochastic_llg import LLGSimulation

__all__ = ["make_llg", "make_monte_carlo"]


def make_llg(model, site_params=None, **kw):
    """The LLG driver of a Model with an optional disorder realisation (its DMI and dipolar
    field act on the realisation); the driver picks the fused or the generic kernels."""
    if site_params is None:
        return LLGSimulation(model, **kw)
    return SiteLLG(model, site_params=site_params, **kw)


def make_monte_carlo(model, temperature_K, site_params=None, **kw):
    """The Monte Carlo driver of a Model with an optional disorder realisation."""
    if site_params is None:
        return MonteCarlo(model, temperature_K, **kw)
    return SiteMonteCarlo(model, temperature_K, site_params=site_params, **kw)
