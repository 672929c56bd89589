"""The shipped calibration table kB Tc/J (K/J) against a fresh, independent Monte Carlo run.

Slow: re-measures the square-lattice point K/J = 1 with validation/tc_anisotropy_table.py's
two-pass Binder crossing but other random streams, and checks it against the tabulated value
within the two stated errors (3 sigma of their quadrature sum)."""

import importlib.util
import math
from pathlib import Path

import pytest

from thinfilm.input.calibration import reduced_tc

_spec = importlib.util.spec_from_file_location(
    "tc_table", Path(__file__).resolve().parents[2] / "validation" / "tc_anisotropy_table.py")
tab = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(tab)


class _Shifted(tab.Cache):
    """The script's point cache with other seeds: an independent run."""

    def point(self, shape, k, L, t, n, seed):
        return super().point(shape, k, L, t, n, seed + 7919)


@pytest.mark.slow
def test_table_point_k_equal_j_reproduces(tmp_path):
    row = tab.one_point(_Shifted(tmp_path / "cache.jsonl"), "square", 1.0, 8000)
    tau, err, _ = reduced_tc("square", 1.0)
    assert abs(row["tc_over_j"] - tau) <= 3 * math.hypot(err, row["tc_over_j_err"])
