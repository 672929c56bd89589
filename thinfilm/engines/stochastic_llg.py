"""The stochastic LLG driver of any film (a set of energy terms): time steps, linear T(t) and B(t)
protocols; fused kernels for a perfect film, generic per-site kernels otherwise."""

import math

import numpy as np

from thinfilm.config import threads
from thinfilm.engines._kernels.field import observables
from thinfilm.engines._kernels.llg import heun_run, heun_run_twopass, heun_work, twopass_work
from thinfilm.engines._kernels.llg_dipolar import added_work, heun_run_added
from thinfilm.engines._kernels.site_llg import (
    site_correct_stage,
    site_heun_run,
    site_heun_run_serial,
    site_heun_work,
    site_predict_stage,
)
from thinfilm.engines.film import as_terms, fast_model, film_measure, masked_spins
from thinfilm.input.errors import StabilityError
from thinfilm.input.units import GAMMA_E_RAD_PER_S_T, KB_J_PER_K, MEV_J
from thinfilm.model.labyrinth import labyrinth_spins
from thinfilm.model.parameters import Model
from thinfilm.model.site_parameters import SiteParameters
from thinfilm.model.term_set import TermSet

__all__ = ["LLGSimulation", "stable_time_step", "initial_spins", "measure"]

PARALLEL_MIN_SITES = 4096  # generic path: smaller lattices run single-threaded

# FFT precision of the dipolar field built for ``dipolar=True`` (scenario runs): single
# precision halves the FFT time; its field errors (~1e-7 of mu0 mu_s / 4 pi a^3) are far below
# the thermal field and the Heun truncation error. The spins and the local field stay float64.
DIPOLAR_PRECISION = "single"


def stable_time_step(model, temperature_K, damping, gamma=GAMMA_E_RAD_PER_S_T):
    """Largest time step (s) we recommend for Heun: precession and noise angles <= 0.1 rad per step.

    The deterministic limit is gamma/(1 + alpha^2) * B_max * dt <= 0.1 with
    B_max = z|J|/mu_s + 2|K|/mu_s + |B| (+ a bound of the dipolar field: sum_j of the norms of the
    pair tensors, point dipoles or prisms); the noise limit keeps the rms thermal rotation per step,
    sqrt(2 alpha kB T gamma dt / mu_s), at or below 0.1 rad. Common practice, not a sharp bound.
    A film that is not a uniform Model without DMI (SiteParameters, a TermSet) gets the same rule
    site by site (:func:`thinfilm.engines.film.film_stable_time_step`).
    """
    if not isinstance(model, Model) or model.dmi_J:
        from thinfilm.engines.film import as_terms, film_stable_time_step

        return film_stable_time_step(as_terms(model), temperature_K, damping, gamma)
    lat = model.lattice
    bmax = (lat.coordination * abs(model.exchange_T) + abs(model.anisotropy_T)
            + float(np.linalg.norm(model.field_T)))
    if model.dipolar:
        from thinfilm.engines.dipolar import dipolar_bound_T

        bmax += dipolar_bound_T(lat, model.moment_J_per_T, model.dipolar_thickness_nm)
    g = gamma / (1 + damping**2)
    dt_det = 0.1 / (g * bmax) if bmax > 0 else math.inf
    kt = KB_J_PER_K * temperature_K
    dt_noise = 0.01 * model.moment_J_per_T / (2 * damping * kt * gamma) if kt > 0 else math.inf
    return min(dt_det, dt_noise)


