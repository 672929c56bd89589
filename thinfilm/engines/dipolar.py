"""Dipole-dipole field and energy of the site moments of a 2D film, by FFT convolution.

    E = (mu0 / 4 pi) mu_s^2 sum_<i<j> [S_i.S_j - 3 (S_i.r_ij)(S_j.r_ij) / r_ij^2] / r_ij^3

over every pair once, at the true site positions (``Lattice.positions_nm``) of the square,
triangular and honeycomb lattices. The field (tesla) is B_i = -(1/mu_s) dE/dS_i, so
E = -(mu_s / 2) sum_i S_i.B_i. Open edges: zero-padded (exact free-space) convolution.
Periodic edges: the converged sum over all torus images, by an Ewald split (see
:mod:`thinfilm.model.dipolar_tensor`; relative error below 1e-13 of the nearest-neighbour term).

With ``thickness_nm`` (square lattice) a site is not a point but the uniformly magnetised prism
a x a x t carrying mu_s (M = mu_s / (a^2 t)), and B_i is the field averaged over prism i: the
pair term above becomes the prism-prism demagnetising tensor, and each prism also feels its own
demagnetising field -mu0 M N_self (:mod:`thinfilm.model.prism_tensor`). For a uniform state the
sum over the film is then exactly that of a continuous slab, E_perp - E_inplane = mu0 Ms^2 / 2
per volume, where point dipoles give about 0.54 mu0 Ms^2 (t / a). The tensor is accurate to
about 1e-12 of mu0 Ms. Only the tensor values change: same FFTs, same memory.

The grid is split into the ``p q`` Bravais sublattices of the rectangular cell
``Lattice.period``; each sublattice pair is one translation-invariant convolution. The
transformed tensor (times 1/(fy fx), the normalisation of the inverse transform) is built once
per (lattice, mu_s, precision) and cached (``cache_clear``).

Cost per field evaluation: 3 real forward and 3 inverse 2D FFTs (FFTW plans on reused
buffers through pyFFTW, else ``scipy.fft``; ``workers`` threads) of the sublattice grids, i.e.
of about N points (periodic) or 4 N points (open), plus one pass over the tensor. Tensor
memory, double precision: 24 n_pairs / n_sub bytes per site periodic (n_pairs =
n_sub (n_sub + 1) / 2 stored pairs): 24, 36, 60 bytes per site for the square, triangular,
honeycomb lattice; about 4 times that with open edges (96, 144, 240);
half in single precision. ``DipolarField.bytes_per_site`` gives the exact figure.
"""

from collections import OrderedDict

import numpy as np

from thinfilm.config import threads
from thinfilm.engines._kernels.dipolar import (
    apply_tensor,
    dot_planes,
    gather_planes,
    scatter_planes,
)
from thinfilm.engines.fft_plan import RealFFTPair
from thinfilm.input.dipolar_spec import POINT_DIPOLE_SUM  # sum' (a / r)^3 per lattice
from thinfilm.input.units import MU0
from thinfilm.model.dipolar_tensor import (
    SublatticeGrid,
    check_prism_lattice,
    isotropic_self_term,
    tensor_spectrum,
)
from thinfilm.model.lattice import Lattice

__all__ = ["DipolarField", "dipolar_constant_T", "dipolar_bound_T", "cache_clear"]

_PRECISION = {"double": (np.float64, np.complex128), "single": (np.float32, np.complex64)}
_CACHE = OrderedDict()
_CACHE_SIZE = 4


def dipolar_constant_T(moment_J_per_T, spacing_nm):
    """mu0 mu_s / (4 pi a^3) in tesla: the dipolar field of one moment at one spacing a."""
    return MU0 / (4 * np.pi) * moment_J_per_T / (spacing_nm * 1e-9) ** 3


def dipolar_bound_T(lattice, moment_J_per_T, thickness_nm):
    """Bound of the dipolar field (T) of unit spins with moment mu_s: 2 mu0 mu_s/(4 pi a^3) x
    sum' r^-3 for point dipoles, sum_j ||P_ij|| (self term included) for prism sites."""
    a = lattice.spacing_nm
    if thickness_nm is None:
        return 2.0 * POINT_DIPOLE_SUM[lattice.shape] * dipolar_constant_T(moment_J_per_T, a)
    from thinfilm.model.prism_tensor import field_norm_sum

    return field_norm_sum(a, thickness_nm) * a**3 * dipolar_constant_T(moment_J_per_T, a)


def cache_clear():
    """Forget the cached tensors."""
    _CACHE.clear()


def _scale_T(moment):
    """mu0 / 4 pi * mu_s * (1 nm^-3 in m^-3): tesla per unit spin and nm^-3 of tensor."""
    return MU0 / (4 * np.pi) * moment * 1e27


def _cached_tensor(lattice, moment, precision, thickness_nm=None):
    key = (lattice, float(moment), precision, thickness_nm)
    if key in _CACHE:
        _CACHE.move_to_end(key)
        return _CACHE[key]
    # tesla per unit spin and nm^-3 of tensor, times the 1 / (fy fx) of the unnormalised
    # inverse transform (RealFFTPair)
    grid = SublatticeGrid(lattice)
    scale = _scale_T(moment) / (grid.fy * grid.fx)
    spec = (tensor_spectrum(lattice, thickness_nm=thickness_nm) * scale).astype(
        _PRECISION[precision][1])
    spec.setflags(write=False)
    _CACHE[key] = spec
    while len(_CACHE) > _CACHE_SIZE:
        _CACHE.popitem(last=False)
    return spec


