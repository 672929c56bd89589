"""Fused and two-pass Heun kernels against the NumPy reference; noise; thermal equilibrium."""

import math

import numba
import numpy as np
import pytest
import reference

from thinfilm.engines._kernels.llg import (
    heun_run,
    heun_run_twopass,
    heun_work,
    noise_field,
    twopass_work,
)
from thinfilm.model.lattice import Lattice

# (shape, nx, ny, periodic): tiny, odd and one-row/one-column grids, both edge kinds
CASES = [
    ("square", 1, 5, True), ("square", 1, 5, False), ("square", 5, 1, True),
    ("square", 6, 1, False), ("square", 2, 2, True), ("square", 2, 2, False),
    ("square", 3, 5, True), ("square", 3, 5, False), ("square", 4, 6, True),
    ("square", 7, 9, False), ("square", 9, 4, True),
    ("triangular", 1, 4, True), ("triangular", 2, 2, True), ("triangular", 3, 5, False),
    ("triangular", 5, 4, True), ("triangular", 4, 6, False), ("triangular", 7, 6, True),
    ("triangular", 5, 1, False),
    ("honeycomb", 2, 2, True), ("honeycomb", 2, 2, False), ("honeycomb", 3, 5, False),
    ("honeycomb", 4, 6, True), ("honeycomb", 6, 4, True), ("honeycomb", 5, 7, False),
    ("honeycomb", 1, 6, False),
]
ALPHA = 0.3
GAMMA = 1.7
DT = 0.01


_spins = reference.random_spins
_params = reference.kernel_params  # jt, kt (T), axis, field (T)


