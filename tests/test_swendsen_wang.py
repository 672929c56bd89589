"""Swendsen-Wang moves with parallel labelling: exact enumeration of small Ising systems,
Yang's magnetisation, agreement with Metropolis for vector spins, bitwise thread independence,
ghost rows."""

import numba
import numpy as np
import pytest
from test_cluster import JK, _ising_square, compare_with_enumeration, exact_ising

from thinfilm.analysis.thermo import thermodynamics
from thinfilm.engines._kernels.banded import from_banded, to_banded
from thinfilm.engines._kernels.metropolis import make_work, row_colouring
from thinfilm.engines._kernels.swendsen_wang import _sw_par, _sw_ser, make_sw_work
from thinfilm.engines._kernels.wolff import N_STATS
from thinfilm.engines.montecarlo import MonteCarlo
from thinfilm.input.units import MEV_J, MU_B_J_PER_T
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model

SW = dict(moves=("metropolis", "cluster"), cluster_algorithm="swendsen-wang")


def ising_sw_chain(lat, beta_j, h, n_samples, seed, parallel=False):
    """Swendsen-Wang kernel alone on spins +-z (reflection along n = z keeps them +-z);
    returns (bond sum, magnetisation) per sample."""
    rng = np.random.default_rng(seed)
    s = np.zeros((lat.ny, lat.nx, 3))
    s[..., 2] = rng.choice([-1.0, 1.0], size=(lat.ny, lat.nx))
    order, bounds = row_colouring(lat.ny, lat.periodic)
    _, _, bands, T, *_ = make_work(s, order, bounds)
    to_banded(s, T, bands, lat.periodic, False)
    w = make_sw_work(T, bands, lat.periodic, lat.neighbours, (0.0, 0.0, 1.0), 0)
    stats = np.zeros(N_STATS)
    beta = 2.0  # 1/T; jt = beta_j / beta (T), field b = h / beta (T) along z
    b = np.array([0.0, 0.0, h / beta])
    nbr = w[3]
    out = np.empty((n_samples, 2), dtype=np.int64)
    move = _sw_par if parallel else _sw_ser
    for t in range(n_samples):
        move(w[0], w[1], w[2], T.shape[3], nbr, beta, beta_j / beta, b, w[4], 0, seed, 1, t,
             lat.nx, *w[6:], stats)
        from_banded(T, s, bands, False)
        z = s[..., 2].reshape(-1)
        out[t, 1] = int(round(z.sum()))
        out[t, 0] = int(round(sum(np.sum(z[nbr[:, q] >= 0] * z[nbr[nbr[:, q] >= 0, q]])
                                  for q in range(nbr.shape[1])) / 2))
    return out, stats


@pytest.mark.parametrize("shape,nx,ny,periodic", [("square", 4, 4, True),
                                                  ("square", 2, 2, True),
                                                  ("triangular", 3, 4, False),
                                                  ("honeycomb", 4, 4, True)])
@pytest.mark.parametrize("h", [0.0, 0.3])
def test_sw_kernel_samples_the_exact_ising_distribution(shape, nx, ny, periodic, h):
    # exact enumeration of the 2^N Ising states (as tests/test_cluster.py), beta J a little
    # above each lattice's critical coupling (Onsager 1944; Houtappel 1950), with and without
    # a field h = beta mu B (heat-bath flip of each cluster); every row is its own chunk here,
    # so the cross-chunk joins are exercised. Tolerance: 5 blocking errors per class.
    beta_j = {"square": 0.4, "triangular": 0.25, "honeycomb": 0.6}[shape]
    lat = Lattice(shape, nx, ny, 0.3, periodic)
    samples, stats = ising_sw_chain(lat, beta_j, h, 20000, seed=17)
    assert compare_with_enumeration(samples, exact_ising(lat, beta_j, h)) >= 3
    assert stats[1] == 20000 * lat.n_sites and 0 < stats[2] < stats[0]


def test_sw_enumeration_check_detects_a_wrong_temperature():
    lat = Lattice("square", 4, 4, 0.3, True)
    samples, _ = ising_sw_chain(lat, 0.46, 0.0, 20000, seed=3)
    with pytest.raises(AssertionError):
        compare_with_enumeration(samples, exact_ising(lat, 0.4, 0.0))


