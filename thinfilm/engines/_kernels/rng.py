"""Counter-based random numbers: a pure function of (seed, stream, counter).

Each number is a hash of its coordinates (seed, step, site, component), so results do not
depend on the number of threads or on the order sites are visited. The mixer is the
SplitMix64 finaliser (Steele, Lea and Flood, OOPSLA 2014), applied twice to the combined key.

``normals_row`` fills a whole buffer with standard normals by Box-Muller (Box and Muller, Ann.
Math. Stat. 29, 610 (1958)), one 64-bit hash per pair. It uses branch-free polynomial log and
sine/cosine kernels (bit manipulation of IEEE doubles, Horner series), so the loop compiles to
SIMD code without a vector math library; ``normal_pair`` (libm calls) stays as it was.
"""

import math

import numba as nb
import numpy as np
from llvmlite import ir
from numba import types
from numba.extending import intrinsic

__all__ = ["key", "hash64", "uniform01", "normal_pair", "normals3", "normals_row", "fast_log",
           "fast_sincos_quarter", "bm_pair"]

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
    return _mix(np.uint64(k) ^ _mix((np.uint64(counter) + np.uint64(1)) * _G))


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


# ---------------------------------------------------------------- vectorisable Box-Muller

def bitcast_intrinsic(src, dst, llvm_type):
    """A numba intrinsic that reinterprets the bits of a ``src`` scalar as a ``dst`` scalar."""

    @intrinsic
    def cast(typingctx, x):
        if x != src:
            return None

        def codegen(context, builder, signature, args):
            return builder.bitcast(args[0], llvm_type)

        return dst(src), codegen

    return cast


_f64_bits = bitcast_intrinsic(types.float64, types.uint64, ir.IntType(64))  # float64 -> bits
_bits_f64 = bitcast_intrinsic(types.uint64, types.float64, ir.DoubleType())  # bits -> float64


_EXP_MASK = np.uint64(0x7FF)
_MANT_MASK = np.uint64(0x000FFFFFFFFFFFFF)
_ONE_BITS = np.uint64(0x3FF0000000000000)
_S52 = np.uint64(52)
_S30 = np.uint64(30)
_MASK30 = np.uint64(0x3FFFFFFF)
_ONE = np.uint64(1)
_ZERO = np.uint64(0)
_S63 = np.uint64(63)
_LN2 = 0.6931471805599453
_SQRT2 = 1.4142135623730951
_INV30 = 1.0 / 1073741824.0  # 2^-30
_QUARTER_PI = 0.25 * math.pi


@nb.njit(inline="always", cache=True, error_model="numpy")
def fast_log(x):
    """Natural log of a positive normal float64, branch-free (error ~1 ulp).

    x = 2^e f with f in [sqrt(1/2), sqrt(2)); log f = 2 atanh(t), t = (f - 1)/(f + 1),
    |t| <= 0.1716, summed to t^23 (truncation below 1e-17 relative).
    """
    b = _f64_bits(x)
    e = float(np.int64((b >> _S52) & _EXP_MASK) - 1023)
    f = _bits_f64((b & _MANT_MASK) | _ONE_BITS)  # [1, 2)
    big = f > _SQRT2
    f = 0.5 * f if big else f
    e = e + 1.0 if big else e
    t = (f - 1.0) / (f + 1.0)
    z = t * t
    p = 1.0 / 23.0
    p = p * z + 1.0 / 21.0
    p = p * z + 1.0 / 19.0
    p = p * z + 1.0 / 17.0
    p = p * z + 1.0 / 15.0
    p = p * z + 1.0 / 13.0
    p = p * z + 1.0 / 11.0
    p = p * z + 1.0 / 9.0
    p = p * z + 1.0 / 7.0
    p = p * z + 1.0 / 5.0
    p = p * z + 1.0 / 3.0
    p = p * z + 1.0
    return e * _LN2 + 2.0 * t * p


@nb.njit(inline="always", cache=True, error_model="numpy")
def fast_sincos_quarter(th):
    """(cos th, sin th) for abs(th) <= pi/4 by Taylor series to th^16 / th^15 (< 5e-17)."""
    z = th * th
    s = -1.0 / 1307674368000.0  # -1/15!
    s = s * z + 1.0 / 6227020800.0
    s = s * z - 1.0 / 39916800.0
    s = s * z + 1.0 / 362880.0
    s = s * z - 1.0 / 5040.0
    s = s * z + 1.0 / 120.0
    s = s * z - 1.0 / 6.0
    s = th + th * z * s
    c = 1.0 / 20922789888000.0  # 1/16!
    c = c * z - 1.0 / 87178291200.0
    c = c * z + 1.0 / 479001600.0
    c = c * z - 1.0 / 3628800.0
    c = c * z + 1.0 / 40320.0
    c = c * z - 1.0 / 720.0
    c = c * z + 1.0 / 24.0
    c = c * z - 0.5
    c = 1.0 + z * c
    return c, s


@nb.njit(inline="always", cache=True, error_model="numpy")
def bm_pair(h):
    """Two independent standard normals from 64 random bits (Box-Muller, branch-free).

    The high 32 bits give u1 in (0, 1] (radius sqrt(-2 log u1), at most 6.66); the low 32 bits
    the angle: 2 bits choose the quadrant q, 30 bits the angle th in [-pi/4, pi/4) inside it,
    phi = q pi/2 + th is uniform on the circle. The quarter turn is done on the bit patterns
    (swap and sign flips) so the loop has no branches.
    """
    h = np.uint64(h)
    u1 = (float(h >> _S32) + 1.0) * _INV32
    r = math.sqrt(-2.0 * fast_log(u1))
    lo = h & _MASK32
    q = lo >> _S30
    th = (float(lo & _MASK30) * _INV30 - 0.5) * (2.0 * _QUARTER_PI)
    c, s = fast_sincos_quarter(th)
    swap = _ZERO - (q & _ONE)  # all ones when q is odd
    cb = _f64_bits(c)
    sb = _f64_bits(s)
    xb = (sb & swap) | (cb & ~swap)
    yb = (cb & swap) | (sb & ~swap)
    # (cos phi, sin phi): q=0 (c, s), q=1 (-s, c), q=2 (-c, -s), q=3 (s, -c)
    xb ^= ((q ^ (q >> _ONE)) & _ONE) << _S63
    yb ^= (q >> _ONE) << _S63
    return r * _bits_f64(xb), r * _bits_f64(yb)


@nb.njit(cache=True, error_model="numpy")
def normals_row(k, counter0, sigma, out):
    """out[q] = sigma * (standard normal), q < n = out.size (1D contiguous).

    Pair p (counter counter0 + p, p < ceil(n/2)) fills out[2p] and out[2p + 1]; for odd n the
    second normal of the last pair is unused. A pure function of (k, counter): results do not
    depend on how rows are split between threads.
    """
    k = np.uint64(k)
    c0 = np.uint64(counter0)
    n = out.size
    half = n // 2
    for p in range(half):
        a, b = bm_pair(hash64(k, c0 + np.uint64(p)))
        out[2 * p] = sigma * a
        out[2 * p + 1] = sigma * b
    if n > 2 * half:
        a, b = bm_pair(hash64(k, c0 + np.uint64(half)))
        out[n - 1] = sigma * a
