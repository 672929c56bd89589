"""Every energy term against plain loop references; combinations equal the sum of their parts;
the generic kernels equal the terms.

References: exact sums over each bond once (lattice.bonds()) and over sites, with bond vectors
from the site positions (minimum image on a torus); the field is checked against the central
difference of the reference energy, which is exact up to round-off for energies at most
quadratic in S_i (all terms here), and the single-move change against the difference of two
reference energies.
"""

import numpy as np
import pytest

from thinfilm.engines._kernels.site_field import site_field_all, site_totals
from thinfilm.engines.dipolar_term import Dipolar
from thinfilm.input.units import MU0, MU_B_J_PER_T
from thinfilm.model.lattice import Lattice
from thinfilm.model.site_parameters import bond_slots
from thinfilm.model.term_set import TermSet
from thinfilm.model.terms import DMI, Exchange, UniaxialAnisotropy, Vacancies, Zeeman

CASES = [(s, e) for s in ("square", "triangular", "honeycomb") for e in (True, False)]
IDS = [f"{s}-{'p' if e else 'o'}" for s, e in CASES]
MU = 2 * MU_B_J_PER_T
J0 = 1e-21


def _bond_vector(lat, a, b):
    pos = lat.positions_nm.reshape(-1, 2)
    d = pos[b] - pos[a]
    if lat.periodic:
        box = np.array(lat.box_nm)
        d = d - box * np.round(d / box)
    return np.array([d[0], d[1], 0.0]) / np.linalg.norm(d)


def _per_bond(lat, rng, scale):
    nbr, _, bid = bond_slots(lat)
    vals = scale * (0.5 + rng.random(bid.max() + 1))
    return np.where(nbr >= 0, vals[bid], 0.0).reshape(lat.ny, lat.nx, -1)


def _film(shape, periodic, rng, *, vacancies=True):
    lat = Lattice(shape, 6, 4, 0.3, periodic)
    ny, nx = lat.ny, lat.nx
    occ = np.ones((ny, nx), bool)
    if vacancies:
        occ[1, 2] = occ[3, 5] = False
    jb = _per_bond(lat, rng, J0)
    db = _per_bond(lat, rng, 0.3 * J0)
    nbr = np.asarray(lat.neighbours)
    dead = ~occ.ravel()
    cut = (dead[:, None] | dead[np.maximum(nbr, 0)]).reshape(ny, nx, -1)
    jb[cut] = 0.0
    db[cut] = 0.0
    ax = rng.normal(size=(ny, nx, 3))
    mu = MU * (0.8 + 0.4 * rng.random((ny, nx)))
    mu[~occ] = 0.0
    terms = {"exchange": Exchange(lat, jb), "dmi": DMI(lat, db),
             "anisotropy": UniaxialAnisotropy(lat, 0.2 * J0 * rng.random((ny, nx)), ax),
             "zeeman": Zeeman(lat, [0.1, -0.2, 0.3], mu, map_T=rng.normal(size=(ny, nx, 3))),
             "vacancies": Vacancies(lat, occ)}
    s = rng.normal(size=(ny, nx, 3))
    s /= np.linalg.norm(s, axis=-1, keepdims=True)
    s[~occ] = 0.0
    return lat, terms, mu, occ, s, jb, db


def _reference(name, lat, t, mu, occ, s, jb, db):
    """Plain loops: the energy of one term (J)."""
    f = s.reshape(-1, 3)
    nbr = np.asarray(lat.neighbours)
    e = 0.0
    if name in ("exchange", "dmi"):
        vals = (jb if name == "exchange" else db).reshape(nbr.shape)
        for a, b in lat.bonds():
            k = int(np.nonzero(nbr[a] == b)[0][0])
            if name == "exchange":
                e -= vals[a, k] * f[a] @ f[b]
            else:
                dvec = vals[a, k] * np.cross([0.0, 0.0, 1.0], _bond_vector(lat, a, b))
                e += dvec @ np.cross(f[a], f[b])
        return e
    if name == "anisotropy":
        for q in range(lat.n_sites):
            e -= t.k[q] * (f[q] @ t.axis[q]) ** 2
        return e
    if name == "zeeman":
        for q in range(lat.n_sites):
            e -= mu.ravel()[q] * (np.array([0.1, -0.2, 0.3]) + t.map_T[q]) @ f[q]
        return e
    return 0.0


@pytest.mark.parametrize("case", CASES, ids=IDS)
def test_each_term_energy_field_and_move_equal_the_reference(case, rng):
    lat, terms, mu, occ, s, jb, db = _film(*case, rng)
    scale = J0
    for name, t in terms.items():
        ref = _reference(name, lat, t, mu, occ, s, jb, db)
        assert t.energy(s) == pytest.approx(ref, abs=1e-12 * scale * lat.n_sites)
        field = np.zeros_like(s)
        t.add_field(s, field)
        h = 1e-3
        for q in (0, 7, lat.n_sites - 1):
            i, j = divmod(q, lat.nx)
            if not occ[i, j]:
                continue
            for c in range(3):
                sp = s.copy()
                sm = s.copy()
                sp[i, j, c] += h
                sm[i, j, c] -= h
                grad = (_reference(name, lat, t, mu, occ, sp, jb, db)
                        - _reference(name, lat, t, mu, occ, sm, jb, db)) / (2 * h)
                assert -grad == pytest.approx(field[i, j, c], abs=1e-9 * scale)
            new = rng.normal(size=3)
            new /= np.linalg.norm(new)
            s2 = s.copy()
            s2[i, j] = new
            want = _reference(name, lat, t, mu, occ, s2, jb, db) - ref
            assert t.delta_energy(s, q, new) == pytest.approx(want, abs=1e-12 * scale)


