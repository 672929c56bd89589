"""Characteristic fluctuation time of the domain pattern from short stochastic LLG runs.

The fluctuation time is the integrated autocorrelation time tau_int of the order-axis
magnetisation m_axis(t) (the mean spin along the anisotropy axis; abs(m) for an easy plane
or no anisotropy) in a stochastic LLG run started from an equilibrated state. It is the time
over which the film "forgets" its pattern of magnetisation and sets how much of the pattern an
exposure of a given length averages away.

The runs are deliberately small (e.g. 16 x 16 sites, some tens to hundreds of ps): they give
the local relaxation time of the pattern (ps - ns), not domain-wall motion or coarsening on
laboratory time scales, which a lattice of this size cannot hold.
"""

import math
from contextlib import contextmanager

import numba
import numpy as np

from thinfilm.analysis.thermo import integrated_autocorrelation_time
from thinfilm.engines.stochastic_llg import LLGSimulation, stable_time_step
from thinfilm.input.units import GAMMA_E_RAD_PER_S_T

__all__ = ["fluctuation_time", "exposure_verdict", "VERDICTS", "FROZEN_RATIO", "AVERAGED_RATIO"]

#: tau / exposure above which the pattern is frozen during the exposure.
FROZEN_RATIO = 10.0
#: tau / exposure below which the pattern is averaged over many independent states.
AVERAGED_RATIO = 0.1
VERDICTS = ("frozen", "blurred/partly averaged", "averaged out to grey",
            "averaged to the mean contrast")
WINDOW_C = 5.0  # Sokal's window constant, as in integrated_autocorrelation_time


@contextmanager
def _single_thread():
    """Small lattices run fastest on one thread (thread wake-ups dominate on shared cores)."""
    old = numba.get_num_threads()
    numba.set_num_threads(1)
    try:
        yield
    finally:
        numba.set_num_threads(old)


def _order_component(model, m_vector):
    if model.anisotropy_J > 0:
        return float(m_vector @ model.axis)
    return float(np.linalg.norm(m_vector))


def _equilibrate(model, temperature_K, seed, warmup_sweeps):
    """Spins drawn from the Boltzmann distribution by Metropolis sweeps, or None."""
    try:
        from thinfilm.engines.montecarlo import MonteCarlo
    except ImportError:  # pragma: no cover - the Monte Carlo driver is part of the package
        return None, "none"
    if warmup_sweeps <= 0 or not temperature_K > 0 or model.dipolar:
        return None, "none"
    mc = MonteCarlo(model, temperature_K, seed=seed, initial_spins="ordered", stream=3)
    mc.warmup(int(warmup_sweeps))
    return mc.spins.copy(), f"{int(warmup_sweeps)} Metropolis sweeps from the ordered state"


