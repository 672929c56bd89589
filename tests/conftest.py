"""Shared fixtures: a seeded generator and small lattices."""

import os

import numpy as np
import pytest

os.environ.setdefault("MPLBACKEND", "Agg")


@pytest.fixture
def rng():
    """A seeded NumPy generator (fixed seed: tests are reproducible)."""
    return np.random.default_rng(12345)
