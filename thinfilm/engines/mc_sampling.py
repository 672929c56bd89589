"""The sampling half of :class:`thinfilm.engines.montecarlo.MonteCarlo`: warm-up with the
tuning of the trial width, measurements, sample series and whole runs, as a mixin on the
sampler state that :class:`MonteCarlo` sets up (spins, kernels, counters)."""

import numpy as np

from thinfilm.engines._kernels.banded import banded_row_sums, banded_samples
from thinfilm.engines._kernels.metropolis import N_COUNTS
from thinfilm.input.units import MEV_J

__all__ = ["Sampling", "SIGMA_MIN", "SIGMA_MAX", "TARGET_ACCEPTANCE"]

SIGMA_MIN = 1e-4
SIGMA_MAX = 5.0  # beyond this the trial direction is nearly uniform on the sphere
TARGET_ACCEPTANCE = 0.5


class Sampling:
    """Warm-up, measurements and sample series of a Monte Carlo sampler (a mixin)."""

    def warmup(self, n, *, tune=True, chunk=10):
        """Make n sweeps; with tune, adjust sigma after every chunk toward acceptance 0.5 (and,
        if it is tuned, clusters_per_sweep to N / mean cluster size: of the chunk in the first
        half of the warm-up, of all chunks of the second half so far afterwards).

        Returns the Gaussian acceptance ratio of the last chunk.
        """
        done = 0
        acc = float("nan")
        made = sites = 0.0
        while done < n:
            m = min(chunk, n - done)
            res = self.sweep(m)
            acc = res["gaussian"]
            done += m
            if tune and self._cl is not None and self._tune_clusters:
                if 2 * done > n:
                    made += self._cl_stats[0]
                    sites += self._cl_stats[1]
                mean = sites / made if made else res["cluster_size"]
                self.clusters_per_sweep = max(1, int(round(self._n_sites / mean)))
            if tune:
                # multiplicative update, factor exp(2 (a - 0.5)) in [0.37, 2.7]
                s = self.sigma * np.exp(2.0 * (acc - TARGET_ACCEPTANCE))
                self.sigma = float(min(max(s, SIGMA_MIN), SIGMA_MAX))
        return acc

    # ---------------------------------------------------------------- measurements
    def measure(self):
        """Per-spin observables of the current spins.

        Returns
        -------
        dict
            energy_J (per spin, J), m_vector (3,) (mean spin), m_order (component along the
            anisotropy axis if K > 0, else abs(m_vector)).
        """
        if self._g is not None:
            return self._per_spin(self._g.totals())[0]
        T, zc, _, _, bands = self._kernel_args()[:5]
        banded_row_sums(T, zc, bands, self._code, self._periodic, self._jt, self._kt, self._axis,
                        self._b, self._rows, self.parallel)
        tot = self._rows.sum(axis=0)
        return self._per_spin(tot[None, :])[0]

    def _per_spin(self, tot):
        """(n, 4) totals (mx, my, mz, energy in mu_s T) -> list of per-spin measurement dicts."""
        n = max(self._n_sites, 1)
        m = tot[:, :3] / n
        e = self._mu * tot[:, 3] / n
        if self._easy_axis:
            order = m @ self._axis
        else:
            order = np.linalg.norm(m, axis=1)
        return [{"energy_J": float(e[k]), "m_vector": m[k], "m_order": float(order[k])}
                for k in range(tot.shape[0])]

    def _series(self, n_samples, sample_every):
        """Kernel loop: n_samples x (sample_every sweeps + totals); returns (n, 4) totals."""
        if self._g is not None:
            return self._generic_series(n_samples, sample_every)
        out = np.empty((n_samples, 4))
        self._counts[:] = 0
        if n_samples > 0:
            buf, g, cnt = self._work[5:]
            head = (*self._kernel_args(), self._beta, self.sigma, self.seed, self.stream,
                    self.sweep_count, n_samples, sample_every, self.reflection, self.n_or,
                    self._counts, buf, g, cnt, self._rows, out, self.parallel)
            if self._cl is None:
                banded_samples(*head)
            else:
                self._mixed[1](*head, *self._cl[:6], self.clusters_per_sweep, *self._cl[6:],
                               self._cl_stats)
            self._host_ok = False
            self.sweep_count += n_samples * sample_every
        return out

    def samples(self, n_samples, sample_every=1):
        """Generator: make sample_every sweeps, then yield :meth:`measure`, n_samples times."""
        for _ in range(int(n_samples)):
            self.sweep(sample_every)
            yield self.measure()

    def run(self, n_warmup, n_samples, sample_every=1, *, tune=True, progress=None):
        """Warm up (tuning sigma), then record a time series.

        Parameters
        ----------
        n_warmup : int
            Warm-up sweeps (sigma tuned when ``tune``; frozen afterwards).
        n_samples : int
            Number of measurements.
        sample_every : int
            Sweeps between measurements.
        progress : callable, optional
            Called as progress(done, total) after each chunk of measurements.

        Returns
        -------
        dict of arrays
            energy_J, energy_meV (n_samples,) per spin; m_vector (n_samples, 3); m_order
            (n_samples,); sweep (n_samples,) sweep count at each sample; plus scalars
            temperature_K, n_sites, sigma, acceptance (dict, over the sampling sweeps); with
            cluster moves also clusters_per_sweep and cluster (dict: clusters, mean_size in
            sites, acceptance, m_r2_improved = improved estimator of <(r.m)^2>, valid for
            B.r = 0).
        """
        self.warmup(n_warmup, tune=tune)
        n_samples = int(n_samples)
        sample_every = int(sample_every)
        if sample_every < 1:
            raise ValueError("sample_every must be >= 1")
        tot = np.empty((n_samples, 4))
        acc_sum = np.zeros(N_COUNTS, dtype=np.int64)
        self._cl_stats[:] = 0.0  # accumulated over the chunks of this run
        # chunks of about 2e6 site visits between progress calls
        per_sample = sample_every * max(self._n_sites, 1)
        chunk = max(1, min(n_samples, 2_000_000 // per_sample))
        done = 0
        while done < n_samples:
            m = min(chunk, n_samples - done)
            tot[done:done + m] = self._series(m, sample_every)
            acc_sum += self._counts.sum(axis=0)
            done += m
            if progress is not None:
                progress(done, n_samples)
        n = max(self._n_sites, 1)
        mv = tot[:, :3] / n
        e = self._mu * tot[:, 3] / n
        mo = mv @ self._axis if self._easy_axis else np.linalg.norm(mv, axis=1)
        sw = self.sweep_count - (n_samples - 1 - np.arange(n_samples)) * sample_every
        acceptance = self._acceptance(acc_sum, max(n_samples * sample_every, 1))
        out = {"energy_J": e, "energy_meV": e / MEV_J, "m_vector": mv, "m_order": mo,
               "sweep": sw, "temperature_K": self.temperature_K,
               "n_sites": self._n_sites, "sigma": self.sigma,
               "acceptance": acceptance}
        if self._cl is not None:
            out["clusters_per_sweep"] = self.clusters_per_sweep
            out["cluster"] = self.last_cluster_stats
        return out
