"""Snapshot files: the compact layout (float32, the lattice once per folder) and the first
layout (float64 spins and positions in every file) read into the same dict; a newer layout is
refused by name."""

import numpy as np
import pytest

from thinfilm.input.errors import InputError
from thinfilm.model.lattice import Lattice
from thinfilm.runs.folder import RunFolder, load_snapshot


@pytest.mark.parametrize("shape", ["square", "triangular", "honeycomb"])
def test_compact_snapshot_round_trip(tmp_path, shape):
    lat = Lattice(shape, 6, 4, 0.3)
    s = np.random.default_rng(1).normal(size=(4, 6, 3))
    s /= np.linalg.norm(s, axis=-1, keepdims=True)
    p = RunFolder(tmp_path / "r").write_snapshot("snap_000000", s, lat, time_ps=1.5)
    with np.load(p) as z:
        assert z["spins"].dtype == np.float32 and "positions_nm" not in z.files
    got = load_snapshot(p)
    # float32 keeps 24-bit mantissas: |error| <= 2^-24 for components of size <= 1
    np.testing.assert_allclose(got["spins"], s, rtol=0, atol=2**-24)
    np.testing.assert_array_equal(got["positions_nm"], lat.positions_nm)
    assert got["components"] == "all" and got["time_ps"] == 1.5


def test_first_layout_still_reads(tmp_path):
    lat = Lattice("square", 5, 3, 0.4)
    s = np.zeros((3, 5, 3))
    s[..., 2] = 1.0
    p = tmp_path / "old.npz"
    np.savez(p, spins=s, positions_nm=lat.positions_nm, spacing_nm=0.4,
             box_nm=np.asarray(lat.box_nm), shape="square", periodic=True, time_ps=2.0)
    got = load_snapshot(p)
    np.testing.assert_array_equal(got["spins"], s)
    np.testing.assert_array_equal(got["positions_nm"], lat.positions_nm)


def test_newer_layout_is_refused(tmp_path):
    p = tmp_path / "new.npz"
    np.savez(p, format=99, spins=np.zeros((2, 2, 3)), spacing_nm=0.4)
    with pytest.raises(InputError, match="layout 99 is newer"):
        load_snapshot(p)
