"""Equilibrium Monte Carlo of a Model at fixed temperature: Metropolis sweeps, optional Wolff
cluster moves, samples, runs.

Units: spins are unit vectors; the sampled distribution is exp(-E/(kB T)) with E the Model
energy in joules. A model with moment 1 muB and J = 1 meV has kB T/J = t at
T = t * 11.6045 K (J/kB = 11.6045 K for 1 meV).

One sweep visits every site once, in the row colouring of
:mod:`thinfilm._kernels.metropolis` (row classes one after the other, each row left to right,
vectorised across the rows of a class); each visit makes a Gaussian trial step, an optional
axis reflection S -> S - 2(S.n)n and ``over_relaxation`` over-relaxation moves. The Gaussian
width sigma is tuned toward acceptance 0.5 only inside :meth:`MonteCarlo.warmup`; it is frozen
during sampling so detailed balance holds.

The spins stay in the sweep kernel's banded layout for the whole run (see
:mod:`thinfilm._kernels.banded`): sweeps and measurements work on it directly, and
:attr:`MonteCarlo.spins` converts to (ny, nx, 3) only when read (cached until the next sweep).
"""

import numpy as np

from thinfilm.engines._kernels.banded import (
    banded_sweeps,
    from_banded,
    to_banded,
)
from thinfilm.engines._kernels.metropolis import N_COUNTS, make_work, row_colouring
from thinfilm.engines._kernels.swendsen_wang import make_sw_work, sw_mixed_samples, sw_mixed_sweeps
from thinfilm.engines._kernels.wolff import mixed_samples, mixed_sweeps
from thinfilm.engines.cluster_moves import (
    _MODE,
    CLUSTER_DIRECTIONS,
    MOVES,
    cluster_moves_exact,
    setup_clusters,
)
from thinfilm.engines.film import as_terms, fast_model
from thinfilm.engines.film_mc import check_sampler_args, init_generic
from thinfilm.engines.mc_sampling import Sampling
from thinfilm.input.units import KB_J_PER_K
from thinfilm.model.parameters import Model
from thinfilm.model.site_parameters import SiteParameters
from thinfilm.model.term_set import TermSet

__all__ = ["MonteCarlo", "cluster_moves_exact", "MOVES", "CLUSTER_DIRECTIONS"]

CLUSTER_ALGORITHMS = ("wolff", "swendsen-wang")
PARALLEL_MIN_SITES = 4096  # smaller lattices run single-threaded (thread wake-ups dominate)


