"""Stochastic LLG on a film with per-site parameters (SiteParameters); same API as LLGSimulation.

The uniform fast path (:class:`thinfilm.engines.stochastic_llg.LLGSimulation`) is untouched;
:func:`thinfilm.engines.select.make_llg` picks this class only when there is disorder.
"""

import math

import numpy as np

from thinfilm.config import threads
from thinfilm.engines._kernels.site_field import site_totals
from thinfilm.engines._kernels.site_llg import site_heun_run, site_heun_run_serial, site_heun_work
from thinfilm.input.errors import StabilityError
from thinfilm.input.units import GAMMA_E_RAD_PER_S_T, KB_J_PER_K, MEV_J
from thinfilm.model.site_parameters import SiteParameters

__all__ = ["SiteLLG", "site_measure", "site_stable_time_step", "masked_spins"]

PARALLEL_MIN_SITES = 4096  # smaller lattices run single-threaded (thread wake-ups dominate)


def masked_spins(params, spins):
    """Copy of spins (ny, nx, 3) as float64 C array, unit length, zero on vacancies."""
    lat = params.lattice
    s = np.array(spins, dtype=np.float64, order="C")
    if s.shape != (lat.ny, lat.nx, 3):
        raise ValueError(f"spins must have shape {(lat.ny, lat.nx, 3)}, got {s.shape}")
    occ = params.occupied
    norm = np.linalg.norm(s[occ], axis=-1)
    if not np.all(norm > 0) or not np.all(np.isfinite(s[occ])):
        raise ValueError("spins on occupied sites must be finite and non-zero")
    if np.max(np.abs(norm - 1.0), initial=0.0) > 1e-12:
        s[occ] /= norm[:, None]
    s[~occ] = 0.0
    return s


def site_measure(params, spins, field_T=None):
    """(m vector per occupied site (3,), energy per occupied site in meV).

    Energy: E/N_occ with E of :mod:`thinfilm.model.site_parameters` (bonds once).
    """
    nbr, jt, kt, axis, occ = params.kernel_args()
    b = params.field_T if field_T is None else np.asarray(field_T, dtype=np.float64)
    mx, my, mz, ex, an, ze = site_totals(spins.reshape(-1, 3), nbr, jt, kt, axis, occ,
                                         params.moment_rel, b)
    n = max(params.n_occupied, 1)
    return np.array([mx, my, mz]) / n, (ex + an + ze) * params.moment_ref_J_per_T / n / MEV_J


def site_stable_time_step(params, temperature_K, damping, gamma=GAMMA_E_RAD_PER_S_T):
    """Largest recommended Heun step (s): precession and noise angles <= 0.1 rad per step
    at the stiffest site (the rule of :func:`thinfilm.engines.stochastic_llg.stable_time_step`
    applied site by site)."""
    occ = params.occupied.ravel()
    if not occ.any():
        return math.inf
    bmax = (np.abs(params.exchange_T).sum(axis=1) + np.abs(params.anisotropy_T))[occ].max()
    bmax += float(np.linalg.norm(params.field_T))
    g = gamma / (1 + damping**2)
    dt_det = 0.1 / (g * bmax) if bmax > 0 else math.inf
    kt = KB_J_PER_K * temperature_K
    mu_min = params.moment_J_per_T[params.occupied].min()
    dt_noise = 0.01 * mu_min / (2 * damping * kt * gamma) if kt > 0 else math.inf
    return min(dt_det, dt_noise)


class SiteLLG:
    """Stochastic LLG (Heun) with per-site parameters.

    Parameters
    ----------
    params : SiteParameters
    temperature_K, damping, time_step_s, seed, gamma, step
        As :class:`thinfilm.engines.stochastic_llg.LLGSimulation` (K, -, s, -, rad/(s T), -).
    spins : ndarray (ny, nx, 3), optional
        Initial state (copied; vacancies set to zero); default every spin along its own axis.
    parallel : bool or None
        Rows in parallel; None (default): when there are >= 4096 sites and more than one
        thread. Bitwise the same either way.
    """

    def __init__(self, params, *, temperature_K, damping, time_step_s, seed=1, spins=None,
                 gamma=GAMMA_E_RAD_PER_S_T, step=0, parallel=None):
        if not isinstance(params, SiteParameters):
            raise TypeError("SiteLLG needs SiteParameters (thinfilm.model.site_parameters)")
        self.params = params
        self.temperature_K = float(temperature_K)
        self.damping = float(damping)
        self.time_step_s = float(time_step_s)
        self.gamma = float(gamma)
        self.seed = int(seed)
        self.step = int(step)
        lat = params.lattice
        if spins is None:
            spins = params.axis.copy()
            spins[~params.occupied] = 1.0  # replaced by zeros in masked_spins
        self.spins = masked_spins(params, spins)
        self._work = site_heun_work(lat.ny, lat.nx)
        if parallel is None:
            parallel = lat.n_sites >= PARALLEL_MIN_SITES and threads() > 1
        self.parallel = bool(parallel)

    @property
    def time_s(self):
        return self.step * self.time_step_s

    def noise_sigma_coef(self):
        """sqrt(2 alpha kB/(gamma mu_ref dt)) in T/sqrt(K); site i's std is this * sqrt(T) *
        sqrt(mu_ref/mu_i)."""
        p = self.params
        return math.sqrt(2 * self.damping * KB_J_PER_K
                         / (self.gamma * p.moment_ref_J_per_T * self.time_step_s))

    def advance(self, n_steps, *, temperature_K=None, temperature_rate_K_per_step=0.0,
                field_T=None, field_rate_T_per_step=None):
        """Advance n_steps; T and B start at the given values and change linearly per step."""
        if n_steps <= 0:
            return
        p = self.params
        nbr, jt, kt, axis, occ = p.kernel_args()
        t0 = self.temperature_K if temperature_K is None else float(temperature_K)
        b0 = p.field_T if field_T is None else np.asarray(field_T, dtype=np.float64)
        db = (np.zeros(3) if field_rate_T_per_step is None
              else np.asarray(field_rate_T_per_step, dtype=np.float64))
        gdt = self.gamma * self.time_step_s / (1 + self.damping**2)
        run = site_heun_run if self.parallel else site_heun_run_serial
        run(self.spins.reshape(-1, 3), p.lattice.nx, int(n_steps), self.step,
                      self.seed, nbr, jt, kt, axis, occ, p.noise_scale, b0, db, t0,
                      float(temperature_rate_K_per_step), self.noise_sigma_coef(), gdt,
                      self.damping, *self._work)
        self.step += int(n_steps)
        if not np.isfinite(self.spins).all():
            dt_ok = site_stable_time_step(p, max(t0, 1e-9), self.damping, self.gamma)
            raise StabilityError(
                f"the spins became NaN at step {self.step}: the time step "
                f"{self.time_step_s * 1e15:g} fs is too large; use at most about "
                f"{dt_ok * 1e15:.3g} fs", suggested_time_step_fs=dt_ok * 1e15)

    def measure(self, field_T=None):
        """(m vector per occupied site, energy per occupied site in meV) now."""
        return site_measure(self.params, self.spins, field_T)