def test_sw_sampler_follows_yangs_magnetisation():
    # spontaneous magnetisation of the square Ising model (Yang, Phys. Rev. 85, 808 (1952)):
    # M(kB T/J = 2.0) = 0.911319; Ising limit K/J = 1e3, L = 24; tolerance as in
    # tests/test_cluster.py: 4 jackknife errors + 0.004 (finite size, cone of the pinned spins)
    model = _ising_square(24)
    temp = 2.0 * JK
    r = MonteCarlo(model, temp, seed=21, **SW).run(200, 1500)
    d = thermodynamics(r["energy_J"], r["m_order"], r["m_vector"], model.lattice.n_sites, temp)
    assert abs(d["m_abs"] - 0.911319) < 4 * d["m_abs_err"] + 0.004
    assert d["tau_int"] < 5


def test_sw_and_metropolis_agree_for_vector_spins_in_a_field():
    # stationary distribution exp(-E/kBT) for both samplers (Swendsen & Wang, Phys. Rev. Lett.
    # 58, 86 (1987); embedded spins, Wolff 1989): <E> and <|m|> agree within 4 combined
    # jackknife errors; easy axis K/J = 0.1, field with a component along r = n
    lat = Lattice("square", 8, 8, 0.3, True)
    model = Model(lat, MU_B_J_PER_T, MEV_J, 0.1 * MEV_J, (0, 0, 1), np.array([0.5, 0.0, 1.0]))
    temp = 0.65 * JK
    res = []
    for kw in ({"moves": ("metropolis",)}, SW):
        r = MonteCarlo(model, temp, seed=31, **kw).run(500, 6000)
        res.append(thermodynamics(r["energy_J"], r["m_order"], r["m_vector"], lat.n_sites,
                                  temp))
    a, b = res
    for name in ("energy_meV", "m_norm"):
        assert abs(a[name] - b[name]) < 4 * np.hypot(a[name + "_err"], b[name + "_err"]), name


def _sw(shape, nx, ny, periodic, parallel, seed=5):
    model = Model(Lattice(shape, nx, ny, 0.3, periodic), MU_B_J_PER_T, MEV_J, 0.3 * MEV_J,
                  (0.2, 0.1, 1.0), np.array([0.2, 0.0, 0.4]))
    return MonteCarlo(model, 4.0, seed=seed, parallel=parallel, **SW)


@pytest.mark.parametrize("shape,nx,ny,periodic", [("square", 6, 150, True),
                                                  ("honeycomb", 4, 258, False),
                                                  ("triangular", 4, 262, True)])
def test_sw_is_thread_independent_and_keeps_the_ghost_rows(shape, nx, ny, periodic):
    # more rows than labelling chunks (several rows per chunk) and several row bands
    import reference

    runs = []
    for parallel, threads in ((False, 1), (True, 1), (True, 2)):
        old = numba.get_num_threads()
        numba.set_num_threads(min(threads, numba.config.NUMBA_NUM_THREADS))
        try:
            mc = _sw(shape, nx, ny, periodic, parallel)
            r = mc.run(10, 10)
        finally:
            numba.set_num_threads(old)
        runs.append((np.array(mc.spins), r["energy_J"], mc))
    for s, e, _ in runs[1:]:
        assert np.array_equal(s, runs[0][0]) and np.array_equal(e, runs[0][1])
    mc = runs[0][2]
    T = mc._work[3]
    fresh = np.zeros_like(T)
    to_banded(np.array(mc.spins), fresh, mc._work[2], periodic, False)
    assert np.array_equal(T, fresh)
    m = mc.model
    e = reference.energy(m.lattice, mc.spins, exchange_J=m.exchange_J,
                         anisotropy_J=m.anisotropy_J, axis=m.axis, moment=m.moment_J_per_T,
                         field_T=m.field_T)
    assert mc.measure()["energy_J"] * m.lattice.n_sites == pytest.approx(e, rel=1e-10)
    # a different seed gives a different run; the state resumes bit for bit
    assert not np.array_equal(runs[0][1], _sw(shape, nx, ny, periodic, False, 6).run(10, 10)[
        "energy_J"])
    first = _sw(shape, nx, ny, periodic, False)
    first.sweep(5)
    resumed = _sw(shape, nx, ny, periodic, False)
    resumed.state = first.state
    first.sweep(5)
    resumed.sweep(5)
    assert np.array_equal(first.spins, resumed.spins)


def test_unknown_cluster_algorithm_is_refused():
    with pytest.raises(ValueError, match="cluster_algorithm"):
        MonteCarlo(_ising_square(4), 5.0, seed=1, moves=("metropolis", "cluster"),
                   cluster_algorithm="multigrid")
