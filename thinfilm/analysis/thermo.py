"""Thermodynamic averages of Monte Carlo time series with autocorrelation-aware error bars.

Methods: integrated autocorrelation time by Sokal's automatic windowing (A. D. Sokal, in
*Functional Integration*, Plenum 1997), error of the mean by Flyvbjerg-Petersen blocking
(J. Chem. Phys. 91, 461, 1989), and errors of nonlinear estimators (susceptibility, specific
heat, Binder cumulant) by the jackknife over blocks longer than the autocorrelation time.
"""

import math
import warnings

import numpy as np

from thinfilm.input.errors import ThinFilmWarning
from thinfilm.input.units import KB_J_PER_K, MEV_J

__all__ = ["autocorrelation", "integrated_autocorrelation_time", "blocking_error",
           "jackknife", "thermodynamics", "histogram_reweighting"]

MIN_EFFECTIVE = 50


def _series(x):
    x = np.asarray(x, dtype=np.float64).ravel()
    if x.size < 4:
        raise ValueError(f"a time series needs at least 4 samples; got {x.size}")
    if not np.all(np.isfinite(x)):
        raise ValueError("the time series contains non-finite values")
    return x


def autocorrelation(x):
    """Normalised autocorrelation function rho(t), t = 0 .. N-1, by FFT (zero padded)."""
    x = _series(x)
    n = x.size
    d = x - x.mean()
    f = np.fft.rfft(d, 2 * n)
    acf = np.fft.irfft(f * np.conj(f), 2 * n)[:n] / n
    scale = np.max(np.abs(x))
    if acf[0] <= (1e-12 * scale) ** 2:  # constant up to rounding: no correlations to measure
        return np.concatenate([[1.0], np.zeros(n - 1)])
    return acf / acf[0]


def integrated_autocorrelation_time(x, c=5.0):
    """Integrated autocorrelation time tau_int = 1/2 + sum_{t>=1} rho(t) (in samples).

    Sokal's automatic window: the sum is cut at the smallest W with W >= c * tau_int(W).
    The variance of the mean is then 2 tau_int var(x)/N.

    Parameters
    ----------
    x : array_like
        Time series (one sample per entry).
    c : float
        Window constant (5-6 is usual; c = 5 by default).

    Returns
    -------
    float
        tau_int in samples (0.5 for uncorrelated data; a constant series returns 0.5).
    """
    rho = autocorrelation(x)
    tau = np.cumsum(rho) - 0.5  # tau[W] = 1/2 + sum_{t=1}^{W} rho(t)
    w = np.arange(rho.size)
    ok = np.nonzero(w >= c * tau)[0]
    wmax = ok[0] if ok.size else rho.size - 1
    return float(max(tau[wmax], 0.5))


def blocking_error(x, return_levels=False):
    """Standard error of the mean of a correlated series by Flyvbjerg-Petersen blocking.

    The series is halved repeatedly by averaging neighbour pairs; at level k the naive error
    e_k = sqrt(var_k/(n_k - 1)) has its own uncertainty d_k = e_k/sqrt(2(n_k - 1)). The result
    is e_k at the first level (with >= 16 blocks) that no later level with >= 16 blocks
    exceeds by more than 2 d_m, i.e. the start of the plateau.

    Parameters
    ----------
    x : array_like
        Time series.
    return_levels : bool
        Also return the arrays (e_k, d_k, n_k) of all levels.

    Returns
    -------
    float, or (float, dict)
    """
    x = _series(x)
    errs, derr, ns = [], [], []
    while x.size >= 2:
        n = x.size
        var = x.var()
        e = math.sqrt(var / (n - 1))
        errs.append(e)
        derr.append(e / math.sqrt(2.0 * (n - 1)))
        ns.append(n)
        x = 0.5 * (x[0:n - n % 2:2] + x[1:n - n % 2:2])
    errs = np.array(errs)
    derr = np.array(derr)
    ns = np.array(ns)
    usable = np.nonzero(ns >= 16)[0]
    if usable.size == 0:
        usable = np.array([0])
    chosen = usable[-1]
    for k in usable:
        later = usable[usable > k]
        if later.size == 0 or np.all(errs[later] - 2.0 * derr[later] <= errs[k]):
            chosen = k
            break
    result = float(errs[chosen])
    if return_levels:
        return result, {"error": errs, "error_err": derr, "n_blocks": ns, "level": int(chosen)}
    return result


def jackknife(columns, func, n_blocks):
    """Jackknife estimate and error of func(means) over contiguous blocks.

    Parameters
    ----------
    columns : ndarray (N, k)
        Time series of the k primary quantities.
    func : callable
        Maps a length-k vector of means to a scalar or 1D array of derived quantities.
    n_blocks : int
        Number of blocks (the tail that does not fill a block is dropped).

    Returns
    -------
    value, error : ndarrays
        func of the full-sample means and the jackknife standard errors.
    """
    a = np.asarray(columns, dtype=np.float64)
    a = a.reshape(a.shape[0], -1)
    n_blocks = int(max(2, min(n_blocks, a.shape[0])))
    size = a.shape[0] // n_blocks
    a = a[: size * n_blocks]
    sums = a.reshape(n_blocks, size, -1).sum(axis=1)
    total = sums.sum(axis=0)
    value = np.asarray(func(total / a.shape[0]), dtype=np.float64)
    loo = (total[None, :] - sums) / (a.shape[0] - size)
    fj = np.array([np.asarray(func(m), dtype=np.float64) for m in loo])
    err = np.sqrt((n_blocks - 1) / n_blocks * np.sum((fj - fj.mean(axis=0)) ** 2, axis=0))
    return value, err


