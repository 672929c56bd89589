"""Metropolis kernel: row colouring and chunks, race freedom, thread independence, local energy
changes against the full reference energy, exact equilibrium of an open chain."""

import numba
import numpy as np
import pytest
import reference

from thinfilm.engines._kernels import metropolis as mk
from thinfilm.engines._kernels.metropolis import (
    chunk_table,
    metropolis_sweeps,
    metropolis_sweeps_serial,
    row_colouring,
)
from thinfilm.engines._kernels.metropolis_measure import (
    kernel_energy_changes,
    row_sums_serial,
    site_energy_change,
)
from thinfilm.model.lattice import Lattice

# (shape, nx, ny, periodic): odd and tiny sizes wherever the lattice allows them
CASES = [
    ("square", 6, 5, True), ("square", 7, 7, True), ("square", 5, 6, True),
    ("square", 6, 6, True), ("square", 5, 5, False), ("square", 3, 2, True),
    ("square", 4, 3, True), ("square", 2, 2, True), ("square", 1, 1, False),
    ("square", 7, 1, False), ("square", 1, 4, False),
    ("triangular", 6, 6, True), ("triangular", 5, 4, True), ("triangular", 8, 4, True),
    ("triangular", 3, 2, True), ("triangular", 5, 7, False), ("triangular", 2, 2, True),
    ("honeycomb", 6, 4, True), ("honeycomb", 8, 6, True), ("honeycomb", 2, 2, True),
    ("honeycomb", 5, 7, False), ("honeycomb", 1, 3, False),
]
# several row bands (ghost rows copied between bands): tall, narrow lattices
TALL = [("square", 3, 258, True), ("square", 4, 257, True), ("square", 3, 300, False),
        ("triangular", 3, 260, True), ("triangular", 4, 262, False),
        ("honeycomb", 4, 258, True), ("honeycomb", 3, 259, False)]


def _spins(rng, ny, nx):
    s = rng.normal(size=(ny, nx, 3))
    return np.ascontiguousarray(s / np.linalg.norm(s, axis=-1, keepdims=True))


def _params():
    axis = np.array([0.3, -0.2, 0.9])
    axis /= np.linalg.norm(axis)
    return 1.3, 0.8, axis, np.array([0.1, -0.25, 0.4])  # jt, kt (T), axis, field (T)


def _tables(lat, split_rows=False):
    order, bounds = row_colouring(lat.ny, lat.periodic)
    cb, ch, bands = chunk_table(order, bounds)
    if split_rows:  # one chunk per row: the finest split the kernel allows
        band_of = np.searchsorted(bands, np.arange(lat.ny), side="right") - 1
        ch = np.array([[band_of[order[r]], order[r], 1, r] for r in range(lat.ny)],
                      dtype=np.int64)
        cb = bounds.copy()
    return cb, ch, bands


@pytest.mark.parametrize("shape,nx,ny,periodic", CASES)
def test_colouring_separates_every_bond_between_rows(shape, nx, ny, periodic):
    # graph colouring (common practice): two rows updated together must share no bond
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


@pytest.mark.parametrize("ny,periodic", [(1, False), (2, True), (3, True), (7, True), (7, False),
                                         (64, True), (256, True), (257, True), (300, False),
                                         (1024, True), (4096, True)])
def test_chunks_cover_every_row_once_with_unique_random_counters(ny, periodic):
    order, bounds = row_colouring(ny, periodic)
    cb, ch, bands = chunk_table(order, bounds)
    assert bands[0] == 0 and bands[-1] == ny and np.all(bands[:-1] % 2 == 0)
    assert np.all(np.diff(bands) <= 2 * mk.W)
    nx = 5
    rows = []
    visits = []
    for c in range(len(cb) - 1):
        cls_rows = set(order[bounds[c]:bounds[c + 1]].tolist())
        for bnd, i0, n, r0 in ch[cb[c]:cb[c + 1]]:
            chunk_rows = list(range(i0, i0 + 2 * n, 2))
            assert set(chunk_rows) <= cls_rows and order[r0] == i0 and n <= mk.W
            assert bands[bnd] <= i0 and chunk_rows[-1] < bands[bnd + 1]
            rows += chunk_rows
            visits += [r0 * nx + j * n + q for j in range(nx) for q in range(n)]
    assert sorted(rows) == list(range(ny))
    assert sorted(visits) == list(range(nx * ny))  # counters 4 v0 + p and (4 + u) N + v unique
    if ny >= 256 and ny % 2 == 0:
        assert ch[:, 2].min() >= 64  # long SIMD loops


