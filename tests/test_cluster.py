"""Wolff cluster moves: detailed balance against exact enumeration of small Ising systems,
agreement with Metropolis for vector spins, exactness checker, reproducibility, ghost rows."""

import itertools

import numpy as np
import pytest

from thinfilm.analysis.thermo import blocking_error, thermodynamics
from thinfilm.engines._kernels.banded import from_banded, to_banded
from thinfilm.engines._kernels.metropolis import make_work, row_colouring
from thinfilm.engines._kernels.wolff import N_STATS, banded_addresses, wolff_clusters
from thinfilm.engines.montecarlo import MonteCarlo, cluster_moves_exact
from thinfilm.input.units import KB_J_PER_K, MEV_J, MU_B_J_PER_T
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model

JK = MEV_J / KB_J_PER_K  # kB T/J = 1 at T = JK kelvin (moment 1 muB, J = 1 meV)
# small lattices, all shapes, both edge kinds (periodic triangular/honeycomb need even sizes);
# 2 x 2 periodic grids list a neighbour several times (one bond per table entry)
ISING = [("square", 4, 4, True), ("square", 3, 3, False), ("square", 2, 2, True),
         ("triangular", 4, 4, True), ("triangular", 3, 4, False), ("triangular", 2, 2, True),
         ("honeycomb", 4, 4, True), ("honeycomb", 3, 4, False), ("honeycomb", 2, 2, True)]
BETA_J = {"square": 0.4, "triangular": 0.25, "honeycomb": 0.6}


def exact_ising(lat, beta_j, h):
    """Exact distribution of (bond sum, magnetisation) of Ising spins s = +-1 on lat with
    weight exp(beta_j sum_bonds s s + h sum s), by enumeration of all 2^N states; every entry
    of the neighbour table is one bond end (exact enumeration)."""
    n = lat.n_sites
    s = np.array(list(itertools.product((-1, 1), repeat=n)), dtype=np.int64)
    nb = lat.neighbours
    bond = np.zeros(len(s), dtype=np.int64)
    for q in range(nb.shape[1]):
        ok = nb[:, q] >= 0
        bond += np.sum(s[:, ok] * s[:, nb[ok, q]], axis=1)
    bond //= 2
    mag = s.sum(axis=1)
    w = np.exp(beta_j * bond + h * mag - (beta_j * np.abs(bond).max() + abs(h) * n))
    dist = {}
    for bb, mm, ww in zip(bond, mag, w, strict=True):
        dist[(bb, mm)] = dist.get((bb, mm), 0.0) + ww
    tot = sum(dist.values())
    return {k: v / tot for k, v in dist.items()}


def ising_wolff_chain(lat, beta_j, h, n_samples, clusters, seed):
    """Wolff kernel alone on spins +-z (reflection along n = z keeps them +-z exactly);
    returns (bond sum, magnetisation) per sample."""
    rng = np.random.default_rng(seed)
    s = np.zeros((lat.ny, lat.nx, 3))
    s[..., 2] = rng.choice([-1.0, 1.0], size=(lat.ny, lat.nx))
    order, bounds = row_colouring(lat.ny, lat.periodic)
    _, _, bands, T, *_ = make_work(s, order, bounds)
    to_banded(s, T, bands, lat.periodic, False)
    addr, gaddr = banded_addresses(lat.ny, lat.nx, bands, T.shape[3], lat.periodic)
    nbr = np.ascontiguousarray(lat.neighbours)
    frame = np.array([[0.0, 0, 1], [1, 0, 0], [0, 1, 0]])
    n = lat.n_sites
    queue, sig, mark = np.empty(n, np.int64), np.empty(n), np.zeros(n, np.uint8)
    stats = np.zeros(N_STATS)
    beta = 2.0  # 1/T; jt = beta_j / beta (T), field b = h / beta (T) along z
    b = np.array([0.0, 0.0, h / beta])
    out = np.empty((n_samples, 2), dtype=np.int64)
    for t in range(n_samples):
        wolff_clusters(T.reshape(-1), addr, gaddr, T.shape[3], nbr, beta, beta_j / beta, b,
                       frame, 0, seed, 1, t, clusters, queue, sig, mark, stats)
        from_banded(T, s, bands, False)
        z = s[..., 2].reshape(-1)
        out[t, 1] = int(round(z.sum()))
        out[t, 0] = int(round(sum(np.sum(z[nbr[:, q] >= 0] * z[nbr[nbr[:, q] >= 0, q]])
                                  for q in range(nbr.shape[1])) / 2))
    return out, stats