@pytest.mark.parametrize("case", CASES, ids=IDS)
def test_the_set_is_the_sum_of_its_parts_and_the_kernels_agree(case, rng):
    lat, terms, mu, occ, s, jb, db = _film(*case, rng)
    # a second exchange and DMI term: merged by adding couplings
    extra = [Exchange(lat, 0.5 * jb), DMI(lat, -0.25 * db)]
    ts = TermSet(lat, mu, (*terms.values(), *extra), MU)
    assert ts.signatures == tuple(sorted({t.signature for t in terms.values()}))
    parts = sum(t.energy(s) for t in (*terms.values(), *extra))
    assert ts.energy(s) == pytest.approx(parts, abs=1e-12 * J0 * lat.n_sites)
    nbr, jt, dm, kt, axis, bs, occ8 = ts.kernel_arrays
    f = s.reshape(-1, 3)
    out = np.empty_like(f)
    site_field_all(f, nbr, jt, dm, kt, axis, occ8, ts.field_T, bs, out)
    want = ts.field_J(s).reshape(-1, 3)
    mu_f = mu.ravel()
    assert np.allclose(out * mu_f[:, None], want, rtol=0, atol=1e-12 * J0)
    tot = site_totals(f, nbr, jt, dm, kt, axis, occ8, ts.moment_rel, ts.field_T, bs)
    assert sum(tot[3:]) * MU == pytest.approx(ts.energy(s), abs=1e-12 * J0 * lat.n_sites)
    assert ts.uniform_model() is None


def _dipole_reference(lat, mu, s):
    """Direct pair sum, open edges (point dipoles): (mu0/4pi) sum_{i<j} mu_i mu_j [S_i.S_j -
    3 (S_i.r)(S_j.r)/r^2] / r^3 (textbook dipole-dipole energy)."""
    pos = np.concatenate([lat.positions_nm.reshape(-1, 2) * 1e-9,
                          np.zeros((lat.n_sites, 1))], axis=1)
    f = s.reshape(-1, 3)
    m = mu.ravel()
    e = 0.0
    for a in range(lat.n_sites):
        for b in range(a + 1, lat.n_sites):
            r = pos[b] - pos[a]
            d = np.linalg.norm(r)
            e += m[a] * m[b] * (f[a] @ f[b] - 3 * (f[a] @ r) * (f[b] @ r) / d**2) / d**3
    return MU0 / (4 * np.pi) * e


@pytest.mark.parametrize("shape", ["square", "triangular", "honeycomb"])
def test_dipolar_term_with_per_site_moments(shape, rng):
    lat, terms, mu, occ, s, jb, db = _film(shape, False, rng)
    dip = Dipolar(lat, mu, MU)
    ref = _dipole_reference(lat, mu, s)
    assert dip.energy(s) == pytest.approx(ref, rel=1e-10)
    for q in (0, 9):
        new = rng.normal(size=3)
        new /= np.linalg.norm(new)
        s2 = s.copy()
        s2.reshape(-1, 3)[q] = new
        assert dip.delta_energy(s, q, new) == pytest.approx(
            _dipole_reference(lat, mu, s2) - ref, abs=1e-9 * abs(ref))


@pytest.mark.parametrize("periodic", [True, False])
def test_prism_dipolar_move_change_is_exact(periodic, rng):
    # prism sites carry a self term quadratic in S_q: the move change must include it
    lat = Lattice("square", 6, 4, 0.3, periodic)
    mu = np.full((4, 6), MU)
    dip = Dipolar(lat, mu, MU, thickness_nm=0.5)
    s = rng.normal(size=(4, 6, 3))
    s /= np.linalg.norm(s, axis=-1, keepdims=True)
    e0 = dip.energy(s)
    for q in (0, 13):
        new = rng.normal(size=3)
        new /= np.linalg.norm(new)
        s2 = s.copy()
        s2.reshape(-1, 3)[q] = new
        assert dip.delta_energy(s, q, new) == pytest.approx(dip.energy(s2) - e0,
                                                          abs=1e-11 * abs(e0))


def test_dmi_with_disorder_scales_with_the_exchange_of_each_bond():
    # a weakened grain boundary or a vacancy weakens or removes the bond's DMI in proportion
    # (the choice documented in film_terms); the film runs on the generic kernels
    from thinfilm.engines.dipolar_term import film_terms
    from thinfilm.engines.stochastic_llg import LLGSimulation
    from thinfilm.input.disorder_spec import DisorderSpec, GrainSpec
    from thinfilm.input.units import MEV_J
    from thinfilm.model.disorder import realise_disorder
    from thinfilm.model.parameters import Model

    lat = Lattice("triangular", 12, 8, 1.0, True)
    m = Model(lat, MU, MEV_J, 0.1 * MEV_J, dmi_J=0.2 * MEV_J)
    p = realise_disorder(m, DisorderSpec(vacancies=0.1, grains=GrainSpec(4.0, 0.0, None, 0.3)),
                         2)
    ts = film_terms(m, p)
    dmi = ts.term("dmi")
    assert dmi.signature == ("dmi", "per-bond")
    jb = p.exchange_J.reshape(lat.n_sites, -1)
    assert np.allclose(dmi.d, 0.2 * jb, rtol=1e-14, atol=0)
    assert np.any((jb > 0) & (jb < 0.5 * MEV_J)) and np.any(~p.occupied)
    sim = LLGSimulation(m, site_params=p, temperature_K=5.0, damping=0.5, time_step_s=1e-15)
    assert sim.path == "generic"
    sim.advance(5)
    e = sim.measure()[1] * ts.n_occupied * MEV_J
    assert e == pytest.approx(ts.energy(sim.spins), rel=1e-12)