def _run(s, lat, n_steps, step0, seed, temp0, dtemp, b0, db, sigma_coef, *, fused, nbands=None):
    jt, kt, axis, _ = _params()
    gdt = GAMMA * DT / (1 + ALPHA**2)
    args = (s, n_steps, step0, seed, lat.code, lat.periodic, jt, kt, axis, b0, db, temp0, dtemp,
            sigma_coef, gdt, ALPHA)
    ny, nx = s.shape[:2]
    if fused:
        nb_ = nbands or min(numba.get_num_threads(), ny // 2)
        heun_run(*args, nb_, *heun_work(ny, nx, nb_))
    else:
        heun_run_twopass(*args, *twopass_work(ny, nx))


def _reference_steps(lat, s, n_steps, step0, seed, temp0, dtemp, b0, db, sigma_coef):
    jt, kt, axis, _ = _params()
    ny, nx = s.shape[:2]
    s = s.copy()
    for n in range(n_steps):
        sigma = sigma_coef * math.sqrt(max(temp0 + dtemp * n, 0.0))
        noise = np.zeros_like(s)
        noise_field(ny, nx, seed, step0 + n, sigma, noise)
        s = reference.heun_step(lat, s, noise, DT, gamma=GAMMA, alpha=ALPHA, exchange_T=jt,
                                anisotropy_T=kt, axis=axis, field_T=b0 + db * n)
    return s


@pytest.mark.parametrize("shape,nx,ny,periodic", CASES)
def test_heun_matches_reference(rng, shape, nx, ny, periodic):
    lat = Lattice(shape, nx, ny, 0.3, periodic)
    s0 = _spins(rng, ny, nx)
    b0 = np.array([0.1, -0.25, 0.4])
    db = np.array([0.01, 0.0, -0.02])
    kw = dict(n_steps=3, step0=11, seed=5, temp0=2.0, dtemp=0.5, b0=b0, db=db, sigma_coef=0.7)
    ref = _reference_steps(lat, s0, **kw)
    s2 = s0.copy()
    _run(s2, lat, fused=False, **kw)
    np.testing.assert_allclose(s2, ref, rtol=0, atol=1e-13)
    if ny >= 2:
        s1 = s0.copy()
        _run(s1, lat, fused=True, **kw)
        np.testing.assert_array_equal(s1, s2)  # fused and two-pass agree bitwise


@pytest.mark.parametrize("shape,nx,ny,periodic", [c for c in CASES if c[2] >= 2])
def test_deterministic_step_matches_reference(rng, shape, nx, ny, periodic):
    lat = Lattice(shape, nx, ny, 0.3, periodic)
    s0 = _spins(rng, ny, nx)
    b0 = np.array([0.1, -0.25, 0.4])
    kw = dict(n_steps=1, step0=0, seed=1, temp0=0.0, dtemp=0.0, b0=b0, db=np.zeros(3),
              sigma_coef=0.7)
    ref = _reference_steps(lat, s0, **kw)
    s1 = s0.copy()
    _run(s1, lat, fused=True, **kw)
    np.testing.assert_allclose(s1, ref, rtol=0, atol=1e-14)


@pytest.mark.parametrize("shape,nx,ny,periodic", [
    ("square", 13, 11, True), ("square", 9, 10, False), ("triangular", 12, 14, True),
    ("honeycomb", 10, 12, True), ("honeycomb", 7, 9, False)])
def test_bitwise_independent_of_threads_and_bands(rng, shape, nx, ny, periodic):
    lat = Lattice(shape, nx, ny, 0.3, periodic)
    s0 = _spins(rng, ny, nx)
    kw = dict(n_steps=4, step0=3, seed=9, temp0=3.0, dtemp=0.0, b0=np.array([0.0, 0.0, 0.5]),
              db=np.zeros(3), sigma_coef=0.5)
    old = numba.get_num_threads()
    out = []
    try:
        for threads, nbands in ((1, 1), (2, 2), (2, 3), (1, 5), (2, ny // 2)):
            numba.set_num_threads(min(threads, numba.config.NUMBA_NUM_THREADS))
            s = s0.copy()
            _run(s, lat, fused=True, nbands=nbands, **kw)
            out.append(s)
            s = s0.copy()
            _run(s, lat, fused=False, **kw)
            out.append(s)
    finally:
        numba.set_num_threads(old)
    for s in out[1:]:
        np.testing.assert_array_equal(s, out[0])


def test_noise_field_independent_of_threads():
    old = numba.get_num_threads()
    try:
        a = np.empty((9, 7, 3))
        b = np.empty((9, 7, 3))
        numba.set_num_threads(1)
        noise_field(9, 7, 3, 17, 1.5, a)
        numba.set_num_threads(min(2, numba.config.NUMBA_NUM_THREADS))
        noise_field(9, 7, 3, 17, 1.5, b)
    finally:
        numba.set_num_threads(old)
    np.testing.assert_array_equal(a, b)


def test_noise_moments_and_independence():
    ny, nx, sigma = 128, 129, 0.8
    z = np.empty((ny, nx, 3))
    noise_field(ny, nx, 4, 2, sigma, z)
    z /= sigma
    n = z.size
    assert abs(z.mean()) < 5 / math.sqrt(n)
    assert abs(z.var() - 1.0) < 5 * math.sqrt(2 / n)
    for c in range(3):
        zc = z[..., c].ravel()
        m = zc.size
        assert abs(zc.mean()) < 5 / math.sqrt(m)
        assert abs(zc.var() - 1.0) < 5 * math.sqrt(2 / m)
        assert abs(np.mean(zc**4) - 3.0) < 5 * math.sqrt(96 / m)
    flat = z.reshape(-1, 3)
    m = flat.shape[0]
    for a, b in ((0, 1), (1, 2), (0, 2)):
        assert abs(np.mean(flat[:, a] * flat[:, b])) < 5 / math.sqrt(m)
        # no dependence through the squares either (e.g. a shared Box-Muller radius)
        assert abs(np.mean((flat[:, a] ** 2 - 1) * (flat[:, b] ** 2 - 1))) < 5 * 2 / math.sqrt(m)
    # neighbouring sites, next row and next step are uncorrelated
    assert abs(np.mean(z[:, 1:] * z[:, :-1])) < 5 / math.sqrt(n)
    assert abs(np.mean(z[1:] * z[:-1])) < 5 / math.sqrt(n)
    z2 = np.empty_like(z)
    noise_field(ny, nx, 4, 3, 1.0, z2)
    assert abs(np.mean(z * z2)) < 5 / math.sqrt(n)
    noise_field(ny, nx, 5, 2, 1.0, z2)
    assert abs(np.mean(z * z2)) < 5 / math.sqrt(n)


def test_noise_is_normal_distributed():
    from scipy import stats

    z = np.empty((64, 65, 3))
    noise_field(64, 65, 8, 0, 1.0, z)
    assert stats.kstest(z.ravel(), "norm").pvalue > 1e-3


def test_zero_temperature_has_no_noise():
    z = np.ones((3, 4, 3))
    noise_field(3, 4, 1, 0, 0.0, z)
    assert np.all(z == 0.0)


def _langevin(x):
    return 1.0 / math.tanh(x) - 1.0 / x


@pytest.mark.parametrize("x", [0.5, 2.0])
def test_free_spins_in_field_reach_langevin_magnetisation(x):
    # Free classical moments in a field: <m_z> = L(mu B/(kB T)) = coth x - 1/x
    # (Langevin, Ann. Chim. Phys. 5, 70 (1905)). Units gamma = mu = kB = 1, B = 1, T = 1/x.
    ny, nx = 64, 64
    alpha, dt, temp = 1.0, 0.01, 1.0 / x
    s = np.zeros((ny, nx, 3))
    s[..., 2] = 1.0
    axis = np.array([0.0, 0.0, 1.0])
    b0 = np.array([0.0, 0.0, 1.0])
    sigma_coef = math.sqrt(2 * alpha / dt)
    gdt = dt / (1 + alpha**2)
    nb_ = 2
    work = heun_work(ny, nx, nb_)
    step = 0
    samples = []
    for block in range(60):
        heun_run(s, 25, step, 21, 0, True, 0.0, 0.0, axis, b0, np.zeros(3), temp, 0.0,
                 sigma_coef, gdt, alpha, nb_, *work)
        step += 25
        if block >= 20:  # relaxation time (1 + alpha^2)/(alpha gamma B) = 2 = 200 steps
            samples.append(s[..., 2].mean())
    mz = float(np.mean(samples))
    # std of m_z per spin <= 0.58, about 8 uncorrelated samples per spin: error ~ 0.003;
    # the Heun time-step bias at dt = 0.01 is well below the tolerance
    assert abs(mz - _langevin(x)) < 0.02, (mz, _langevin(x))
    assert np.allclose(np.linalg.norm(s, axis=-1), 1.0, atol=1e-14)
