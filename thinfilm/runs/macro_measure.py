"""Macroscopic film parameters measured by Monte Carlo on the atomistic film.

At each temperature of a sweep (Metropolis with axis reflections, :class:`MonteCarlo`) on an
L x L periodic square lattice of spacing a, film thickness t, moment mu_s = Ms(0) a^2 t per
site and easy axis z:

* m_e(T) = <|m|>, the film's mean reduced magnetisation (m = mean spin);
* chi_par = N mu_s var(|m_z|) / (kB T) (and chi_zz = N mu_s <m_z^2> / (kB T), the
  susceptibility of a film without order, used by the sweep above Tc) and
  chi_perp = N mu_s <m_x^2 + m_y^2> / (2 kB T), in 1/T
  (response of the reduced magnetisation to a field in tesla; fluctuation-dissipation);
* K(T) and A(T) from the transverse structure factor. The free energy of slow transverse
  deviations u of the unit vector m / m_e is t int [A(T) (grad u)^2 + K(T) u^2] d^2r, so per
  spin component (equipartition)

      S_perp(k) = (1/N) <|sum_j S_j,x exp(i k.r_j)|^2> = kB T m_e^2 / (2 a^2 t (K + A q_k^2))

  with q_k^2 = (4 - 2 cos k_x a - 2 cos k_y a) / a^2 (the lattice Laplacian; -> k^2). A linear
  fit of 1 / S_perp against q_k^2 over the smallest wave vectors (k = 0 included: S_perp(0)
  is N <m_x^2>) gives K(T) from the intercept and A(T) from the slope. K(T) so defined is the
  macroscopic anisotropy of the uniformly rotated film (chi_perp = Ms(0) m_e^2 / (2 K)), the
  quantity of the Callen and Callen law (J. Phys. Chem. Solids 27, 1271 (1966)).

Errors: jackknife over 10 blocks of the time series (blocks longer than the autocorrelation
time; the warm-up is discarded).
"""

import numpy as np

from thinfilm.engines.montecarlo import MonteCarlo
from thinfilm.input.units import KB_J_PER_K
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model

__all__ = ["AtomisticFilm", "measure_point", "N_BLOCKS", "K_SHELLS"]

N_BLOCKS = 10
K_SHELLS = 4  # wave vectors used in the fit: |n| in lattice units up to this shell


class AtomisticFilm:
    """The atomistic film whose parameters are measured: square lattice, easy axis z.

    Parameters are the lattice spacing a (nm), thickness t (nm), moment mu_s (J/T), exchange J
    per bond (J) and anisotropy K per site (J).
    """

    def __init__(self, spacing_nm, thickness_nm, moment_J_per_T, exchange_J, anisotropy_J):
        if not (spacing_nm > 0 and thickness_nm > 0 and moment_J_per_T > 0 and exchange_J > 0
                and anisotropy_J > 0):
            raise ValueError("the atomistic film needs positive spacing, thickness, moment, "
                             "exchange and easy-axis anisotropy")
        self.spacing_nm = float(spacing_nm)
        self.thickness_nm = float(thickness_nm)
        self.moment_J_per_T = float(moment_J_per_T)
        self.exchange_J = float(exchange_J)
        self.anisotropy_J = float(anisotropy_J)

    @property
    def cell_volume_m3(self):
        return (self.spacing_nm * 1e-9) ** 2 * self.thickness_nm * 1e-9

    @property
    def ms0_A_per_m(self):
        """Ms(0) = mu_s / (a^2 t)."""
        return self.moment_J_per_T / self.cell_volume_m3

    @property
    def a0_J_per_m(self):
        """A(0) = J / (2 t) (square lattice, bonds counted once)."""
        return self.exchange_J / (2 * self.thickness_nm * 1e-9)

    @property
    def k0_J_per_m3(self):
        """K(0) = K / (a^2 t)."""
        return self.anisotropy_J / self.cell_volume_m3

    def model(self, L):
        lat = Lattice("square", L, L, self.spacing_nm, True)
        return Model(lat, self.moment_J_per_T, self.exchange_J, self.anisotropy_J)

    def describe(self):
        return {"spacing_nm": self.spacing_nm, "thickness_nm": self.thickness_nm,
                "moment_J_per_T": self.moment_J_per_T, "exchange_J": self.exchange_J,
                "anisotropy_J": self.anisotropy_J, "Ms0_A_per_m": self.ms0_A_per_m,
                "A0_J_per_m": self.a0_J_per_m, "K0_J_per_m3": self.k0_J_per_m3}


def _shell_vectors(L, shells):
    """Integer wave vectors (nx, ny) with |n| <= shells (n != 0 and n = 0), one per +-k pair
    is not needed: all are kept (both give the same |S|)."""
    out = []
    for nx in range(-shells, shells + 1):
        for ny in range(-shells, shells + 1):
            if nx * nx + ny * ny <= shells * shells:
                out.append((nx % L, ny % L, nx, ny))
    return out


