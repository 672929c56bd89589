"""Stochastic LLG driver: time steps, linear T(t) and B(t) protocols, samples as a generator."""

import math

import numpy as np

from thinfilm.config import threads
from thinfilm.engines._kernels.field import observables
from thinfilm.engines._kernels.llg import heun_run, heun_run_twopass, heun_work, twopass_work
from thinfilm.engines._kernels.llg_dipolar import added_work, heun_run_added
from thinfilm.input.dipolar_spec import POINT_DIPOLE_SUM  # sum' (a / r)^3 per lattice
from thinfilm.input.errors import StabilityError
from thinfilm.input.units import GAMMA_E_RAD_PER_S_T, KB_J_PER_K, MEV_J
from thinfilm.model.labyrinth import labyrinth_spins
from thinfilm.model.parameters import Model

__all__ = ["LLGSimulation", "stable_time_step", "initial_spins", "measure"]

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
    """
    lat = model.lattice
    bmax = lat.coordination * abs(model.exchange_T) + abs(model.anisotropy_T) + float(np.linalg.norm(model.field_T))
    if model.dipolar:  # bound of the dipolar field: 2 mu0 mu_s/(4 pi a^3) x sum' r^-3
        from thinfilm.engines.dipolar import dipolar_constant_T

        if model.dipolar_thickness_nm is None:
            bmax += 2.0 * POINT_DIPOLE_SUM[lat.shape] * dipolar_constant_T(model.moment_J_per_T,
                                                                       lat.spacing_nm)
        else:  # prism sites: sum_j ||P_ij|| (self term included) in units of 1/a^3
            from thinfilm.model.prism_tensor import field_norm_sum

            a = lat.spacing_nm
            bmax += field_norm_sum(a, model.dipolar_thickness_nm) * a**3 * dipolar_constant_T(
                model.moment_J_per_T, a)
    g = gamma / (1 + damping**2)
    dt_det = 0.1 / (g * bmax) if bmax > 0 else math.inf
    kt = KB_J_PER_K * temperature_K
    dt_noise = 0.01 * model.moment_J_per_T / (2 * damping * kt * gamma) if kt > 0 else math.inf
    return min(dt_det, dt_noise)


def initial_spins(lattice, kind, *, seed=0, axis=(0.0, 0.0, 1.0), width_nm=None):
    """Initial spin array (ny, nx, 3): 'random', 'up' (+axis), 'down', 'stripes', 'labyrinth'
    (domains ``width_nm`` wide, :func:`thinfilm.model.labyrinth.labyrinth_spins`) or an .npz path."""
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
        raise ValueError(f"snapshot {kind} holds spins of shape {s.shape}, the lattice needs {(ny, nx, 3)}")
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
    """Stochastic LLG (Heun) on a Model.

    Parameters
    ----------
    model : Model
    temperature_K : float
        Bath temperature at t = 0 (K).
    damping : float
        Gilbert damping alpha (> 0 for a thermal bath).
    time_step_s : float
        Time step (s).
    seed : int
        Seeds the thermal noise (counter-based: the run is reproducible step by step).
    spins : ndarray (ny, nx, 3), optional
        Initial state (copied); default all along the anisotropy axis.
    gamma : float
        Gyromagnetic ratio (rad s^-1 T^-1), default the free-electron value (CODATA 2018).
    dipolar : bool or DipolarField, optional
        Add the dipole-dipole field (:mod:`thinfilm.engines.dipolar`) to the effective field of both
        Heun stages. True builds ``DipolarField(model.lattice, model.moment_J_per_T,
        precision=DIPOLAR_PRECISION, thickness_nm=model.dipolar_thickness_nm)`` (single-
        precision FFTs); pass an instance for other options (e.g. ``precision="double"``). Off
        by default: the local-field kernels run unchanged. ``measure`` then includes the
        dipolar energy.
    """

    def __init__(self, model, *, temperature_K, damping, time_step_s, seed=1, spins=None,
                 gamma=GAMMA_E_RAD_PER_S_T, step=0, dipolar=None):
        if not isinstance(model, Model):
            raise TypeError("LLGSimulation needs a Model: call build_model(scenario) first")
        self.model = model
        self.temperature_K = float(temperature_K)
        self.damping = float(damping)
        self.time_step_s = float(time_step_s)
        self.gamma = float(gamma)
        self.seed = int(seed)
        self.step = int(step)
        lat = model.lattice
        if spins is None:
            spins = initial_spins(lat, "up", axis=model.axis)
        self.spins = np.ascontiguousarray(np.array(spins, dtype=np.float64))
        if self.spins.shape != (lat.ny, lat.nx, 3):
            raise ValueError(f"spins must have shape {(lat.ny, lat.nx, 3)}, got {self.spins.shape}")
        self.dipolar = _dipolar_field(model, dipolar)
        self._alloc()

    def _alloc(self):
        ny, nx = self.spins.shape[:2]
        self._meas = np.empty_like(self.spins)
        if self.dipolar is not None:
            self._fused = False
            self._work = added_work(ny, nx)
            return
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

    def noise_sigma_coef(self):
        """sqrt(2 alpha kB / (gamma mu_s dt)) in T/sqrt(K): the thermal-field std is this * sqrt(T)."""
        m = self.model
        return math.sqrt(2 * self.damping * KB_J_PER_K / (self.gamma * m.moment_J_per_T * self.time_step_s))

    def advance(self, n_steps, *, temperature_K=None, temperature_rate_K_per_step=0.0,
                field_T=None, field_rate_T_per_step=None):
        """Advance n_steps; T and B start at the given values and change linearly per step."""
        if n_steps <= 0:
            return
        m = self.model
        code, periodic, jt, kt, axis = m.kernel_args()
        t0 = self.temperature_K if temperature_K is None else float(temperature_K)
        b0 = m.field_T if field_T is None else np.asarray(field_T, dtype=np.float64)
        db = np.zeros(3) if field_rate_T_per_step is None else np.asarray(field_rate_T_per_step, dtype=np.float64)
        gdt = self.gamma * self.time_step_s / (1 + self.damping**2)
        args = (self.spins, int(n_steps), self.step, self.seed, code, periodic, jt, kt, axis, b0, db,
                t0, float(temperature_rate_K_per_step), self.noise_sigma_coef(), gdt, self.damping)
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
            dt_ok = stable_time_step(m, max(t0, 1e-9), self.damping, self.gamma)
            raise StabilityError(
                f"the spins became NaN at step {self.step}: the time step {self.time_step_s * 1e15:g} fs "
                f"is too large; use at most about {dt_ok * 1e15:.3g} fs",
                suggested_time_step_fs=dt_ok * 1e15)

    def measure(self, field_T=None):
        """(m vector per spin, energy per spin in meV) at the current state (with dipolar)."""
        m, e = measure(self.model, self.spins, self._meas, field_T)
        if self.dipolar is not None:
            e += self.dipolar.energy(self.spins) / self.model.lattice.n_sites / MEV_J
        return m, e


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