def _run(kernel, s, lat, n=3, reflect=True, n_or=2, beta=2.0, sigma=0.6, params=None):
    jt, kt, axis, b = params or _params()
    order, bounds = row_colouring(lat.ny, lat.periodic)
    counts = np.zeros((lat.ny, 3), dtype=np.int64)
    kernel(s, order, bounds, lat.code, lat.periodic, jt, kt, axis, b, beta, sigma, 11, 1, 5,
           n, reflect, n_or, counts)
    return counts


def _run_table(s, lat, cb, ch, bands, n=3):
    # the serial sweep with a given chunk table
    jt, kt, axis, b = _params()
    counts = np.zeros((lat.ny, 3), dtype=np.int64)
    T, zc, buf, g, cnt = mk._work(s, ch, bands)
    mk._convert(s, T, bands, lat.periodic, True, False)
    mk._run_sweeps(T, zc, cb, ch, bands, lat.ny, lat.code, lat.periodic, jt, kt, axis, b, 2.0,
                   0.6, 11, 1, 5, n, True, 2, counts, buf, g, cnt, False)
    mk._convert(s, T, bands, lat.periodic, False, False)
    return counts


@pytest.mark.parametrize("shape,nx,ny,periodic", CASES + TALL)
def test_result_does_not_depend_on_chunk_order_inside_a_class(shape, nx, ny, periodic, rng):
    # race freedom: the rows of one class are independent, so running the (one-row) chunks of
    # a class in reverse order changes no bit
    lat = Lattice(shape, nx, ny, 0.3, periodic)
    cb, ch, bands = _tables(lat, split_rows=True)
    rev = ch.copy()
    for c in range(len(cb) - 1):
        rev[cb[c]:cb[c + 1]] = ch[cb[c]:cb[c + 1]][::-1]
    s0 = _spins(rng, ny, nx)
    a, b = s0.copy(), s0.copy()
    ca = _run_table(a, lat, cb, ch, bands)
    cb_ = _run_table(b, lat, cb, rev, bands)
    assert np.array_equal(a, b) and np.array_equal(ca, cb_)
    assert not np.array_equal(a, s0)
    c = s0.copy()  # the public kernel is the same computation with its own chunks
    cb2, ch2, bands2 = _tables(lat)
    cc = _run_table(c, lat, cb2, ch2, bands2)
    d = s0.copy()
    assert np.array_equal(_run(metropolis_sweeps_serial, d, lat), cc) and np.array_equal(c, d)


def test_order_check_detects_a_wrong_colouring(rng):
    # sanity of the previous test: with all rows in one class, the order does matter
    lat = Lattice("square", 6, 6, 0.3, True)
    ch = np.array([[0, i, 1, i] for i in range(6)], dtype=np.int64)
    cb = np.array([0, 6], dtype=np.int64)
    bands = np.array([0, 6], dtype=np.int64)
    s0 = _spins(rng, 6, 6)
    a, b = s0.copy(), s0.copy()
    _run_table(a, lat, cb, ch, bands)
    _run_table(b, lat, cb, ch[::-1].copy(), bands)
    assert not np.array_equal(a, b)


@pytest.mark.parametrize("shape,nx,ny,periodic", [c for c in CASES if c[1] * c[2] >= 12] + TALL)
def test_bitwise_independent_of_thread_count(shape, nx, ny, periodic, rng):
    lat = Lattice(shape, nx, ny, 0.3, periodic)
    s0 = _spins(rng, ny, nx)
    out = []
    saved = numba.get_num_threads()
    try:
        for threads in sorted({1, 2, numba.config.NUMBA_NUM_THREADS}):
            if threads > numba.config.NUMBA_NUM_THREADS:
                continue
            numba.set_num_threads(threads)
            s = s0.copy()
            c = _run(metropolis_sweeps, s, lat)
            out.append((s, c))
    finally:
        numba.set_num_threads(saved)
    s = s0.copy()
    out.append((s, _run(metropolis_sweeps_serial, s, lat)))
    for s, c in out[1:]:
        assert np.array_equal(s, out[0][0]) and np.array_equal(c, out[0][1])
    assert not np.array_equal(out[0][0], s0)