def _jackknife(values_fn, blocks):
    """Jackknife mean and error of values_fn(list of blocks) -> ndarray."""
    full = values_fn(blocks)
    n = len(blocks)
    leave = np.array([values_fn(blocks[:i] + blocks[i + 1:]) for i in range(n)])
    err = np.sqrt((n - 1) / n * np.sum((leave - leave.mean(axis=0)) ** 2, axis=0))
    return full, err


def measure_point(film, L, temperature_K, *, seed, warmup=1000, samples=2000, every=2,
                  initial="ordered", state=None):
    """Measure the macroscopic parameters at one temperature.

    Returns (dict of values and their errors in SI units, final spins).
    """
    model = film.model(L)
    mc = MonteCarlo(model, temperature_K, seed=seed, initial_spins=(
        state if state is not None else initial))
    mc.warmup(warmup)
    n = L * L
    a = film.spacing_nm * 1e-9
    shells = _shell_vectors(L, K_SHELLS)
    ix = np.array([s[0] for s in shells])
    iy = np.array([s[1] for s in shells])
    q2 = np.array([(4 - 2 * np.cos(2 * np.pi * s[2] / L) - 2 * np.cos(2 * np.pi * s[3] / L))
                   for s in shells]) / a**2
    m_abs, m_z, m_perp2, s_perp = [], [], [], []
    for _ in range(samples):
        mc.sweep(every)
        sp = mc.spins
        m = sp.reshape(-1, 3).mean(axis=0)
        m_abs.append(np.linalg.norm(m))
        m_z.append(abs(m[2]))
        m_perp2.append(m[0] ** 2 + m[1] ** 2)
        fx = np.fft.fft2(sp[:, :, 0])
        fy = np.fft.fft2(sp[:, :, 1])
        s_perp.append(0.5 * (np.abs(fx[iy, ix]) ** 2 + np.abs(fy[iy, ix]) ** 2) / n)
    m_abs, m_z, m_perp2 = map(np.asarray, (m_abs, m_z, m_perp2))
    s_perp = np.asarray(s_perp)
    kt = KB_J_PER_K * temperature_K
    mu = film.moment_J_per_T
    vol_site = film.cell_volume_m3
    nb = N_BLOCKS
    idx = np.array_split(np.arange(samples), nb)
    blocks = [(m_abs[i], m_z[i], m_perp2[i], s_perp[i]) for i in idx]

    def values(bl):
        ma = np.concatenate([b[0] for b in bl])
        mz = np.concatenate([b[1] for b in bl])
        mp = np.concatenate([b[2] for b in bl])
        sk = np.concatenate([b[3] for b in bl]).mean(axis=0)
        me = ma.mean()
        chi_par = n * mu * mz.var() / kt
        chi_perp = n * mu * mp.mean() / (2 * kt)
        # 1 / S_perp = (2 V_site / (kT m_e^2)) (K + A q^2): straight line in q^2
        y = 1.0 / sk
        slope, icpt = np.polyfit(q2, y, 1)
        c = 2 * vol_site / (kt * me**2)
        chi_zz = n * mu * np.mean(mz * mz) / kt  # zero-mean form, for rows above Tc
        return np.array([me, mz.mean(), chi_par, chi_perp, icpt / c, slope / c, chi_zz])

    val, err = _jackknife(values, blocks)
    # transverse structure factor per film area (nm^2) on the shells |n|^2, k = 2 pi |n| / L a
    n2 = np.array([s[2] ** 2 + s[3] ** 2 for s in shells])
    shell_n2 = np.unique(n2[n2 > 0])
    sk_blocks = np.array([s_perp[i].mean(axis=0) for i in idx])
    per_shell = np.array([sk_blocks[:, n2 == v].mean(axis=1) for v in shell_n2]).T
    sk_mean = per_shell.mean(axis=0) * film.spacing_nm**2
    sk_err = per_shell.std(axis=0, ddof=1) / np.sqrt(nb) * film.spacing_nm**2
    names = ["m_e", "m_z_abs", "chi_par_per_T", "chi_perp_per_T", "K_J_per_m3", "A_J_per_m",
             "chi_zz_per_T"]
    out = {"temperature_K": float(temperature_K), "L": int(L),
           "k_per_nm": (2 * np.pi * np.sqrt(shell_n2) / (L * film.spacing_nm)).tolist(),
           "s_perp_nm2": sk_mean.tolist(), "s_perp_nm2_err": sk_err.tolist()}
    for k, name in enumerate(names):
        out[name] = float(val[k])
        out[name + "_err"] = float(err[k])
    return out, np.array(mc.spins)
