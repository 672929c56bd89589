"""A labyrinth of up and down domains of a chosen width: a demagnetised multi-domain start.

The pattern is the sign of a random Gaussian field whose spectrum is a ring of radius
k0 = pi / width (Gaussian profile, relative width 1/4): the random-phase model of a labyrinth,
so its domains are about ``width`` wide (half the period 2 pi / k0) with walls in every
direction. The field is built on the true site positions of every lattice shape (each Bravais
sublattice of the rectangular cell by inverse FFT of the modes folded onto its grid, with
its origin's phase), and is periodic on
the box, so periodic edges see no seam.
"""

import numpy as np

__all__ = ["labyrinth_field", "labyrinth_spins", "ring_amplitudes"]

RING_WIDTH = 0.25  # Gaussian width of the ring, relative to its radius
WALL_SHARPNESS = 0.3  # walls are tanh(f / (0.3 std f)): a few sites wide, settled by the run


def _modes(lattice):
    """Integer mode indices m (nx,), n (ny,) in FFT order and kx, ky (ny, nx) in rad/nm."""
    lx, ly = lattice.box_nm
    m = np.rint(np.fft.fftfreq(lattice.nx, 1.0 / lattice.nx)).astype(int)
    n = np.rint(np.fft.fftfreq(lattice.ny, 1.0 / lattice.ny)).astype(int)
    kx, ky = np.meshgrid(2 * np.pi * m / lx, 2 * np.pi * n / ly)
    return m, n, kx, ky


def ring_amplitudes(lattice, width_nm, *, seed=0):
    """(kx, ky in rad/nm, complex amplitudes), each (ny, nx) in FFT order: the field's modes."""
    _, _, kx, ky = _modes(lattice)
    rng = np.random.default_rng(np.random.SeedSequence([int(seed), 0x1AB]))
    k0 = np.pi / float(width_nm)
    ring = np.exp(-0.5 * ((np.hypot(kx, ky) - k0) / (RING_WIDTH * k0)) ** 2)
    return kx, ky, (rng.normal(size=kx.shape) + 1j * rng.normal(size=kx.shape)) * ring


def labyrinth_field(lattice, width_nm, *, seed=0):
    """Random field (ny, nx) of unit standard deviation, band-limited to |k| ~ pi / width_nm.

    Modes are those of the box, k = 2 pi (m / Lx, n / Ly), with |m| <= nx / 2 and |n| <= ny / 2
    (the set of :func:`thinfilm.analysis.lattice_fourier.structure_factor`); ``seed`` fixes the
    amplitudes (the same seed gives the same field).
    """
    ny, nx = lattice.ny, lattice.nx
    pr, pc = lattice.period
    my, mx = ny // pr, nx // pc
    m, n, _, _ = _modes(lattice)
    kx, ky, amp = ring_amplitudes(lattice, width_nm, seed=seed)
    pos = lattice.positions_nm
    f = np.empty((ny, nx))
    for a in range(pr):
        for b in range(pc):
            # modes k = q + G fold onto the sublattice grid's q (G . R = 2 pi Z on it)
            folded = np.zeros((my, mx), dtype=np.complex128)
            x, y = pos[a, b]
            np.add.at(folded, (n[:, None] % my, m[None, :] % mx),
                      amp * np.exp(1j * (kx * x + ky * y)))
            f[a::pr, b::pc] = np.fft.ifft2(folded).real
    sd = f.std()
    return f / sd if sd > 0 else f


def labyrinth_spins(lattice, width_nm, *, seed=0, axis=(0.0, 0.0, 1.0)):
    """Unit spins (ny, nx, 3): domains along +axis and -axis about ``width_nm`` wide.

    Inside a domain the spin lies on the axis; across a wall it turns through one in-plane
    direction perpendicular to the axis.
    """
    n = np.asarray(axis, dtype=np.float64)
    n = n / np.linalg.norm(n)
    e = np.cross(n, [1.0, 0.0, 0.0] if abs(n[0]) < 0.9 else [0.0, 1.0, 0.0])
    e /= np.linalg.norm(e)
    c = np.tanh(labyrinth_field(lattice, width_nm, seed=seed) / WALL_SHARPNESS)[..., None]
    s = c * n + np.sqrt(np.clip(1.0 - c * c, 0.0, None)) * e
    return np.ascontiguousarray(s / np.linalg.norm(s, axis=-1, keepdims=True))
