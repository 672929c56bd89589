"""Metropolis kernel: row colouring, thread and order independence, local energy changes."""

import numba
import numpy as np
import pytest
import reference

from thinfilm._kernels.metropolis import (
    metropolis_sweeps,
    metropolis_sweeps_serial,
    row_colouring,
    row_sums_serial,
    site_energy_change,
)
from thinfilm.lattice import Lattice

# (shape, nx, ny, periodic): odd row counts wherever the lattice allows them
CASES = [
    ("square", 6, 5, True), ("square", 7, 7, True), ("square", 5, 6, True),
    ("square", 5, 5, False), ("square", 3, 2, True), ("square", 4, 3, True),
    ("triangular", 6, 6, True), ("triangular", 5, 4, True), ("triangular", 5, 7, False),
    ("honeycomb", 6, 4, True), ("honeycomb", 8, 6, True), ("honeycomb", 5, 7, False),
]


def _spins(rng, ny, nx):
    s = rng.normal(size=(ny, nx, 3))
    return np.ascontiguousarray(s / np.linalg.norm(s, axis=-1, keepdims=True))


def _params():
    axis = np.array([0.3, -0.2, 0.9])
    axis /= np.linalg.norm(axis)
    return 1.3, 0.8, axis, np.array([0.1, -0.25, 0.4])  # jt, kt (T), axis, field (T)


@pytest.mark.parametrize("shape,nx,ny,periodic", CASES)
def test_colouring_separates_every_bond_between_rows(shape, nx, ny, periodic):
    # common practice (graph colouring): two rows updated together must share no bond
    lat = Lattice(shape, nx, ny, 0.3, periodic)
    order, bounds = row_colouring(ny, periodic)
    assert sorted(order.tolist()) == list(range(ny))
    cls = np.empty(ny, dtype=int)
    for c in range(len(bounds) - 1):
        cls[order[bounds[c]:bounds[c + 1]]] = c
    rows = lat.bonds() // nx
    between = rows[:, 0] != rows[:, 1]
    assert np.all(cls[rows[between, 0]] != cls[rows[between, 1]])


def test_odd_periodic_rows_get_a_third_class():
    order, bounds = row_colouring(5, True)
    assert len(bounds) == 4 and order[bounds[2]:].tolist() == [4]
    _, bounds_open = row_colouring(5, False)
    assert len(bounds_open) == 3


def _run(kernel, s, order, bounds, lat, n=3, reflect=True, n_or=2, beta=2.0, sigma=0.6):
    jt, kt, axis, b = _params()
    counts = np.zeros((lat.ny, 3), dtype=np.int64)
    kernel(s, order, bounds, lat.code, lat.periodic, jt, kt, axis, b, beta, sigma, 11, 1, 5,
           n, reflect, n_or, counts)
    return counts


@pytest.mark.parametrize("shape,nx,ny,periodic", CASES)
def test_result_does_not_depend_on_row_order_inside_a_class(shape, nx, ny, periodic, rng):
    # a proper colouring makes rows of one class independent, so reversing them changes no bit
    lat = Lattice(shape, nx, ny, 0.3, periodic)
    order, bounds = row_colouring(ny, periodic)
    rev = order.copy()
    for c in range(len(bounds) - 1):
        rev[bounds[c]:bounds[c + 1]] = order[bounds[c]:bounds[c + 1]][::-1]
    s0 = _spins(rng, ny, nx)
    a, b = s0.copy(), s0.copy()
    ca = _run(metropolis_sweeps_serial, a, order, bounds, lat)
    cb = _run(metropolis_sweeps_serial, b, rev, bounds, lat)
    assert np.array_equal(a, b) and np.array_equal(ca, cb)


def test_order_check_detects_a_wrong_colouring(rng):
    # sanity of the previous test: with all rows in one class, the order does matter
    lat = Lattice("square", 6, 6, 0.3, True)
    order = np.arange(6, dtype=np.int64)
    bounds = np.array([0, 6], dtype=np.int64)
    s0 = _spins(rng, 6, 6)
    a, b = s0.copy(), s0.copy()
    _run(metropolis_sweeps_serial, a, order, bounds, lat)
    _run(metropolis_sweeps_serial, b, order[::-1].copy(), bounds, lat)
    assert not np.array_equal(a, b)