def compare_with_enumeration(samples, exact, n_sigma=5.0):
    """Every (bond, M) class of probability >= 0.01: sampled frequency within n_sigma
    blocking errors (autocorrelation included) of the exact value. Returns classes checked."""
    checked = 0
    for (bb, mm), p in exact.items():
        if p < 0.01:
            continue
        ind = ((samples[:, 0] == bb) & (samples[:, 1] == mm)).astype(float)
        err = max(blocking_error(ind), np.sqrt(p * (1 - p) / len(ind)))
        assert abs(ind.mean() - p) < n_sigma * err, (bb, mm, ind.mean(), p, err)
        checked += 1
    return checked


@pytest.mark.parametrize("shape,nx,ny,periodic", ISING)
@pytest.mark.parametrize("h", [0.0, 0.3])
def test_wolff_kernel_samples_the_exact_ising_distribution(shape, nx, ny, periodic, h):
    # exact enumeration of the 2^N Ising states, at beta J a little above each lattice's
    # critical temperature (Kc = 0.4407 square, Onsager 1944; 0.2747 triangular, 0.6585
    # honeycomb, Houtappel 1950) so clusters of all sizes occur, with and without a field
    # h = beta mu B = 0.3 (Metropolis acceptance of the whole-cluster flip)
    beta_j = BETA_J[shape]
    lat = Lattice(shape, nx, ny, 0.3, periodic)
    exact = exact_ising(lat, beta_j, h)
    samples, stats = ising_wolff_chain(lat, beta_j, h, 30000, 2, seed=17)
    assert compare_with_enumeration(samples, exact) >= 3
    assert stats[0] == 60000
    if h == 0:
        assert stats[2] == stats[0]  # no field: every cluster flip accepted
    else:
        assert 0 < stats[2] < stats[0]


def test_enumeration_check_detects_a_wrong_temperature():
    # the comparison can fail: a chain at beta J = 0.44 is rejected against beta J = 0.4
    lat = Lattice("square", 4, 4, 0.3, True)
    samples, _ = ising_wolff_chain(lat, 0.44, 0.0, 30000, 2, seed=3)
    with pytest.raises(AssertionError):
        compare_with_enumeration(samples, exact_ising(lat, 0.4, 0.0))


