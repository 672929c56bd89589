"""Tunables: threads used by the kernels."""

import os

import numba

__all__ = ["set_threads", "threads"]


def threads():
    """Number of threads the numba kernels use now."""
    return numba.get_num_threads()


def set_threads(n=None):
    """Set the kernel thread count (None: THINFILM_THREADS or all cores numba sees)."""
    if n is None:
        n = int(os.environ.get("THINFILM_THREADS", numba.config.NUMBA_NUM_THREADS))
    n = max(1, min(int(n), numba.config.NUMBA_NUM_THREADS))
    numba.set_num_threads(n)
    return n