@pytest.mark.parametrize("shape,nx,ny,periodic", [c for c in CASES if c[2] >= 4])
def test_bitwise_independent_of_thread_count(shape, nx, ny, periodic, rng):
    lat = Lattice(shape, nx, ny, 0.3, periodic)
    order, bounds = row_colouring(ny, periodic)
    s0 = _spins(rng, ny, nx)
    out = []
    saved = numba.get_num_threads()
    try:
        for threads in sorted({1, numba.config.NUMBA_NUM_THREADS}):
            numba.set_num_threads(threads)
            s = s0.copy()
            c = _run(metropolis_sweeps, s, order, bounds, lat)
            out.append((s, c))
    finally:
        numba.set_num_threads(saved)
    s = s0.copy()
    out.append((s, _run(metropolis_sweeps_serial, s, order, bounds, lat)))
    for s, c in out[1:]:
        assert np.array_equal(s, out[0][0]) and np.array_equal(c, out[0][1])
    assert not np.array_equal(out[0][0], s0)


@pytest.mark.parametrize("shape,nx,ny,periodic", CASES)
def test_local_energy_change_matches_full_reference_energy(shape, nx, ny, periodic, rng):
    # exact: the energy difference of the full reference energy (bonds counted once)
    lat = Lattice(shape, nx, ny, 0.3, periodic)
    jt, kt, axis, b = _params()
    mu = 1.7
    kw = dict(exchange_J=jt * mu, anisotropy_J=kt * mu / 2, axis=axis, moment=mu, field_T=b)
    s = _spins(rng, ny, nx)
    e0 = reference.energy(lat, s, **kw)
    for i, j in [(0, 0), (ny - 1, nx - 1), (0, nx - 1), (ny // 2, nx // 2), (ny - 1, 0)]:
        new = rng.normal(size=3)
        new /= np.linalg.norm(new)
        de = site_energy_change(s, i, j, new, lat.code, periodic, jt, kt, axis, b) * mu
        t = s.copy()
        t[i, j] = new
        assert de == pytest.approx(reference.energy(lat, t, **kw) - e0, rel=1e-10, abs=1e-12)


@pytest.mark.parametrize("shape,nx,ny,periodic", CASES)
def test_row_sums_match_reference_energy_and_magnetisation(shape, nx, ny, periodic, rng):
    # exact: same reference energy (bonds once) and the plain sum of the spins
    lat = Lattice(shape, nx, ny, 0.3, periodic)
    jt, kt, axis, b = _params()
    s = _spins(rng, ny, nx)
    rows = np.empty((ny, 4))
    row_sums_serial(s, lat.code, periodic, jt, kt, axis, b, rows)
    tot = rows.sum(axis=0)
    e = reference.energy(lat, s, exchange_J=jt, anisotropy_J=kt / 2, axis=axis, moment=1.0,
                         field_T=b)
    assert tot[3] == pytest.approx(e, rel=1e-12)
    assert np.allclose(tot[:3], s.reshape(-1, 3).sum(axis=0), atol=1e-12)


def test_zero_temperature_sweeps_never_raise_the_energy(rng):
    # Metropolis rule: at beta -> infinity only moves with dE <= 0 are accepted
    lat = Lattice("triangular", 8, 6, 0.3, True)
    jt, kt, axis, b = _params()
    order, bounds = row_colouring(lat.ny, True)
    s = _spins(rng, lat.ny, lat.nx)
    rows = np.empty((lat.ny, 4))
    energies = []
    for _ in range(5):
        row_sums_serial(s, lat.code, True, jt, kt, axis, b, rows)
        energies.append(rows[:, 3].sum())
        _run(metropolis_sweeps_serial, s, order, bounds, lat, n=1, beta=1e12)
    assert np.all(np.diff(energies) <= 1e-9)
    assert energies[-1] < energies[0]
    assert np.allclose(np.linalg.norm(s, axis=-1), 1.0, atol=1e-12)