def _signs(mc, n, every):
    """(bond sum, magnetisation) of the signs of S.n, n samples every `every` sweeps."""
    nbr = mc.model.lattice.neighbours
    out = np.empty((n, 2), dtype=np.int64)
    for t in range(n):
        mc.sweep(every)
        z = np.sign(mc.spins @ mc.model.axis).reshape(-1)
        ok = [nbr[:, q] >= 0 for q in range(nbr.shape[1])]
        out[t, 0] = int(sum(np.sum(z[o] * z[nbr[o, q]]) for q, o in enumerate(ok)) // 2)
        out[t, 1] = int(z.sum())
    return out


@pytest.mark.parametrize("shape,nx,ny,periodic", [("square", 4, 4, True),
                                                  ("honeycomb", 3, 4, False)])
def test_metropolis_plus_cluster_samples_the_ising_limit_with_a_field(shape, nx, ny, periodic):
    # Ising limit of the public sampler: K/J = 1e4 pins S = +-n up to angles ~ sqrt(T/K), which
    # shifts the sign statistics by O(T/K) ~ 1e-4 (below the statistical error); exact
    # enumeration of the 2^N Ising states at beta J = 0.4, h = beta mu B = 0.25
    lat = Lattice(shape, nx, ny, 0.3, periodic)
    temp = 2.5 * JK
    b = 0.25 * KB_J_PER_K * temp / MU_B_J_PER_T  # h = 0.25
    model = Model(lat, MU_B_J_PER_T, MEV_J, 1e4 * MEV_J, (0, 0, 1), np.array([0.0, 0.0, b]))
    mc = MonteCarlo(model, temp, seed=8, moves=("metropolis", "cluster"), clusters_per_sweep=2)
    mc.warmup(100)
    samples = _signs(mc, 15000, 1)
    assert compare_with_enumeration(samples, exact_ising(lat, 0.4, 0.25)) >= 3


@pytest.mark.parametrize("shape,kk,field", [
    ("square", 0.1, (0.0, 0.0, 0.0)), ("square", 0.1, (0.5, 0.0, 1.0)),
    ("triangular", -0.1, (0.0, 0.0, 0.0)), ("honeycomb", 0.0, (0.3, 0.3, 0.3))])
def test_cluster_and_metropolis_agree_for_vector_spins(shape, kk, field):
    # both samplers must have exp(-E/kBT) as stationary distribution (the embedded-spin cluster
    # construction is exact: Wolff, Phys. Rev. Lett. 62, 361 (1989)), so <E> and <|m|> agree;
    # K/J = 0.1 easy axis (r = n), -0.1 easy plane (r in the plane), 0 (r anywhere), fields
    # on and off (field in T; J/mu_s is 17 T). kB T/J = 0.65: just below this code's Tc for
    # K/J = 0.1 (Binder crossing at 0.72, benchmarks/cluster_tau.py; the Monte Carlo fit of
    # Torelli & Olsen, 2D Mater. 6, 015028 (2019) gives 0.60). Tolerance: 4 combined jackknife
    # errors.
    lat = Lattice(shape, 8, 8, 0.3, shape != "honeycomb")
    model = Model(lat, MU_B_J_PER_T, MEV_J, kk * MEV_J, (0, 0, 1), np.array(field))
    temp = 0.65 * JK
    res = []
    for moves in [("metropolis",), ("metropolis", "cluster")]:
        mc = MonteCarlo(model, temp, seed=31, moves=moves)
        r = mc.run(500, 6000)
        res.append(thermodynamics(r["energy_J"], r["m_order"], r["m_vector"], lat.n_sites,
                                  temp))
    a, b = res
    for name in ("energy_meV", "m_norm"):
        assert abs(a[name] - b[name]) < 4 * np.hypot(a[name + "_err"], b[name + "_err"]), name
    assert b["tau_int"] < a["tau_int"]  # the clusters decorrelate faster near Tc


def test_improved_estimator_matches_the_measured_square_magnetisation():
    # improved estimator (Wolff 1989): at B = 0, <(sum_C abs(S.n))^2/|C|> = <(M.n)^2>/N, so
    # m_r2_improved estimates <m_n^2>; Ising limit K/J = 1e3 at kB T/J = 2.4 (above Onsager's
    # Tc = 2.269). Tolerance: 4 blocking errors of <m_n^2> plus 4 % for the estimator's own
    # noise (it averages far more configurations, its error is smaller)
    lat = Lattice("square", 16, 16, 0.3, True)
    model = Model(lat, MU_B_J_PER_T, MEV_J, 1e3 * MEV_J, (0, 0, 1))
    mc = MonteCarlo(model, 2.4 * JK, seed=4, moves=("metropolis", "cluster"))
    r = mc.run(300, 4000)
    m2 = r["m_vector"][:, 2] ** 2
    est = r["cluster"]["m_r2_improved"]
    assert abs(est - m2.mean()) < 4 * blocking_error(m2) + 0.04 * m2.mean()


def test_exactness_checker_refuses_random_directions_with_anisotropy():
    lat = Lattice("square", 4, 4, 0.3, True)
    easy = Model(lat, MU_B_J_PER_T, MEV_J, 0.1 * MEV_J)
    plane = Model(lat, MU_B_J_PER_T, MEV_J, -0.1 * MEV_J)
    iso = Model(lat, MU_B_J_PER_T, MEV_J, 0.0)
    for model in (easy, plane, iso):
        assert cluster_moves_exact(model)[0]
        assert cluster_moves_exact(model, "axis")[0] and cluster_moves_exact(model, "plane")[0]
    ok, why = cluster_moves_exact(easy, "sphere")
    assert not ok and "anisotropy" in why
    assert cluster_moves_exact(iso, "sphere")[0]
    with pytest.raises(ValueError, match="anisotropy"):
        MonteCarlo(plane, 5.0, seed=1, moves=("metropolis", "cluster"), cluster_direction="sphere")
    with pytest.raises(ValueError, match="ergodic"):
        MonteCarlo(iso, 5.0, seed=1, moves=("cluster",))
    with pytest.raises(ValueError):
        MonteCarlo(iso, 5.0, seed=1, moves=("metropolis", "cluster"), cluster_direction="up")


def _clustered(shape="triangular", nx=6, ny=8, periodic=True, parallel=None, seed=5):
    model = Model(Lattice(shape, nx, ny, 0.3, periodic), MU_B_J_PER_T, MEV_J, 0.3 * MEV_J,
                  (0.2, 0.1, 1.0), np.array([0.2, 0.0, 0.4]))
    return MonteCarlo(model, 4.0, seed=seed, moves=("metropolis", "cluster"), parallel=parallel)


def test_cluster_runs_are_reproducible_resumable_and_thread_independent():
    a = _clustered()
    ra = a.run(30, 20)
    b = _clustered()
    rb = b.run(30, 20)
    assert np.array_equal(ra["energy_J"], rb["energy_J"]) and np.array_equal(a.spins, b.spins)
    assert not np.array_equal(ra["energy_J"], _clustered(seed=6).run(30, 20)["energy_J"])
    c = _clustered(parallel=True).run(30, 20)
    assert np.array_equal(ra["energy_J"], c["energy_J"])
    first = _clustered()
    first.warmup(30)
    first.sweep(10)
    resumed = _clustered()
    resumed.state = first.state
    first.sweep(10)
    resumed.sweep(10)
    assert np.array_equal(first.spins, resumed.spins)
    assert resumed.clusters_per_sweep == first.clusters_per_sweep


@pytest.mark.parametrize("shape,nx,ny,periodic", [("square", 3, 258, True),
                                                  ("honeycomb", 4, 258, False),
                                                  ("triangular", 4, 262, True)])
def test_cluster_flips_keep_the_ghost_rows_current(shape, nx, ny, periodic):
    # several row bands: the banded array after cluster moves must equal a fresh conversion
    # of its own spins (ghost rows included), and the energy must match the reference
    import reference

    mc = _clustered(shape, nx, ny, periodic)
    mc.warmup(20)
    T = mc._work[3]
    fresh = np.zeros_like(T)
    to_banded(np.array(mc.spins), fresh, mc._work[2], periodic, False)
    assert np.array_equal(T, fresh)
    m = mc.model
    e = reference.energy(m.lattice, mc.spins, exchange_J=m.exchange_J,
                         anisotropy_J=m.anisotropy_J, axis=m.axis, moment=m.moment_J_per_T,
                         field_T=m.field_T)
    assert mc.measure()["energy_J"] * m.lattice.n_sites == pytest.approx(e, rel=1e-10)


def _ising_square(L):
    return Model(Lattice("square", L, L, 0.3, True), MU_B_J_PER_T, MEV_J, 1e3 * MEV_J, (0, 0, 1))


def test_cluster_sampler_follows_yangs_magnetisation():
    # spontaneous magnetisation of the square Ising model (Yang, Phys. Rev. 85, 808 (1952)):
    # M(kB T/J = 2.0) = 0.911319. Ising limit K/J = 1e3, L = 24; tolerance: 4 jackknife errors
    # + 0.004 for finite size (xi ~ 2 sites) and the cone of the pinned spins, <cos> ~ 0.999
    model = _ising_square(24)
    temp = 2.0 * JK
    r = MonteCarlo(model, temp, seed=21, moves=("metropolis", "cluster")).run(200, 1500)
    d = thermodynamics(r["energy_J"], r["m_order"], r["m_vector"], model.lattice.n_sites, temp)
    assert abs(d["m_abs"] - 0.911319) < 4 * d["m_abs_err"] + 0.004
    assert d["tau_int"] < 5  # a few cluster steps (local moves need tens of sweeps here)


@pytest.mark.slow
def test_cluster_binder_cumulant_at_the_onsager_temperature():
    # U4 at Tc on the L x L torus: 0.61069 (Kamieniarz & Bloete, J. Phys. A 26, 201 (1993);
    # from memory). Ising limit K/J = 1e3 at Onsager's Tc shifted to first order in T/K,
    # Tc (1 - Tc/(K/J)) (as validation/ising_tc.py). Tolerance: 4 jackknife errors + 0.01 for
    # the corrections to scaling at L = 16..64 (common practice)
    tc = 2.0 / np.log(1.0 + np.sqrt(2.0))
    temp = tc * (1.0 - tc / 1e3) * JK
    for L in (16, 32, 64):
        model = _ising_square(L)
        r = MonteCarlo(model, temp, seed=40 + L, moves=("metropolis", "cluster")).run(500, 20000)
        d = thermodynamics(r["energy_J"], r["m_order"], r["m_vector"], model.lattice.n_sites,
                           temp)
        assert abs(d["binder"] - 0.61069) < 4 * d["binder_err"] + 0.01, L