class MonteCarlo(Sampling):
    """Metropolis sampler (optionally with Wolff cluster moves) of one Model at one
    temperature.

    Parameters
    ----------
    model : Model, SiteParameters or TermSet
        The film as energy terms (:mod:`thinfilm.model.terms`). A perfect film without DMI or
        dipolar field runs on the fused banded kernels (and may use cluster moves); any other
        film on the generic per-site sweeps (:mod:`thinfilm.engines.film_mc`), with the
        dipolar field by the exact sequential scheme. ``path`` says which. Observables are
        then per occupied site (``n_sites`` = occupied sites).
    temperature_K : float
        Temperature (K), > 0.
    seed : int
        Generator seed; a run is a deterministic function of (seed, initial spins, calls).
    initial_spins : ndarray (ny, nx, 3), "random", "ordered" or None
        Starting configuration; None and "random" draw uniform directions from ``seed``;
        "ordered" puts every spin along the anisotropy axis.
    sigma : float, optional
        Initial Gaussian step width (default 0.5); tuned in :meth:`warmup`.
    reflection : bool or "auto"
        Axis-reflection move; "auto" turns it on when K > 0 (easy axis).
    over_relaxation : int
        Over-relaxation moves per site and sweep (default 1).
    stream : int
        Random stream (>= 1; stream 0 belongs to the LLG noise).
    parallel : bool or None
        Threaded kernels; None (default) uses them for lattices of >= 4096 sites. Results are
        bitwise identical either way.
    moves : tuple of str
        ("metropolis",) (default) or ("metropolis", "cluster"). With "cluster" one sweep is
        a Metropolis sweep followed by ``clusters_per_sweep`` Wolff cluster moves (serial;
        see :mod:`thinfilm._kernels.wolff`); the Zeeman energy of a cluster flip is accepted
        by Metropolis. Cluster moves alone are refused: they only flip the component along r.
    cluster_direction : {"auto", "axis", "plane", "sphere"}
        Reflection direction of the cluster moves (see :func:`cluster_moves_exact`; a
        combination that is not exact raises ValueError).
    clusters_per_sweep : int or None
        Clusters per sweep; None tunes it in :meth:`warmup` to N / (mean cluster size), so the
        clusters of one sweep cover about N sites (frozen while sampling; 1 until tuned).
    site_params : SiteParameters, optional
        A disorder realisation of ``model`` (the Model's DMI and dipolar field join it).
    cluster_algorithm : {"wolff", "swendsen-wang"}
        "wolff" (default): single-cluster moves grown serially. "swendsen-wang": one sweep is a
        Metropolis sweep followed by one Swendsen-Wang move of every cluster, labelled in
        parallel (:mod:`thinfilm._kernels.swendsen_wang`; same reflections, the Zeeman energy
        of each cluster by heat bath); clusters_per_sweep is then not used.
    """

    def __init__(self, model, temperature_K, *, seed, initial_spins=None, sigma=0.5,
                 reflection="auto", over_relaxation=1, stream=1, parallel=None,
                 moves=("metropolis",), cluster_direction="auto", clusters_per_sweep=None,
                 site_params=None, cluster_algorithm="wolff"):
        if not isinstance(model, (Model, SiteParameters, TermSet)):
            raise TypeError("MonteCarlo needs a thinfilm.model.Model")
        if cluster_algorithm not in CLUSTER_ALGORITHMS:
            raise ValueError(f"cluster_algorithm must be one of {', '.join(CLUSTER_ALGORITHMS)}; "
                             f"got {cluster_algorithm!r}")
        self.cluster_algorithm = cluster_algorithm
        fast = fast_model(model, site_params)
        fast = None if fast is not None and fast.dipolar else fast
        if not temperature_K > 0:
            raise ValueError(f"temperature must be positive (K); got {temperature_K!r}")
        terms = None if fast is not None else as_terms(model, site_params)
        lat = (fast or terms).lattice
        check_sampler_args(lat, stream, over_relaxation)
        self.seed = int(seed)
        self.stream = int(stream)
        self.n_or = int(over_relaxation)
        self.parallel = lat.n_sites >= PARALLEL_MIN_SITES if parallel is None else bool(parallel)
        self.sweep_count = 0
        self.sigma = float(sigma)
        self._counts = np.zeros((lat.ny, N_COUNTS), dtype=np.int64)
        if terms is not None:
            init_generic(self, model, terms, site_params, temperature_K, reflection,
                         initial_spins, moves)
            return
        self.model = model = fast
        self.terms, self.path = None, "fused"
        self._n_sites = lat.n_sites
        self._mu = model.moment_J_per_T
        self._easy_axis = model.anisotropy_J > 0
        self.reflection = bool(model.anisotropy_J > 0) if reflection == "auto" else bool(reflection)
        self._order, self._bounds = row_colouring(lat.ny, lat.periodic)
        self._code, self._periodic, self._jt, self._kt, self._axis = model.kernel_args()
        self._b = np.ascontiguousarray(model.field_T, dtype=np.float64)
        self._axis = np.ascontiguousarray(self._axis, dtype=np.float64)
        self.temperature_K = temperature_K
        self._rows = np.empty((lat.ny, 4))
        # The state lives in the kernel's banded layout (work tuple: cbounds, chunks, bands, T,
        # zc, buf, g, cnt); _host is its (ny, nx, 3) copy, refreshed lazily by `spins`.
        self._host = np.empty((lat.ny, lat.nx, 3))
        self._host_ok = False
        self._work = make_work(self._host, self._order, self._bounds)
        self._g = None
        self.spins = self._initial(initial_spins)
        setup_clusters(self, moves, cluster_direction, clusters_per_sweep)
        self._mixed = (mixed_sweeps, mixed_samples)
        if self._cl is not None and cluster_algorithm == "swendsen-wang":
            lat = model.lattice
            self._cl = make_sw_work(self._work[3], self._work[2], lat.periodic, lat.neighbours,
                                    self._axis, _MODE[self.cluster_direction])
            self._mixed = (sw_mixed_sweeps, sw_mixed_samples)
            self._tune_clusters = False

    # ---------------------------------------------------------------- state
    @property
    def temperature_K(self):
        """Temperature (K); may be changed between calls (e.g. an annealing ladder)."""
        return self._temperature_K

    @temperature_K.setter
    def temperature_K(self, value):
        if not value > 0:
            raise ValueError(f"temperature must be positive (K); got {value!r}")
        self._temperature_K = float(value)
        self._beta = self._mu / (KB_J_PER_K * self._temperature_K)

    def _initial(self, init):
        lat = (self.model if self.terms is None else self.terms).lattice
        shape = (lat.ny, lat.nx, 3)
        if init is None or (isinstance(init, str) and init == "random"):
            g = np.random.default_rng(self.seed).normal(size=shape)
            return np.ascontiguousarray(g / np.linalg.norm(g, axis=-1, keepdims=True))
        if isinstance(init, str) and init == "ordered":
            return np.ascontiguousarray(np.broadcast_to(self._axis, shape), dtype=np.float64)
        if isinstance(init, str):
            raise ValueError(f"initial_spins must be an array, 'random' or 'ordered'; got {init!r}")
        return init if self.terms is not None else self._checked(init)

    def _checked(self, spins):
        lat = self.model.lattice
        a = np.array(spins, dtype=np.float64, order="C")
        if a.shape != (lat.ny, lat.nx, 3):
            raise ValueError(f"spins must have shape {(lat.ny, lat.nx, 3)}; got {a.shape}")
        norm = np.linalg.norm(a, axis=-1, keepdims=True)
        if not np.all(norm > 0) or not np.all(np.isfinite(a)):
            raise ValueError("spins must be finite and non-zero")
        if np.max(np.abs(norm - 1.0)) > 1e-12:  # unit spins are kept bit for bit (resuming)
            a /= norm
        return a

    @property
    def spins(self):
        """Current spins (ny, nx, 3), a read-only view.

        The sampler keeps its spins in the kernel's banded layout; this converts them on the
        first access after a sweep and caches the result until the next sweep, reusing one
        buffer (copy before keeping it). Assign to ``spins`` to change the state.
        """
        if self._g is not None:
            return self._g.spins
        if not self._host_ok:
            from_banded(self._work[3], self._host, self._work[2], self.parallel)
            self._host_ok = True
        view = self._host.view()
        view.setflags(write=False)
        return view

    @spins.setter
    def spins(self, value):
        if self._g is not None:
            self._g.set_spins(value)
            return
        self._host[...] = self._checked(value)
        to_banded(self._host, self._work[3], self._work[2], self._periodic, self.parallel)
        self._host_ok = True

    @property
    def state(self):
        """Resumable state: dict with spins (copy), sweep (int), sigma (float)."""
        out = {"spins": np.array(self.spins), "sweep": int(self.sweep_count),
               "sigma": float(self.sigma)}
        if self._cl is not None:
            out["clusters_per_sweep"] = int(self.clusters_per_sweep)
        return out

    @state.setter
    def state(self, value):
        self.spins = value["spins"]
        self.sweep_count = int(value["sweep"])
        self.sigma = float(value["sigma"])
        if self._cl is not None and "clusters_per_sweep" in value:
            self.clusters_per_sweep = int(value["clusters_per_sweep"])

    # ---------------------------------------------------------------- moves
    def _kernel_args(self):
        """Banded spins, work arrays, row count and model arguments for the banded kernels."""
        cbounds, chunks, bands, T, zc, buf, g, cnt = self._work
        return (T, zc, cbounds, chunks, bands, self.model.lattice.ny, self._code, self._periodic,
                self._jt, self._kt, self._axis, self._b)

    def sweep(self, n=1):
        """Make n sweeps at the current (frozen) sigma.

        Returns
        -------
        dict
            Acceptance ratios over these sweeps: "gaussian", "reflection", "over_relaxation",
            and with cluster moves "cluster" (accepted cluster flips) and "cluster_size" (mean
            sites per cluster).
        """
        n = int(n)
        self._counts[:] = 0
        self._cl_stats[:] = 0.0
        if n > 0 and self._g is not None:
            self._generic_series(1, n)
        elif n > 0:
            buf, g, cnt = self._work[5:]
            head = (*self._kernel_args(), self._beta, self.sigma, self.seed, self.stream,
                    self.sweep_count, n, self.reflection, self.n_or, self._counts, buf, g, cnt,
                    self.parallel)
            if self._cl is None:
                banded_sweeps(*head)
            else:
                self._mixed[0](*head, *self._cl[:6], self.clusters_per_sweep, *self._cl[6:],
                               self._cl_stats)
            self._host_ok = False
            self.sweep_count += n
        return self._acceptance(self._counts.sum(axis=0), max(n, 1))

    def _generic_series(self, n_samples, sample_every):
        out, self.sweep_count = self._g.series(
            n_samples, sample_every, self._beta, self.sigma, self.seed, self.stream,
            self.sweep_count, self.reflection, self.n_or)
        self._counts[:, :3] = self._g.counts
        return out

    def _acceptance(self, acc, n_sweeps):
        visits = n_sweeps * max(self._n_sites, 1)
        out = {"gaussian": acc[0] / visits,
               "reflection": acc[1] / visits if self.reflection else float("nan"),
               "over_relaxation": acc[2] / (visits * self.n_or) if self.n_or else float("nan")}
        if self._cl is not None:
            st = self._cl_stats
            made = max(st[0], 1.0)
            out["cluster"] = st[2] / made
            out["cluster_size"] = st[1] / made
            # improved estimator of <(r.m)^2> per spin (valid for B.r = 0), see kernels.wolff
            self.last_cluster_stats = {"clusters": int(st[0]), "mean_size": st[1] / made,
                                       "acceptance": st[2] / made,
                                       "m_r2_improved": st[3] / made / self._n_sites}
        return out