def fluctuation_time(model, temperature_K, *, damping, time_step_s, duration_s, seed=1,
                     sample_every_s=None, warmup_sweeps=200, warmup_s=None,
                     gamma=GAMMA_E_RAD_PER_S_T):
    """Integrated autocorrelation time of m_axis(t) in a stochastic LLG run.

    Parameters
    ----------
    model : thinfilm.model.Model
        The film (keep it small: 12 x 12 to 32 x 32 sites).
    temperature_K : float
        Bath temperature (K), > 0.
    damping : float
        Gilbert damping alpha (> 0).
    time_step_s : float
        Heun time step (s); capped at :func:`thinfilm.dynamics.stable_time_step`.
    duration_s : float
        Length of the sampled run (s), after the warm-up.
    seed : int
        Seeds the Monte Carlo start and the thermal noise.
    sample_every_s : float, optional
        Time between samples of m_axis (s); default duration/4000, at least one step.
    warmup_sweeps : int
        Metropolis sweeps from the ordered state before the LLG run (0: none).
    warmup_s : float, optional
        LLG warm-up before sampling (s); default 5 % of ``duration_s``.
    gamma : float
        Gyromagnetic ratio (rad s^-1 T^-1).

    Returns
    -------
    dict
        ``tau_ps`` (fluctuation time, ps), ``tau_err_ps`` (statistical error, ps, from
        Sokal's variance formula var(tau) = 2 (2W + 1) tau^2 / N with window W),
        ``duration_ps``, ``sample_every_ps``, ``time_step_fs``, ``n_samples``,
        ``n_independent`` (duration / (2 tau)), ``m_axis_mean``, ``m_axis_std``,
        ``temperature_K``, ``sites``, ``warmup`` (text) and ``reliable`` (bool: at least
        50 independent samples).
    """
    temperature_K = float(temperature_K)
    if not temperature_K > 0:
        raise ValueError(f"temperature must be positive (K); got {temperature_K!r}")
    if not damping > 0:
        raise ValueError(f"damping must be positive for a thermal bath; got {damping!r}")
    if not (time_step_s > 0 and duration_s > 0):
        raise ValueError("time_step_s and duration_s must be positive (s)")
    dt = min(float(time_step_s), stable_time_step(model, temperature_K, damping, gamma))
    if sample_every_s is None:
        sample_every_s = duration_s / 4000.0
    k = max(1, int(round(sample_every_s / dt)))
    n_samples = int(duration_s / (k * dt))
    if n_samples < 16:
        raise ValueError(f"the run holds only {n_samples} samples; lengthen duration_s or sample "
                         f"more often (sample_every_s)")
    if warmup_s is None:
        warmup_s = 0.05 * duration_s
    with _single_thread():
        spins, how = _equilibrate(model, temperature_K, seed, warmup_sweeps)
        sim = LLGSimulation(model, temperature_K=temperature_K, damping=damping, time_step_s=dt,
                            seed=seed, spins=spins, gamma=gamma)
        sim.advance(int(warmup_s / dt))
        x = np.empty(n_samples)
        for i in range(n_samples):
            sim.advance(k)
            x[i] = _order_component(model, sim.measure()[0])
    tau_samples = integrated_autocorrelation_time(x, c=WINDOW_C)
    window = WINDOW_C * tau_samples
    rel = math.sqrt(2.0 * (2.0 * window + 1.0) / n_samples)
    dt_sample_ps = k * dt * 1e12
    tau_ps = tau_samples * dt_sample_ps
    n_ind = n_samples / (2.0 * tau_samples)
    return {
        "temperature_K": temperature_K,
        "tau_ps": tau_ps,
        "tau_err_ps": tau_ps * rel,
        "duration_ps": n_samples * dt_sample_ps,
        "sample_every_ps": dt_sample_ps,
        "time_step_fs": dt * 1e15,
        "n_samples": n_samples,
        "n_independent": n_ind,
        "m_axis_mean": float(x.mean()),
        "m_axis_std": float(x.std()),
        "sites": int(model.lattice.n_sites),
        "damping": float(damping),
        "seed": int(seed),
        "warmup": f"{how}, then {warmup_s * 1e12:.3g} ps of LLG",
        "reliable": bool(n_ind >= 50),
    }


def exposure_verdict(tau_s, exposure_s, *, ordered=False):
    """Compare the fluctuation time with the exposure time.

    Parameters
    ----------
    tau_s : float
        Fluctuation time (s).
    exposure_s : float
        Exposure (integration) time of one image (s).
    ordered : bool
        The film is ordered at this temperature (below Tc): when the fluctuations average out,
        the image still shows the domains, at the mean contrast <|m|>, instead of grey.

    Returns
    -------
    str
        "frozen" (tau > 10 x exposure: a snapshot), "blurred/partly averaged" (within a
        factor 10), "averaged out to grey" (tau < exposure / 10, disordered film) or
        "averaged to the mean contrast" (the same, ordered film).
    """
    if not (tau_s > 0 and exposure_s > 0):
        raise ValueError("tau_s and exposure_s must be positive (s)")
    ratio = tau_s / exposure_s
    if ratio > FROZEN_RATIO:
        return VERDICTS[0]
    if ratio >= AVERAGED_RATIO:
        return VERDICTS[1]
    return VERDICTS[3] if ordered else VERDICTS[2]
