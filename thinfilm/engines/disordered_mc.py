"""Metropolis Monte Carlo with per-site parameters; the run() API of MonteCarlo.

Observables are per occupied site: m_vector = sum S / N_occ, energy per occupied site, and
m_order = m.n along the mean axis when the mean K > 0, else abs(m). ``n_sites`` in the run dict
is N_occ, so :func:`thinfilm.analysis.thermo.thermodynamics` gives per-spin quantities.
The Gaussian width is tuned toward acceptance 0.5 only in :meth:`SiteMonteCarlo.warmup`.
"""

import numpy as np

from thinfilm.engines._kernels.site_field import site_totals
from thinfilm.engines._kernels.site_metropolis import row_classes, site_mc_run
from thinfilm.engines.disordered_llg import masked_spins
from thinfilm.input.units import KB_J_PER_K, MEV_J
from thinfilm.model.site_parameters import SiteParameters

__all__ = ["SiteMonteCarlo"]

SIGMA_MIN = 1e-4
SIGMA_MAX = 5.0
TARGET_ACCEPTANCE = 0.5
PARALLEL_MIN_SITES = 4096


class SiteMonteCarlo:
    """Metropolis sampler of one SiteParameters realisation at one temperature.

    Parameters
    ----------
    params : SiteParameters
    temperature_K : float
        Temperature (K), > 0.
    seed : int
        Generator seed (counter-based: a run is a function of seed, start state and calls).
    initial_spins : ndarray (ny, nx, 3), "random", "ordered" or None
        None / "random": uniform directions from ``seed``; "ordered": every spin along the
        mean axis.
    sigma : float
        Initial Gaussian step width, tuned in :meth:`warmup`.
    reflection : bool or "auto"
        Reflection through the plane normal to each site's axis; "auto": on when mean K > 0.
    over_relaxation : int
        Over-relaxation moves per site and sweep.
    stream : int
        Random stream (>= 1; 0 is the LLG noise).
    parallel : bool or None
        Rows of a class in parallel; None: for >= 4096 sites. Bitwise the same either way.
    """

    def __init__(self, params, temperature_K, *, seed, initial_spins=None, sigma=0.5,
                 reflection="auto", over_relaxation=1, stream=1, parallel=None):
        if not isinstance(params, SiteParameters):
            raise TypeError("SiteMonteCarlo needs SiteParameters")
        lat = params.lattice
        if lat.periodic and (lat.nx < 2 or lat.ny < 2):
            raise ValueError("periodic Monte Carlo needs at least 2 rows and 2 columns")
        if int(stream) < 1:
            raise ValueError("Monte Carlo uses random streams >= 1 (0 is the LLG noise)")
        if int(over_relaxation) < 0:
            raise ValueError("over_relaxation must be >= 0")
        self.params = params
        self.seed = int(seed)
        self.stream = int(stream)
        self.n_or = int(over_relaxation)
        occ = params.occupied
        k_mean = float(params.anisotropy_J[occ].mean()) if occ.any() else 0.0
        self._easy_axis = k_mean > 0
        self.reflection = self._easy_axis if reflection == "auto" else bool(reflection)
        self.parallel = lat.n_sites >= PARALLEL_MIN_SITES if parallel is None else bool(parallel)
        self._order, self._bounds = row_classes(lat.ny, lat.periodic)
        self._counts = np.zeros((lat.ny, 3), dtype=np.int64)
        self.temperature_K = temperature_K
        self.sweep_count = 0
        self.sigma = float(sigma)
        self._spins = self._initial(initial_spins)

    @property
    def temperature_K(self):
        return self._temperature_K

    @temperature_K.setter
    def temperature_K(self, value):
        if not value > 0:
            raise ValueError(f"temperature must be positive (K); got {value!r}")
        self._temperature_K = float(value)
        self._beta = self.params.moment_ref_J_per_T / (KB_J_PER_K * self._temperature_K)

    def _initial(self, init):
        lat = self.params.lattice
        shape = (lat.ny, lat.nx, 3)
        if init is None or (isinstance(init, str) and init == "random"):
            g = np.random.default_rng(self.seed).normal(size=shape)
            return masked_spins(self.params, g)
        if isinstance(init, str) and init == "ordered":
            return masked_spins(self.params, np.broadcast_to(self.params.mean_axis, shape))
        if isinstance(init, str):
            raise ValueError(f"initial_spins must be an array, 'random' or 'ordered'; got {init!r}")
        return masked_spins(self.params, init)

    @property
    def spins(self):
        """Current spins (ny, nx, 3), zero on vacancies (the live array)."""
        return self._spins

    @spins.setter
    def spins(self, value):
        self._spins = masked_spins(self.params, value)

    @property
    def state(self):
        """Resumable state: dict with spins (copy), sweep (int), sigma (float)."""
        return {"spins": self._spins.copy(), "sweep": int(self.sweep_count),
                "sigma": float(self.sigma)}

    @state.setter
    def state(self, value):
        self.spins = value["spins"]
        self.sweep_count = int(value["sweep"])
        self.sigma = float(value["sigma"])

    @property
    def n_occupied(self):
        return self.params.n_occupied

    def _kernel(self, n_samples, sample_every):
        p = self.params
        nbr, jt, kt, axis, occ = p.kernel_args()
        out = np.empty((max(n_samples, 1), 4))
        self._counts[:] = 0
        self.sweep_count = site_mc_run(
            self._spins.reshape(-1, 3), p.lattice.nx, self._order, self._bounds, nbr, jt, kt,
            axis, occ, p.moment_rel, p.field_T, self._beta, self.sigma, self.seed, self.stream,
            self.sweep_count, n_samples, sample_every, self.reflection, self.n_or, self._counts,
            out, self.parallel)
        return out[:n_samples]

    def _acceptance(self, counts, n_sweeps):
        visits = max(n_sweeps, 1) * max(self.n_occupied, 1)
        return {"gaussian": counts[0] / visits,
                "reflection": counts[1] / visits if self.reflection else float("nan"),
                "over_relaxation": counts[2] / (visits * self.n_or) if self.n_or else float("nan")}

    def sweep(self, n=1):
        """n sweeps at the frozen sigma; returns the acceptance ratios of these sweeps."""
        n = int(n)
        if n > 0:
            self._kernel(1, n)
        return self._acceptance(self._counts.sum(axis=0) if n > 0 else np.zeros(3), n)

    def warmup(self, n, *, tune=True, chunk=10):
        """n sweeps; with tune, sigma is adjusted after every chunk toward acceptance 0.5."""
        done = 0
        acc = float("nan")
        while done < n:
            m = min(chunk, n - done)
            acc = self.sweep(m)["gaussian"]
            done += m
            if tune:
                s = self.sigma * np.exp(2.0 * (acc - TARGET_ACCEPTANCE))
                self.sigma = float(min(max(s, SIGMA_MIN), SIGMA_MAX))
        return acc

    def _derived(self, tot):
        n = max(self.n_occupied, 1)
        mv = tot[:, :3] / n
        e = self.params.moment_ref_J_per_T * tot[:, 3] / n
        mo = mv @ self.params.mean_axis if self._easy_axis else np.linalg.norm(mv, axis=1)
        return mv, e, mo

    def measure(self):
        """dict energy_J (per occupied site), m_vector (3,), m_order of the current spins."""
        p = self.params
        nbr, jt, kt, axis, occ = p.kernel_args()
        mx, my, mz, ex, an, ze = site_totals(self._spins.reshape(-1, 3), nbr, jt, kt, axis, occ,
                                             p.moment_rel, p.field_T)
        mv, e, mo = self._derived(np.array([[mx, my, mz, ex + an + ze]]))
        return {"energy_J": float(e[0]), "m_vector": mv[0], "m_order": float(mo[0])}

    def run(self, n_warmup, n_samples, sample_every=1, *, tune=True, progress=None):
        """Warm up (tuning sigma), then record n_samples, one every sample_every sweeps.

        Returns the dict of :meth:`thinfilm.engines.montecarlo.MonteCarlo.run` (per occupied
        site; n_sites = N_occ).
        """
        self.warmup(n_warmup, tune=tune)
        n_samples = int(n_samples)
        sample_every = int(sample_every)
        if sample_every < 1:
            raise ValueError("sample_every must be >= 1")
        tot = np.empty((n_samples, 4))
        acc = np.zeros(3, dtype=np.int64)
        per = sample_every * self.params.lattice.n_sites
        chunk = max(1, min(max(n_samples, 1), 2_000_000 // per))
        done = 0
        while done < n_samples:
            m = min(chunk, n_samples - done)
            tot[done:done + m] = self._kernel(m, sample_every)
            acc += self._counts.sum(axis=0)
            done += m
            if progress is not None:
                progress(done, n_samples)
        mv, e, mo = self._derived(tot)
        sw = self.sweep_count - (n_samples - 1 - np.arange(n_samples)) * sample_every
        return {"energy_J": e, "energy_meV": e / MEV_J, "m_vector": mv, "m_order": mo,
                "sweep": sw, "temperature_K": self.temperature_K, "n_sites": self.n_occupied,
                "sigma": self.sigma, "acceptance": self._acceptance(acc, n_samples * sample_every)}