def thermodynamics(energy_per_spin_J, m_order, m_vector, n_sites, temperature_K, *,
                   max_blocks=64):
    """Equilibrium averages with errors from one temperature's time series.

    Parameters
    ----------
    energy_per_spin_J : array_like (N,)
        Energy per spin (J) at each sample.
    m_order : array_like (N,)
        Order parameter per spin (e.g. m along the anisotropy axis; sign is irrelevant).
    m_vector : array_like (N, 3)
        Mean spin vector per sample.
    n_sites : int
        Number of spins N_s.
    temperature_K : float
        Temperature (K).
    max_blocks : int
        Upper limit of jackknife blocks (blocks are at least 4 tau_int long).

    Returns
    -------
    dict
        m_abs = <abs(m_order)>, m_norm = <abs(m_vector)>, susceptibility =
        N_s (<m^2> - <abs(m)>^2)/(kB T) of m_order (per spin, 1/meV), susceptibility_norm (same
        with abs(m_vector)), specific_heat = N_s (<e^2> - <e>^2)/(kB T)^2 (per spin, units of
        kB), energy_meV = <e> (per spin), binder = 1 - <m^4>/(3 <m^2>^2) of m_order; each
        with "_err". Also tau_int (samples; the largest over e, abs(m), m^2, abs(m_vector)),
        n_effective = N/(2 tau_int), n_blocks, n_samples.

    Warns
    -----
    ThinFilmWarning
        When n_effective < 50 (error bars unreliable).
    """
    e = _series(energy_per_spin_J)
    m = _series(m_order)
    mv = np.asarray(m_vector, dtype=np.float64).reshape(-1, 3)
    if not (e.size == m.size == mv.shape[0]):
        raise ValueError("energy, m_order and m_vector need the same number of samples")
    if not temperature_K > 0:
        raise ValueError("temperature must be positive (K)")
    n = e.size
    kt_j = KB_J_PER_K * float(temperature_K)
    kt_mev = kt_j / MEV_J
    ns = float(n_sites)
    am = np.abs(m)
    mn = np.linalg.norm(mv, axis=1)
    taus = [integrated_autocorrelation_time(y) for y in (e, am, m * m, mn)]
    tau = max(taus)
    n_eff = n / (2.0 * tau)
    if n_eff < MIN_EFFECTIVE:
        warnings.warn(f"only {n_eff:.0f} effectively independent samples (tau_int = {tau:.1f} "
                      f"samples of {n}); error bars are unreliable: sample longer",
                      ThinFilmWarning, stacklevel=2)
    block = max(1, int(math.ceil(4.0 * tau)))
    n_blocks = int(max(2, min(max_blocks, n // block)))
    e0 = e.mean()  # shift the energy for precise variances
    de = (e - e0) / kt_j
    cols = np.column_stack([am, m * m, m**4, mn, mn * mn, de, de * de])

    def derived(v):
        a, m2, m4, nm, nm2, d1, d2 = v
        return np.array([a, nm, ns * (m2 - a * a) / kt_mev, ns * (nm2 - nm * nm) / kt_mev,
                         ns * (d2 - d1 * d1), (e0 + d1 * kt_j) / MEV_J,
                         1.0 - m4 / (3.0 * m2 * m2) if m2 > 0 else 0.0])

    val, err = jackknife(cols, derived, n_blocks)
    names = ["m_abs", "m_norm", "susceptibility", "susceptibility_norm", "specific_heat",
             "energy_meV", "binder"]
    out = {}
    for k, name in enumerate(names):
        out[name] = float(val[k])
        out[name + "_err"] = float(err[k])
    out.update({"tau_int": float(tau), "n_effective": float(n_eff), "n_blocks": n_blocks,
                "n_samples": n, "temperature_K": float(temperature_K)})
    return out


def histogram_reweighting(energy_per_spin_J, values, n_sites, temperature_K, new_temperatures_K):
    """Single-histogram reweighting of averages to nearby temperatures.

    <O>_T' = sum O_i w_i / sum w_i with w_i = exp(-(1/(kB T') - 1/(kB T)) N E_i), E_i the
    energy per spin of sample i. Reliable only while T' stays within about one energy
    standard deviation of T (the sampled histogram must cover the reweighted one).

    Parameters
    ----------
    energy_per_spin_J : array_like (N,)
        Energy per spin (J) of each sample, drawn at temperature_K.
    values : array_like (N,) or (N, k)
        Observables to average (e.g. columns m^2, m^4).
    n_sites : int
    temperature_K : float
        Simulation temperature (K).
    new_temperatures_K : array_like (n_T,)
        Target temperatures (K).

    Returns
    -------
    ndarray (n_T,) or (n_T, k)
        Reweighted averages.
    """
    e = _series(energy_per_spin_J)
    v = np.asarray(values, dtype=np.float64)
    flat = v.ndim == 1
    v = v.reshape(e.size, -1)
    tn = np.atleast_1d(np.asarray(new_temperatures_K, dtype=np.float64))
    big_e = float(n_sites) * (e - e.mean())
    out = np.empty((tn.size, v.shape[1]))
    for k, t in enumerate(tn):
        dbeta = 1.0 / (KB_J_PER_K * t) - 1.0 / (KB_J_PER_K * float(temperature_K))
        x = -dbeta * big_e
        w = np.exp(x - x.max())
        out[k] = w @ v / w.sum()
    return out[:, 0] if flat else out
