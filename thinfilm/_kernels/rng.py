"""Counter-based random numbers: a pure function of (seed, stream, counter).

Each number is a hash of its coordinates (seed, step, site, component), so results do not
depend on the number of threads or on the order sites are visited. The mixer is the
SplitMix64 finaliser (Steele, Lea and Flood, OOPSLA 2014), applied twice to the combined key.
"""

import math

import numba as nb
import numpy as np

__all__ = ["key", "hash64", "uniform01", "normal_pair", "normals3"]

_M1 = np.uint64(0xBF58476D1CE4E5B9)
_M2 = np.uint64(0x94D049BB133111EB)
_G = np.uint64(0x9E3779B97F4A7C15)
_S30 = np.uint64(30)
_S27 = np.uint64(27)
_S31 = np.uint64(31)
_S11 = np.uint64(11)
_S32 = np.uint64(32)
_INV53 = 1.0 / 9007199254740992.0  # 2^-53
_INV32 = 1.0 / 4294967296.0  # 2^-32
_MASK32 = np.uint64(0xFFFFFFFF)
_TWO_PI = 2.0 * math.pi


@nb.njit(inline="always", cache=True)
def _mix(z):
    z = (z ^ (z >> _S30)) * _M1
    z = (z ^ (z >> _S27)) * _M2
    return z ^ (z >> _S31)


@nb.njit(inline="always", cache=True)
def key(seed, stream, step):
    """64-bit key of one (seed, stream, step); combine with a site counter in hash64."""
    return _mix(np.uint64(seed) * _G + _mix(np.uint64(stream) + _mix(np.uint64(step) + _G)))


@nb.njit(inline="always", cache=True)
def hash64(k, counter):
    """64 random bits from a key and a counter (site * slots + slot)."""
    return _mix(k ^ _mix((np.uint64(counter) + np.uint64(1)) * _G))


@nb.njit(inline="always", cache=True)
def uniform01(k, counter):
    """Uniform double in [0, 1) with 53 random bits."""
    return float(hash64(k, counter) >> _S11) * _INV53


@nb.njit(inline="always", cache=True)
def normal_pair(k, counter):
    """Two independent standard normals by Box-Muller from one 64-bit hash (32 bits each)."""
    h = hash64(k, counter)
    u1 = (float(h >> _S32) + 1.0) * _INV32  # (0, 1]
    u2 = float(h & _MASK32) * _INV32  # [0, 1)
    r = math.sqrt(-2.0 * math.log(u1))
    t = _TWO_PI * u2
    return r * math.cos(t), r * math.sin(t)


@nb.njit(inline="always", cache=True)
def normals3(k, site):
    """Three independent standard normals for one site (uses counters 2 site, 2 site + 1)."""
    a, b = normal_pair(k, 2 * site)
    c, _ = normal_pair(k, 2 * site + 1)
    return a, b, c
