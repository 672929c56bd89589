"""Planned real 2D FFT pairs on reused buffers: FFTW through pyFFTW, else scipy.fft.

The dipolar convolution transforms the same array shapes thousands of times. FFTW plans made
once with ``FFTW_MEASURE`` on aligned buffers that are reused for every call run about 1.5 to
2 times faster than ``scipy.fft`` on fresh arrays (``benchmarks/dipolar_rate.py`` prints both),
and no array is allocated per call. Without pyFFTW the same buffers are served by ``scipy.fft``.

For each direction two plans are made, one batched over all grids and one per grid; the one
that runs faster here (least of 3 timed runs each) is kept. FFTW_MEASURE on a shared machine
sometimes settles on a plan that runs twice as slowly as the best; two candidates make that
rare. Planning costs about 1.5 s for three 1024 x 1024 grids, once per field. The choice and
FFTW's wisdom are kept on disk (:mod:`.fft_wisdom`), so later processes rebuild the same plans
(same rounding: a resumed run continues bit for bit) in a fraction of that time.

Both transforms are unnormalised: backward(forward(x)) = n_points x. Callers fold the 1/n_points
into what they multiply in between (the dipolar tensor), which saves one pass over the grid.
"""

import time

import numpy as np
from scipy import fft as sfft

from thinfilm.engines import fft_wisdom

try:  # pyFFTW is a declared dependency; the fallback keeps a broken install usable
    import pyfftw
except ImportError:  # pragma: no cover - exercised only without pyFFTW
    pyfftw = None

__all__ = ["RealFFTPair", "fftw_available"]

_COMPLEX = {np.dtype(np.float64): np.complex128, np.dtype(np.float32): np.complex64}


def fftw_available():
    """True when pyFFTW imports (the planned FFTW path is used)."""
    return pyfftw is not None


class RealFFTPair:
    """Forward and backward real 2D FFTs over the last two axes of fixed, reused buffers.

    Parameters
    ----------
    shape : tuple of int
        Real grid shape (..., fy, fx); the spectrum has shape (..., fy, fx // 2 + 1).
    dtype : numpy float dtype
        float64 or float32.
    threads : int
        FFT threads.
    backend : {"auto", "fftw", "scipy"}
        "auto" takes FFTW when pyFFTW is installed.

    Attributes
    ----------
    real_in : ndarray, shape ``shape``
        Input of :meth:`forward` (zeros at construction; entries never written stay zero,
        which is the zero padding of an open-edge convolution).
    spectrum : ndarray, complex, shape (..., fy, fx // 2 + 1)
        Output of :meth:`forward`, input of :meth:`backward` (destroyed by it).
    real_out : ndarray, shape ``shape``
        Output of :meth:`backward`.
    plan_kinds : tuple of str
        FFTW: ("batched" or "per-grid") for the forward and the backward plan; scipy: ().
    """

    def __init__(self, shape, dtype, threads=1, *, backend="auto"):
        dtype = np.dtype(dtype)
        if dtype not in _COMPLEX:
            raise ValueError(f"dtype must be float64 or float32, got {dtype}")
        if backend not in ("auto", "fftw", "scipy"):
            raise ValueError(f"backend must be 'auto', 'fftw' or 'scipy', got {backend!r}")
        if backend == "fftw" and pyfftw is None:
            raise ImportError("backend 'fftw' needs pyFFTW (pip install pyfftw)")
        self.shape = tuple(int(n) for n in shape)
        self.threads = max(1, int(threads))
        self.backend = "fftw" if backend != "scipy" and pyfftw is not None else "scipy"
        spec_shape = self.shape[:-1] + (self.shape[-1] // 2 + 1,)
        ctype = _COMPLEX[dtype]
        if self.backend == "fftw":
            self.real_in = pyfftw.zeros_aligned(self.shape, dtype=dtype)
            self.spectrum = pyfftw.zeros_aligned(spec_shape, dtype=ctype)
            self.real_out = pyfftw.zeros_aligned(self.shape, dtype=dtype)
            # planning with FFTW_MEASURE overwrites the buffers: plan first, then clear
            wisdom, choices = fft_wisdom.load()
            if wisdom is not None:
                pyfftw.import_wisdom(wisdom)
            n_known = len(choices)
            chosen, kinds = [], []
            for src, dst, direction in ((self.real_in, self.spectrum, "FFTW_FORWARD"),
                                        (self.spectrum, self.real_out, "FFTW_BACKWARD")):
                key = f"{self.shape}|{dtype.name}|{self.threads}|{direction}|{pyfftw.__version__}"
                builders = _plans(src, dst, self.threads, direction)
                if key in choices and choices[key] < len(builders):
                    plans = builders[choices[key]]()
                else:
                    choices[key], plans = _fastest(builders, src)
                chosen.append(plans)
                kinds.append(_KINDS[choices[key]])
            self._fwd, self._bwd = chosen
            self.plan_kinds = tuple(kinds)
            if len(choices) > n_known:
                fft_wisdom.store(pyfftw.export_wisdom(), choices)
            self.real_in[...] = 0.0
        else:
            self.plan_kinds = ()
            self.real_in = np.zeros(self.shape, dtype=dtype)
            self.spectrum = np.zeros(spec_shape, dtype=ctype)
            self.real_out = np.zeros(self.shape, dtype=dtype)

    def forward(self):
        """spectrum <- FFT(real_in) (unnormalised)."""
        if self.backend == "fftw":
            for plan in self._fwd:
                plan.execute()
        else:
            self.spectrum[...] = sfft.rfft2(self.real_in, workers=self.threads)
        return self.spectrum

    @property
    def n_points(self):
        """Points of one 2D grid, fy fx."""
        return self.shape[-1] * self.shape[-2]

    def backward(self):
        """real_out <- unnormalised inverse FFT(spectrum); spectrum is destroyed."""
        if self.backend == "fftw":
            for plan in self._bwd:
                plan.execute()
        else:
            self.real_out[...] = sfft.irfft2(self.spectrum, s=self.shape[-2:], norm="forward",
                                             workers=self.threads, overwrite_x=True)
        return self.real_out


_KINDS = ("batched", "per-grid")


def _plans(src, dst, threads, direction):
    """Builders of the candidate plan lists for src -> dst over the last two axes: batched, and
    (for more than one grid) one plan per grid."""
    flags = ("FFTW_MEASURE",) if direction == "FFTW_FORWARD" else ("FFTW_MEASURE",
                                                                   "FFTW_DESTROY_INPUT")
    kw = dict(axes=(-2, -1), threads=threads, direction=direction, flags=flags)
    builders = [lambda: [pyfftw.FFTW(src, dst, **kw)]]
    if src.ndim > 2 and src.size > src.shape[-1] * src.shape[-2]:
        a = src.reshape((-1,) + src.shape[-2:])
        b = dst.reshape((-1,) + dst.shape[-2:])
        builders.append(lambda: [pyfftw.FFTW(a[k], b[k], **kw) for k in range(a.shape[0])])
    return builders


def _fastest(builders, src, repeats=3):
    """(index, plan list) of the candidate with the least run time (min of ``repeats`` runs on
    a zeroed input array src)."""
    if len(builders) == 1:
        return 0, builders[0]()
    best, best_t = None, np.inf
    for i, build in enumerate(builders):
        plans = build()
        for _ in range(repeats):
            src[...] = 0
            t0 = time.perf_counter()
            for p in plans:
                p.execute()
            dt = time.perf_counter() - t0
            if dt < best_t:
                best, best_t = (i, plans), dt
    return best