class DipolarField:
    """Dipolar field (T) and energy (J) of unit spins on a Lattice with moment mu_s per site.

    Parameters
    ----------
    lattice : Lattice
    moment_J_per_T : float
        mu_s (J/T).
    precision : {"double", "single"}
        Floating type of the FFTs and of the cached tensor. "single" halves memory and roughly
        halves FFT time; its field has relative errors ~1e-7 of the dipolar scale.
    workers : int, optional
        FFT threads (default: the kernel thread count, :func:`thinfilm.config.threads`).
    backend : {"auto", "fftw", "scipy"}
        FFT library (:class:`thinfilm.engines.fft_plan.RealFFTPair`); "auto" takes FFTW
        (pyFFTW) when installed. Both give the same field to round-off.
    thickness_nm : float, optional
        Film thickness t: each site is the uniformly magnetised prism a x a x t (square lattice
        only, 1e-3 <= t/a <= 100). None (default): point dipoles, as before.
    """

    def __init__(self, lattice, moment_J_per_T, *, precision="double", workers=None,
                 backend="auto", thickness_nm=None):
        if not isinstance(lattice, Lattice):
            raise TypeError("DipolarField needs a Lattice")
        if precision not in _PRECISION:
            raise ValueError(f"precision must be 'double' or 'single'; got {precision!r}")
        if not moment_J_per_T > 0:
            raise ValueError("the moment per site must be positive")
        if thickness_nm is not None:
            thickness_nm = float(thickness_nm)
            check_prism_lattice(lattice, thickness_nm)
        self.lattice = lattice
        self.moment_J_per_T = float(moment_J_per_T)
        self.precision = precision
        self.workers = workers
        self.thickness_nm = thickness_nm
        self.grid = SublatticeGrid(lattice)
        self.tensor = _cached_tensor(lattice, self.moment_J_per_T, precision, thickness_nm)
        # field along each site's own moment left out of the trace-free tensor (prisms only)
        self.self_field_T = _scale_T(self.moment_J_per_T) * isotropic_self_term(thickness_nm,
                                                                                 lattice)
        self.pair_index, self.pair_conj = self.grid.pair_index()
        self.backend = backend
        self._fft = None  # RealFFTPair, planned on first use for the current thread count

    @property
    def nbytes(self):
        """Bytes of the cached tensor."""
        return self.tensor.nbytes

    @property
    def bytes_per_site(self):
        return self.nbytes / self.lattice.n_sites

    def _workers(self):
        return self.workers if self.workers is not None else threads()

    def _pair(self):
        """The planned FFT pair for the current thread count (re-planned when it changes)."""
        w = self._workers()
        if self._fft is None or self._fft.threads != w:
            g = self.grid
            self._fft = RealFFTPair((3, g.n_sub, g.fy, g.fx), _PRECISION[self.precision][0], w,
                                    backend=self.backend)
        return self._fft

    def planes_buffer(self, spins):
        """Dipolar field (T) in sublattice-planes layout (3, n_sub, my, L), L >= mx, as a view
        of an internal buffer that the next call overwrites (the LLG hot path).

        Component c of site (i, j) is ``[c, (i % p) q + j % q, i // p, j // q]`` with
        (p, q) = ``lattice.period``. With prism sites it lacks the term ``self_field_T * S_i``
        along each site's own moment (no torque; ``field`` adds it).
        """
        g = self.grid
        spins = np.asarray(spins)
        if spins.shape != (self.lattice.ny, self.lattice.nx, 3):
            raise ValueError(f"spins must have shape {(self.lattice.ny, self.lattice.nx, 3)}, "
                             f"got {spins.shape}")
        # only the (my, mx) corner is written; the rest stays zero (open-edge padding)
        gather_planes(spins, g.p, g.q, self.gather_buffer()[:, :, : g.my, : g.mx])
        return self.transform_gathered()

    def gather_buffer(self):
        """The planes array (3, n_sub, fy, fx) that :meth:`transform_gathered` transforms: spins
        written into its (my, mx) corner in planes layout; the rest must stay zero."""
        return self._pair().real_in

    def transform_gathered(self):
        """Dipolar field (T), planes layout (3, n_sub, my, L) as a view of an internal buffer,
        of the spins in :meth:`gather_buffer` (the LLG kernels write them there)."""
        fft = self._pair()
        x = fft.forward()
        apply_tensor(x, self.tensor, self.pair_index, self.pair_conj)
        return fft.backward()[:, :, : self.grid.my]

    def planes(self, spins):
        """Dipolar field (T) in sublattice-planes layout (3, n_sub, my, L), a new array."""
        return self.planes_buffer(spins).copy()

    def field(self, spins, out=None):
        """Dipolar field (T) at every site, shape (ny, nx, 3) float64 (into ``out`` if given).

        Prism sites: the field averaged over each prism, its own demagnetising field included.
        """
        y = self.planes_buffer(spins)
        if out is None:
            out = np.empty((self.lattice.ny, self.lattice.nx, 3))
        scatter_planes(y, self.grid.p, self.grid.q, 1.0, out)
        if self.self_field_T:
            out += self.self_field_T * np.asarray(spins)
        return out

    def energy(self, spins):
        """Dipolar energy (J): -(mu_s/2) sum_i S_i.B_i, each pair once (prism sites: plus each
        prism's own demagnetising energy)."""
        y = self.planes_buffer(spins)
        s = np.ascontiguousarray(spins, dtype=np.float64)
        e = dot_planes(s, y, self.grid.p, self.grid.q)
        if self.self_field_T:
            e += self.self_field_T * float(np.sum(s * s))
        return -0.5 * self.moment_J_per_T * e
