"""Plain vectorised NumPy Heun step (whole-array ops, np.roll neighbours): the speed baseline.

Same equations as thinfilm._kernels.llg (Gilbert LLG in Landau-Lifshitz form with a fixed
thermal field per step, renormalised predictor and corrector); periodic edges only. Noise
from numpy's default generator (a different stream from the kernels: the peer is for timing).
"""

import numpy as np

__all__ = ["NumpyHeun"]


class NumpyHeun:
    """Heun stepper for spins s (ny, nx, 3) on a periodic square/triangular/honeycomb grid."""

    def __init__(self, shape, jt, kt, axis, b, gdt, alpha, sigma, seed=0):
        self.shape = shape
        self.jt, self.kt, self.gdt, self.alpha, self.sigma = jt, kt, gdt, alpha, sigma
        self.axis = np.asarray(axis, float)
        self.b = np.asarray(b, float)
        self.rng = np.random.default_rng(seed)

    def neighbour_sum(self, s):
        up = np.roll(s, -1, axis=0)
        dn = np.roll(s, 1, axis=0)
        h = np.roll(s, -1, axis=1) + np.roll(s, 1, axis=1)
        if self.shape == "honeycomb":
            ny, nx = s.shape[:2]
            even = ((np.arange(ny)[:, None] + np.arange(nx)[None, :]) % 2 == 0)[..., None]
            return h + np.where(even, up, dn)
        h += up + dn
        if self.shape == "triangular":
            # even rows: shift -1, odd rows: shift +1
            us = np.empty_like(s)
            ds = np.empty_like(s)
            us[0::2] = np.roll(up[0::2], 1, axis=1)
            us[1::2] = np.roll(up[1::2], -1, axis=1)
            ds[0::2] = np.roll(dn[0::2], 1, axis=1)
            ds[1::2] = np.roll(dn[1::2], -1, axis=1)
            h += us + ds
        return h

    def field(self, s, noise):
        sn = s @ self.axis
        return (self.jt * self.neighbour_sum(s) + self.kt * sn[..., None] * self.axis + self.b
                + noise)

    def rhs(self, s, h):
        c = np.cross(s, h)
        return -self.gdt * (c + self.alpha * np.cross(s, c))

    def step(self, s):
        noise = self.sigma * self.rng.standard_normal(s.shape)
        d1 = self.rhs(s, self.field(s, noise))
        sp = s + d1
        sp /= np.linalg.norm(sp, axis=-1, keepdims=True)
        d2 = self.rhs(sp, self.field(sp, noise))
        out = s + 0.5 * (d1 + d2)
        out /= np.linalg.norm(out, axis=-1, keepdims=True)
        return out