@pytest.mark.parametrize("shape,nx,ny,periodic", CASES + TALL)
def test_kernel_energy_change_matches_full_reference_energy(shape, nx, ny, periodic, rng):
    # exact: the energy difference of the full reference energy (bonds counted once), for a
    # change of every site, through the sweep kernel's own gather (ghosts, zero rows, blocks)
    lat = Lattice(shape, nx, ny, 0.3, periodic)
    jt, kt, axis, b = _params()
    mu = 1.7
    kw = dict(exchange_J=jt * mu, anisotropy_J=kt * mu / 2, axis=axis, moment=mu, field_T=b)
    s = _spins(rng, ny, nx)
    new = _spins(rng, ny, nx)
    order, bounds = row_colouring(ny, periodic)
    de = kernel_energy_changes(s, order, bounds, lat.code, periodic, jt, kt, axis, b, new) * mu
    e0 = reference.energy(lat, s, **kw)
    rows = range(ny) if ny < 20 else sorted({0, 1, 2, 126, 127, 128, 129, 130, ny - 2, ny - 1})
    for i in rows:
        for j in range(nx):
            t = s.copy()
            t[i, j] = new[i, j]
            ref = reference.energy(lat, t, **kw) - e0
            assert de[i, j] == pytest.approx(ref, rel=1e-10, abs=1e-12)
            if (i + j) % 3 == 0:  # the AoS helper agrees as well
                d2 = site_energy_change(s, i, j, new[i, j], lat.code, periodic, jt, kt, axis, b)
                assert d2 * mu == pytest.approx(ref, rel=1e-10, abs=1e-12)


@pytest.mark.parametrize("shape,nx,ny,periodic", CASES + TALL)
def test_over_relaxation_keeps_the_energy_exactly_without_anisotropy(shape, nx, ny, periodic,
                                                                     rng):
    # exact: with K = 0 and sigma = 0 every move keeps the energy (the over-relaxation reflects
    # about the true local field), so sweeps must conserve it; stale ghost columns or a wrong
    # neighbour row would not
    lat = Lattice(shape, nx, ny, 0.3, periodic)
    jt, _, axis, b = _params()
    s = _spins(rng, ny, nx)
    rows = np.empty((ny, 4))
    row_sums_serial(s, lat.code, periodic, jt, 0.0, axis, b, rows)
    e0 = rows[:, 3].sum()
    s1 = s.copy()
    c = _run(metropolis_sweeps_serial, s1, lat, n=3, reflect=False, n_or=1, sigma=0.0,
             params=(jt, 0.0, axis, b))
    row_sums_serial(s1, lat.code, periodic, jt, 0.0, axis, b, rows)
    assert rows[:, 3].sum() == pytest.approx(e0, abs=1e-11 * lat.n_sites)
    if lat.n_sites > 1 or b.any():
        assert c[:, 2].sum() > 0 and not np.allclose(s1, s)


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


@pytest.mark.parametrize("shape,nx,ny", [("triangular", 8, 6), ("square", 7, 5),
                                         ("honeycomb", 6, 4), ("triangular", 6, 6)])
def test_zero_temperature_sweeps_never_raise_the_energy(shape, nx, ny, rng):
    # Metropolis rule: at beta -> infinity only moves with dE <= 0 are accepted
    lat = Lattice(shape, nx, ny, 0.3, True)
    jt, kt, axis, b = _params()
    s = _spins(rng, lat.ny, lat.nx)
    rows = np.empty((lat.ny, 4))
    energies = []
    for _ in range(5):
        row_sums_serial(s, lat.code, True, jt, kt, axis, b, rows)
        energies.append(rows[:, 3].sum())
        _run(metropolis_sweeps_serial, s, lat, n=1, beta=1e12)
    assert np.all(np.diff(energies) <= 1e-9)
    assert energies[-1] < energies[0]
    assert np.allclose(np.linalg.norm(s, axis=-1), 1.0, atol=1e-12)


@pytest.mark.parametrize("shape,nx,ny", [("square", 16, 1), ("square", 15, 1)])
def test_open_chain_follows_the_exact_heisenberg_chain_correlation(shape, nx, ny):
    # exact (Fisher, Am. J. Phys. 32, 343 (1964)): in an open classical Heisenberg chain the
    # bond vectors are independent, <S_i.S_i+1> = L(beta J) = coth(beta J) - 1/(beta J)
    # (Langevin function); here beta J = 1.5 -> 0.4262315
    lat = Lattice(shape, nx, ny, 0.3, False)
    kj = 1.5
    axis = np.array([0.0, 0.0, 1.0])
    s = _spins(np.random.default_rng(4), ny, nx)
    order, bounds = row_colouring(ny, False)
    counts = np.zeros((ny, 3), dtype=np.int64)
    vals = []
    for t in range(3000):
        metropolis_sweeps_serial(s, order, bounds, lat.code, False, 1.0, 0.0, axis,
                                 np.zeros(3), kj, 0.9, 3, 1, t, 1, False, 1, counts)
        if t >= 200:
            vals.append(np.mean(np.einsum("ij,ij->i", s[0, 1:], s[0, :-1])))
    vals = np.array(vals)
    exact = 1.0 / np.tanh(kj) - 1.0 / kj
    # tolerance: 5 standard errors from 50 blocks of the series (common practice)
    blocks = vals[:len(vals) // 50 * 50].reshape(50, -1).mean(axis=1)
    err = blocks.std(ddof=1) / np.sqrt(50)
    assert abs(vals.mean() - exact) < 5 * err and err < 0.01
