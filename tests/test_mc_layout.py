"""MonteCarlo keeps its spins in the kernel's banded layout: every result must stay bitwise
equal to the plain path (spins converted in and out of the kernel at each call), recomputed
here with the kernel functions on an ordinary (ny, nx, 3) array."""

import numpy as np
import pytest

from thinfilm.engines._kernels.metropolis import (
    N_COUNTS,
    metropolis_sweeps,
    metropolis_sweeps_serial,
    row_colouring,
)
from thinfilm.engines._kernels.metropolis_measure import metropolis_samples, row_sums_serial
from thinfilm.engines.montecarlo import MonteCarlo
from thinfilm.input.units import MEV_J, MU_B_J_PER_T
from thinfilm.model.lattice import Lattice
from thinfilm.model.parameters import Model

CASES = [("square", 6, 5, True), ("square", 5, 5, False), ("square", 3, 258, True),
         ("triangular", 6, 6, True), ("triangular", 4, 262, False), ("honeycomb", 8, 6, True),
         ("honeycomb", 5, 7, False), ("honeycomb", 4, 258, True), ("square", 1, 4, False),
         ("square", 2, 2, True), ("triangular", 2, 2, True), ("triangular", 1, 5, False),
         ("honeycomb", 1, 3, False), ("honeycomb", 2, 2, True)]


def _model(shape, nx, ny, periodic):
    axis = np.array([0.3, -0.2, 0.9])
    return Model(Lattice(shape, nx, ny, 0.3, periodic), MU_B_J_PER_T, MEV_J, 0.4 * MEV_J,
                 axis / np.linalg.norm(axis), np.array([0.5, -1.0, 2.0]))


class PlainPath:
    """The driver's previous arithmetic: plain spins, kernel called with conversions."""

    def __init__(self, mc, spins, parallel):
        lat = mc.model.lattice
        self.s = np.array(spins)
        self.order, self.bounds = row_colouring(lat.ny, lat.periodic)
        code, per, jt, kt, axis = mc.model.kernel_args()
        self.args = (code, per, jt, kt, np.ascontiguousarray(axis),
                     np.ascontiguousarray(mc.model.field_T))
        self.mc = mc
        self.parallel = parallel
        self.counts = np.zeros((lat.ny, N_COUNTS), dtype=np.int64)

    def sweep(self, sweep0, n):
        mc = self.mc
        kern = metropolis_sweeps if self.parallel else metropolis_sweeps_serial
        kern(self.s, self.order, self.bounds, *self.args, mc._beta, mc.sigma, mc.seed, mc.stream,
             sweep0, n, mc.reflection, mc.n_or, self.counts)

    def samples(self, sweep0, n, every):
        mc = self.mc
        out = np.empty((n, 4))
        rows = np.empty((self.s.shape[0], 4))
        metropolis_samples(self.s, self.order, self.bounds, *self.args, mc._beta, mc.sigma,
                           mc.seed, mc.stream, sweep0, n, every, mc.reflection, mc.n_or,
                           self.counts, rows, out, self.parallel)
        return out

    def totals(self):
        rows = np.empty((self.s.shape[0], 4))
        row_sums_serial(self.s, *self.args, rows)
        return rows.sum(axis=0)


@pytest.mark.parametrize("parallel", [False, True])
@pytest.mark.parametrize("shape,nx,ny,periodic", CASES)
def test_banded_state_matches_the_plain_path_bitwise(shape, nx, ny, periodic, parallel):
    model = _model(shape, nx, ny, periodic)
    mc = MonteCarlo(model, 7.0, seed=11, parallel=parallel, over_relaxation=2, reflection=True)
    ref = PlainPath(mc, mc.spins, parallel)
    mc.sweep(10)
    ref.sweep(0, 10)
    mc.sigma = 0.3  # the plain path reads sigma from mc at each call
    mc.sweep(5)
    ref.sweep(10, 5)
    assert np.array_equal(mc.spins, ref.s)
    r = mc.run(0, 7, 3, tune=False)
    out = ref.samples(15, 7, 3)
    assert np.array_equal(mc.spins, ref.s)
    n = model.lattice.n_sites
    assert np.array_equal(r["energy_J"], model.moment_J_per_T * out[:, 3] / n)
    assert np.array_equal(r["m_vector"], out[:, :3] / n)
    mc.sweep(2)
    ref.sweep(36, 2)
    d = mc.measure()  # measured in the banded layout, before spins are converted
    tot = ref.totals()
    assert d["energy_J"] == model.moment_J_per_T * tot[3] / n
    assert np.array_equal(d["m_vector"], tot[:3] / n)
    assert np.array_equal(mc.spins, ref.s)


def test_spins_view_is_read_only_and_assignment_updates_the_state(rng):
    model = _model("triangular", 6, 4, True)
    mc = MonteCarlo(model, 7.0, seed=3)
    with pytest.raises(ValueError):
        mc.spins[0, 0, 0] = 1.0
    new = rng.normal(size=(4, 6, 3))
    new /= np.linalg.norm(new, axis=-1, keepdims=True)
    mc.spins = new
    assert np.array_equal(mc.spins, new)
    a = MonteCarlo(model, 7.0, seed=3, initial_spins=new)
    a.sweep(3)
    mc.sweep(3)
    assert np.array_equal(a.spins, mc.spins)
    assert not np.array_equal(a.spins, new)