def initial_spins(lattice, kind, *, seed=0, axis=(0.0, 0.0, 1.0), width_nm=None):
    """Initial spin array (ny, nx, 3): 'random', 'up' (+axis), 'down', 'stripes', 'labyrinth'
    (domains ``width_nm`` wide, :func:`thinfilm.model.labyrinth.labyrinth_spins`) or an .npz
    path."""
    ny, nx = lattice.ny, lattice.nx
    if kind == "labyrinth":
        return labyrinth_spins(lattice, width_nm, seed=seed, axis=axis)
    n = np.asarray(axis, dtype=np.float64)
    n = n / np.linalg.norm(n)
    if kind == "random":
        rng = np.random.default_rng(np.random.SeedSequence([int(seed), 7]))
        s = rng.normal(size=(ny, nx, 3))
        return np.ascontiguousarray(s / np.linalg.norm(s, axis=-1, keepdims=True))
    if kind in ("up", "down"):
        s = np.empty((ny, nx, 3))
        s[...] = n if kind == "up" else -n
        return s
    if kind == "stripes":
        period = max(2, nx // 4)
        sign = np.where((np.arange(nx) // (period // 2 or 1)) % 2 == 0, 1.0, -1.0)
        s = np.empty((ny, nx, 3))
        s[...] = n
        s *= sign[None, :, None]
        return s
    with np.load(kind) as data:
        s = np.array(data["spins"], dtype=np.float64)
    if s.shape != (ny, nx, 3):
        raise ValueError(f"snapshot {kind} holds spins of shape {s.shape}, "
                         f"the lattice needs {(ny, nx, 3)}")
    norm = np.linalg.norm(s, axis=-1, keepdims=True)  # snapshots hold float32: renormalise
    return np.ascontiguousarray(np.divide(s, norm, out=np.zeros_like(s), where=norm > 0))


def measure(model, spins, work=None, field_T=None):
    """(m vector per spin (3,), energy per spin in meV) of a spin array."""
    code, periodic, jt, kt, axis = model.kernel_args()
    b = model.field_T if field_T is None else np.asarray(field_T, dtype=np.float64)
    if work is None:
        work = np.empty_like(spins)
    mx, my, mz, ex, an, ze = observables(spins, code, periodic, jt, kt, axis, b, work)
    n = spins.shape[0] * spins.shape[1]
    e = (ex + an + ze) * model.moment_J_per_T / n / MEV_J
    return np.array([mx, my, mz]) / n, e


class LLGSimulation:
    """Stochastic LLG (Heun) of a film given as energy terms.

    Parameters
    ----------
    model : Model, SiteParameters or TermSet
        The film (:mod:`thinfilm.model.terms`): a perfect film (Model), a disorder realisation
        (SiteParameters; the Model's DMI and dipolar field join it when passed as
        ``site_params`` with the Model), or any set of terms.
    temperature_K : float
        Bath temperature at t = 0 (K).
    damping : float
        Gilbert damping alpha (> 0 for a thermal bath).
    time_step_s : float
        Time step (s).
    seed : int
        Seeds the thermal noise (counter-based: the run is reproducible step by step).
    spins : ndarray (ny, nx, 3), optional
        Initial state (copied); default all along the anisotropy axis (each site's own axis).
    gamma : float
        Gyromagnetic ratio (rad s^-1 T^-1), default the free-electron value (CODATA 2018).
    dipolar : bool or DipolarField, optional
        Perfect film only: add the dipole-dipole field (:mod:`thinfilm.engines.dipolar`) to the
        effective field of both Heun stages. True builds ``DipolarField(model.lattice,
        model.moment_J_per_T, precision=DIPOLAR_PRECISION, thickness_nm=...)``; pass an
        instance for other options. None: as the model says. ``measure`` then includes the
        dipolar energy.
    site_params : SiteParameters, optional
        A disorder realisation of ``model``.
    parallel : bool or None
        Generic path: rows in parallel; None: for >= 4096 sites and more than one thread.
        Bitwise the same either way.

    Notes
    -----
    The driver picks its kernels once, at construction: the fused kernels of a perfect film
    (:mod:`thinfilm.engines._kernels.llg`, with the dipolar stages of ``llg_dipolar`` when the
    film has a dipolar field) whenever the terms reduce to a uniform Model without DMI
    (:meth:`thinfilm.model.terms.TermSet.uniform_model`); otherwise the generic per-site
    kernels of the packed form (:mod:`thinfilm.engines._kernels.site_llg`: exchange per bond,
    DMI, anisotropy per site, Zeeman maps, vacancies), with the dipolar field of the per-site
    moments added in each stage. ``path`` says which ("fused", "fused-dipolar", "generic",
    "generic-dipolar").
    """

    def __init__(self, model, *, temperature_K, damping, time_step_s, seed=1, spins=None,
                 gamma=GAMMA_E_RAD_PER_S_T, step=0, dipolar=None, site_params=None,
                 parallel=None):
        fast = fast_model(model, site_params)
        if fast is None and not isinstance(model, (Model, SiteParameters, TermSet)):
            raise TypeError("LLGSimulation needs a Model: call build_model(scenario) first")
        self.temperature_K = float(temperature_K)
        self.damping = float(damping)
        self.time_step_s = float(time_step_s)
        self.gamma = float(gamma)
        self.seed = int(seed)
        self.step = int(step)
        if fast is not None:
            self.model = fast
            self.terms = None
            self.params = None
            lat = fast.lattice
            if spins is None:
                spins = initial_spins(lat, "up", axis=fast.axis)
            self.spins = np.ascontiguousarray(np.array(spins, dtype=np.float64))
            if self.spins.shape != (lat.ny, lat.nx, 3):
                raise ValueError(f"spins must have shape {(lat.ny, lat.nx, 3)}, got "
                                 f"{self.spins.shape}")
            self.dipolar = _dipolar_field(fast, dipolar)
            self._alloc()
            return
        if dipolar not in (None, True) and not (dipolar is False and not _has_dipolar(model)):
            raise ValueError("pass the dipolar field as a term of the film (model.dipolar or a "
                             "Dipolar term); a DipolarField instance is for a perfect film")
        self.model = model if isinstance(model, Model) else None
        self.params = site_params if site_params is not None else (
            model if isinstance(model, SiteParameters) else None)
        self.terms = as_terms(model, site_params, dipolar_precision=DIPOLAR_PRECISION)
        self.dipolar = self.terms.dipolar
        lat = self.terms.lattice
        if spins is None:
            spins = self.terms.packed.axis.reshape(lat.ny, lat.nx, 3).copy()
            spins[~self.terms.occupied] = 1.0  # replaced by zeros in masked_spins
        self.spins = masked_spins(self.terms, spins)
        self._work = site_heun_work(lat.ny, lat.nx)
        if parallel is None:
            parallel = lat.n_sites >= PARALLEL_MIN_SITES and threads() > 1
        self.parallel = bool(parallel)
        self.path = "generic" if self.dipolar is None else "generic-dipolar"

    def _alloc(self):
        ny, nx = self.spins.shape[:2]
        self._meas = np.empty_like(self.spins)
        if self.dipolar is not None:
            self._fused = False
            self.path = "fused-dipolar"
            self._work = added_work(ny, nx)
            return
        self.path = "fused"
        nbands = min(max(1, threads()), ny // 2)
        self._fused = nbands >= 1
        if self._fused:
            self._nbands = nbands
            self._work = heun_work(ny, nx, nbands)
        else:
            self._work = twopass_work(ny, nx)

    @property
    def time_s(self):
        return self.step * self.time_step_s

    @property
    def _moment_ref(self):
        return self.model.moment_J_per_T if self.terms is None else self.terms.moment_ref_J_per_T

    def noise_sigma_coef(self):
        """sqrt(2 alpha kB / (gamma mu_ref dt)) in T/sqrt(K): the thermal-field std of a site of
        moment mu_ref is this * sqrt(T) (site i: times sqrt(mu_ref / mu_i))."""
        return math.sqrt(2 * self.damping * KB_J_PER_K
                         / (self.gamma * self._moment_ref * self.time_step_s))

    def stable_time_step(self, temperature_K):
        """The recommended largest step (s) for this film at a temperature (K)."""
        film = self.model if self.terms is None else self.terms
        return stable_time_step(film, temperature_K, self.damping, self.gamma)

    def advance(self, n_steps, *, temperature_K=None, temperature_rate_K_per_step=0.0,
                field_T=None, field_rate_T_per_step=None):
        """Advance n_steps; T and B start at the given values and change linearly per step."""
        if n_steps <= 0:
            return
        base = self.model.field_T if self.terms is None else self.terms.field_T
        t0 = self.temperature_K if temperature_K is None else float(temperature_K)
        b0 = base if field_T is None else np.asarray(field_T, dtype=np.float64)
        db = (np.zeros(3) if field_rate_T_per_step is None
              else np.asarray(field_rate_T_per_step, dtype=np.float64))
        gdt = self.gamma * self.time_step_s / (1 + self.damping**2)
        dtemp = float(temperature_rate_K_per_step)
        if self.terms is not None:
            self._advance_generic(int(n_steps), t0, dtemp, b0, db, gdt)
        else:
            code, periodic, jt, kt, axis = self.model.kernel_args()
            args = (self.spins, int(n_steps), self.step, self.seed, code, periodic, jt, kt, axis,
                    b0, db, t0, dtemp, self.noise_sigma_coef(), gdt, self.damping)
            if self.dipolar is not None:
                dip = self.dipolar
                heun_run_added(*args, dip.transform_gathered, dip.gather_buffer(),
                               *dip.lattice.period, *self._work)
            elif self._fused:
                heun_run(*args, self._nbands, *self._work)
            else:
                heun_run_twopass(*args, *self._work)
        self.step += int(n_steps)
        if not np.isfinite(self.spins).all():
            dt_ok = self.stable_time_step(max(t0, 1e-9))
            raise StabilityError(
                f"the spins became NaN at step {self.step}: the time step "
                f"{self.time_step_s * 1e15:g} fs is too large; use at most about "
                f"{dt_ok * 1e15:.3g} fs",
                suggested_time_step_fs=dt_ok * 1e15)

    def _advance_generic(self, n_steps, t0, dtemp, b0, db, gdt):
        """The generic kernels; with a dipolar term the field is evaluated by FFT at the
        start-of-step spins (predictor) and at the predictor (corrector)."""
        ts = self.terms
        nbr, jt, dm, kt, axis, bs, occ = ts.kernel_arrays
        s = self.spins.reshape(-1, 3)
        nx = ts.lattice.nx
        coef = self.noise_sigma_coef()
        if self.dipolar is None:
            run = site_heun_run if self.parallel else site_heun_run_serial
            run(s, nx, n_steps, self.step, self.seed, nbr, jt, dm, kt, axis, bs, occ,
                ts.noise_scale, b0, db, t0, dtemp, coef, gdt, self.damping, *self._work)
            return
        sp, d1, nz = self._work
        dip = self.dipolar
        hd = np.empty_like(self.spins)
        for st in range(n_steps):
            sigma = coef * math.sqrt(max(t0 + dtemp * st, 0.0))
            b = b0 + db * st
            dip.field_T(self.spins, hd)
            site_predict_stage(s, nx, self.step + st, self.seed, nbr, jt, dm, kt, axis, bs,
                               hd.reshape(-1, 3), occ, ts.noise_scale, b[0], b[1], b[2], sigma,
                               gdt, self.damping, sp, d1, nz)
            dip.field_T(sp.reshape(self.spins.shape), hd)
            site_correct_stage(s, nx, nbr, jt, dm, kt, axis, bs, hd.reshape(-1, 3), occ, b[0],
                               b[1], b[2], gdt, self.damping, sp, d1, nz)

    def measure(self, field_T=None):
        """(m vector per spin, energy per spin in meV) at the current state (with dipolar);
        per occupied site on a film with vacancies."""
        if self.terms is not None:
            return film_measure(self.terms, self.spins, field_T)
        m, e = measure(self.model, self.spins, self._meas, field_T)
        if self.dipolar is not None:
            e += self.dipolar.energy(self.spins) / self.model.lattice.n_sites / MEV_J
        return m, e


def _has_dipolar(film):
    return bool(getattr(film, "dipolar", False))


def _dipolar_field(model, dipolar, precision=DIPOLAR_PRECISION):
    """None, or the DipolarField of the model (``dipolar`` True or a DipolarField of it);
    True builds one with FFTs in ``precision``."""
    if dipolar is None:
        dipolar = model.dipolar
    if dipolar is False:
        return None
    from thinfilm.engines.dipolar import DipolarField

    if dipolar is True:  # single-precision FFTs: field errors ~1e-7 of the dipolar scale
        return DipolarField(model.lattice, model.moment_J_per_T, precision=precision,
                            thickness_nm=model.dipolar_thickness_nm)
    if not isinstance(dipolar, DipolarField):
        raise TypeError("dipolar must be True, False/None or a DipolarField")
    if dipolar.lattice != model.lattice or dipolar.moment_J_per_T != model.moment_J_per_T:
        raise ValueError("the DipolarField was built for another lattice or moment than the model")
    if dipolar.thickness_nm != model.dipolar_thickness_nm:
        raise ValueError(f"the DipolarField has site thickness {dipolar.thickness_nm} nm, the "
                         f"model {model.dipolar_thickness_nm} nm (None: point dipoles)")
    return dipolar
