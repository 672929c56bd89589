"""Dipole-dipole interaction tensor of a planar lattice, in Fourier space on its sublattice grids.

The field at site i from unit moments S_j is B_i = c sum_j H(r_i - r_j) S_j with
c = mu0 mu_s / (4 pi) and H the Hessian of 1/|r| (3D) at in-plane r = (x, y, 0), r^-3 in nm^-3:

    H_xx = (3x^2 - r^2)/r^5,  H_yy = (3y^2 - r^2)/r^5,  H_xy = 3xy/r^5,  H_zz = -1/r^3,
    H_xz = H_yz = 0,  and H_zz = -(H_xx + H_yy) (trace free).

Sublattices: the (ny, nx) grid of a Lattice repeats with the rectangular cell (cx, cy) of
``Lattice.period`` = (p, q) rows x columns, so site (i, j) belongs to sublattice
s = (i % p) q + (j % q) at grid point (I, J) = (i // p, j // q), position d_s + (J cx, I cy).
Between two sublattices the interaction is a translation-invariant convolution on the
(My, Mx) = (ceil(ny/p), ceil(nx/q)) grid; its transform K_st(k) (3 tensor components) is built
here once. ``K_ts(k) = conj(K_st(k))`` because H is even, so only pairs s <= t are stored.

Open edges: free-space H on a zero-padded grid (Fy, Fx) >= (2 My - 1, 2 Mx - 1), exact.

Periodic edges: the lattice sum over all torus images, by an Ewald split of 1/r into
erfc(eta r)/r (real space, cut at eta r = 6) and erf(eta r)/r, whose in-plane 2D Fourier
transform is 2 pi erfc(k / 2 eta)/k. The long-range Hessian in k-space is
-2 pi k_a k_b erfc(k/2eta)/k (in plane) and 2 pi k erfc(k/2eta) - 4 sqrt(pi) eta exp(-k^2/4eta^2)
(zz), summed over the reciprocal vectors g of the cell (Poisson, cut at |k| = 12 eta), minus its
value at r = 0 (-4 eta^3/(3 sqrt pi) per diagonal component) for the excluded self term. In 2D
the dipolar sum converges absolutely, so there is no shape-dependent term. Both cut-offs leave
errors below 1e-13 relative to the nearest-neighbour term (checked against a direct image sum
in tests/test_dipolar.py).

Sites with a thickness (``thickness_nm``, square lattice only): each site is the uniformly
magnetised prism a x a x t and H is replaced by the prism-prism tensor P = -(4 pi / V) N
(Newell, Williams and Dunlop 1993; :mod:`thinfilm.model.prism_tensor`, which states how it is
evaluated and its accuracy). Open edges: P on the zero-padded grid. Periodic edges: the Ewald
sum of H above plus :func:`thinfilm.model.prism_periodic.periodic_correction`, the image sum of
P - H. P has the self term -(4 pi / V) N_self with trace -4 pi / V; the stored tensor keeps the
convolution trace free (zz = -(xx + yy), as the kernels assume) by leaving out its isotropic
part -(4 pi / 3V) I, a field along each site's own moment: no torque, a constant energy. The
engine adds it back in ``DipolarField.field`` and ``energy`` (see ``isotropic_self_term``).
Without a thickness the tensor is the point-dipole one above, unchanged bit for bit.
"""

import math

import numpy as np
from scipy import fft as sfft
from scipy import special

from thinfilm.model import prism_tensor as prism
from thinfilm.model.lattice import Lattice
from thinfilm.model.prism_periodic import periodic_correction

__all__ = ["SublatticeGrid", "sublattice_grid", "hessian", "tensor_spectrum", "EWALD_X",
           "isotropic_self_term", "check_prism_lattice"]

EWALD_X = 6.0  # eta r_cut in real space and k_cut / (2 eta) in k-space


class SublatticeGrid:
    """Sublattice decomposition of a Lattice (plain attributes, lengths in nm).

    p, q : rows, columns of the cell; n_sub = p q; my, mx : sublattice grid;
    fy, fx : transform grid (= my, mx when periodic, zero-padded when open);
    cell : (cx, cy); offsets : (n_sub, 2) positions d_s; area : cx cy per cell.
    """

    def __init__(self, lattice):
        self.p, self.q = lattice.period
        self.n_sub = self.p * self.q
        self.my = -(-lattice.ny // self.p)
        self.mx = -(-lattice.nx // self.q)
        self.periodic = lattice.periodic
        lx, ly = lattice.box_nm
        self.cell = (lx * self.q / lattice.nx, ly * self.p / lattice.ny)
        self.area = self.cell[0] * self.cell[1]
        unit = Lattice(lattice.shape, self.q, self.p, lattice.spacing_nm, False)
        self.offsets = unit.positions_nm.reshape(self.n_sub, 2).copy()
        if self.periodic:
            self.fy, self.fx = self.my, self.mx
        else:
            self.fy = sfft.next_fast_len(2 * self.my - 1)
            self.fx = sfft.next_fast_len(2 * self.mx - 1, real=True)

    @property
    def pairs(self):
        """Stored sublattice pairs (s, t), s <= t, in storage order."""
        return [(s, t) for s in range(self.n_sub) for t in range(s, self.n_sub)]

    def pair_index(self):
        """(n_sub, n_sub) int table into the stored pairs, and (n_sub, n_sub) conjugate flags."""
        idx = np.zeros((self.n_sub, self.n_sub), dtype=np.int64)
        conj = np.zeros((self.n_sub, self.n_sub), dtype=np.bool_)
        for k, (s, t) in enumerate(self.pairs):
            idx[s, t] = idx[t, s] = k
            conj[t, s] = s != t
        return idx, conj


def sublattice_grid(lattice):
    return SublatticeGrid(lattice)


def hessian(dx, dy):
    """(xx, yy, xy, zz) of the Hessian of 1/r at in-plane displacements (nm); 0 where r = 0."""
    r2 = dx * dx + dy * dy
    safe = np.where(r2 > 0, r2, 1.0)
    inv3 = np.where(r2 > 0, safe**-1.5, 0.0)
    inv5 = inv3 / safe
    return (3 * dx * dx - r2) * inv5, (3 * dy * dy - r2) * inv5, 3 * dx * dy * inv5, -inv3


def _short_hessian(dx, dy, eta):
    """(xx, yy, xy, zz) of the Hessian of erfc(eta r)/r at in-plane displacements; 0 at r = 0."""
    r2 = dx * dx + dy * dy
    ok = r2 > 0
    r = np.sqrt(np.where(ok, r2, 1.0))
    g = 2 * eta * r / math.sqrt(math.pi) * np.exp(-(eta * r) ** 2)
    ec = special.erfc(eta * r)
    b = np.where(ok, (ec + g) / r**3, 0.0)
    c = np.where(ok, (3 * ec + g * (3 + 2 * (eta * r) ** 2)) / r**5, 0.0)
    return dx * dx * c - b, dy * dy * c - b, dx * dy * c, -b


def _free_pair(grid, d):
    """Real-space free tensor (4, fy, fx) of one pair with sublattice offset d = d_s - d_t."""
    iy = np.arange(grid.fy)
    ix = np.arange(grid.fx)
    iy = np.where(iy < grid.my, iy, iy - grid.fy)
    ix = np.where(ix < grid.mx, ix, ix - grid.fx)
    keep = (np.abs(iy)[:, None] < grid.my) & (np.abs(ix)[None, :] < grid.mx)
    dx = ix[None, :] * grid.cell[0] + d[0]
    dy = iy[:, None] * grid.cell[1] + d[1]
    return np.stack([np.where(keep, h, 0.0) for h in hessian(dx, dy)])


def _free_prism(grid, t):
    """Real-space prism tensor (4, fy, fx) on the zero-padded grid (square lattice, one pair)."""
    a = grid.cell[0]
    quad = prism.prism_tensor_quadrant(grid.my, grid.mx, a, t)
    iy = np.arange(grid.fy)
    ix = np.arange(grid.fx)
    iy = np.where(iy < grid.my, iy, iy - grid.fy)
    ix = np.where(ix < grid.mx, ix, ix - grid.fx)
    keep = (np.abs(iy)[:, None] < grid.my) & (np.abs(ix)[None, :] < grid.mx)
    iy2, ix2 = np.broadcast_arrays(iy[:, None], ix[None, :])
    out = np.zeros((4, grid.fy, grid.fx))
    out[:, keep] = prism.unfold_quadrant(quad, iy2[keep], ix2[keep])
    return out


def isotropic_self_term(thickness_nm, lattice):
    """The part of the prism self term left out of the stored tensor: -(4 pi / 3V) (nm^-3) per
    diagonal component, V = a^2 t; 0 without a thickness (point dipoles)."""
    if thickness_nm is None:
        return 0.0
    return prism.self_trace(lattice.spacing_nm, thickness_nm) / 3.0


def check_prism_lattice(lattice, thickness_nm):
    """Raise ValueError unless prism sites of this thickness can be built on the lattice."""
    if lattice.shape != "square":
        raise ValueError(f"sites with a thickness (prisms) are implemented for the square "
                         f"lattice only, not {lattice.shape}: its cells are hexagons")
    prism.check_aspect(lattice.spacing_nm, thickness_nm)


def _ewald_pair(grid, d, eta):
    """Transformed periodic tensor (4, my, mx // 2 + 1) of one pair with offset d = d_s - d_t."""
    cx, cy = grid.cell
    my, mx = grid.my, grid.mx
    rc = EWALD_X / eta
    # real space: every cell translation T with |T + d| < rc, folded onto the torus
    nxm = int(math.ceil(rc / cx)) + 1
    nym = int(math.ceil(rc / cy)) + 1
    jj, ii = np.meshgrid(np.arange(-nxm, nxm + 1), np.arange(-nym, nym + 1))
    dx = jj * cx + d[0]
    dy = ii * cy + d[1]
    near = dx * dx + dy * dy < rc * rc
    real = np.zeros((4, my, mx))
    idx = (ii[near] % my, jj[near] % mx)
    for comp, h in enumerate(_short_hessian(dx[near], dy[near], eta)):
        np.add.at(real[comp], idx, h)
    spec = sfft.rfftn(real, axes=(1, 2))
    # k-space: torus wavevectors q plus reciprocal vectors g with |q + g| < kc
    kc = 2 * eta * EWALD_X
    qx = 2 * math.pi * np.arange(mx // 2 + 1) / (mx * cx)
    qy = 2 * math.pi * sfft.fftfreq(my) / cy
    gnx = int(math.ceil(kc * cx / (2 * math.pi) + 0.5))
    gny = int(math.ceil(kc * cy / (2 * math.pi) + 0.5))
    for n in range(-gnx, gnx + 1):
        kx = qx + 2 * math.pi * n / cx
        px = np.exp(1j * kx * d[0])
        for m in range(-gny, gny + 1):
            ky = qy + 2 * math.pi * m / cy
            k = np.hypot(kx[None, :], ky[:, None])
            if k.min() >= kc:
                continue
            phase = np.exp(1j * ky * d[1])[:, None] * px[None, :] / grid.area
            ksafe = np.where(k > 0, k, 1.0)
            ek = 2 * math.pi * special.erfc(k / (2 * eta)) / ksafe
            spec[0] -= kx[None, :] ** 2 * ek * phase
            spec[1] -= ky[:, None] ** 2 * ek * phase
            spec[2] -= (ky[:, None] * kx[None, :]) * ek * phase
            spec[3] += (k * k * ek - 4 * math.sqrt(math.pi) * eta
                        * np.exp(-(k / (2 * eta)) ** 2)) * phase
    if d[0] == 0 and d[1] == 0:
        self_term = 4 * eta**3 / (3 * math.sqrt(math.pi))
        for comp in (0, 1, 3):
            spec[comp] += self_term
    return spec


def tensor_spectrum(lattice, *, zz=False, eta=None, thickness_nm=None):
    """Transformed tensor of every stored pair (nm^-3), complex128 (n_pairs, 3 or 4, fy, fx//2+1).

    Components (xx, yy, xy), plus zz when ``zz`` is set (H_zz = -(H_xx + H_yy) otherwise).
    A convolution of the sublattice planes with it gives sum_j H(r_i - r_j) S_j.
    ``eta`` (1/nm) overrides the Ewald splitting parameter (periodic; the result must not
    depend on it). ``thickness_nm``: prism sites a x a x t (square lattice) instead of point
    dipoles, without the isotropic self part :func:`isotropic_self_term` (see the module
    docstring); None: point dipoles.
    """
    if thickness_nm is not None:
        return _prism_spectrum(lattice, float(thickness_nm), zz, eta)
    grid = SublatticeGrid(lattice)
    ncomp = 4 if zz else 3
    out = np.empty((len(grid.pairs), ncomp, grid.fy, grid.fx // 2 + 1), dtype=np.complex128)
    # Ewald splitting parameter: reciprocal sums need only |g| <= one cell around the zone
    if eta is None:
        eta = math.pi / (2 * EWALD_X * max(grid.cell))
    for k, (s, t) in enumerate(grid.pairs):
        d = grid.offsets[s] - grid.offsets[t]
        if grid.periodic:
            spec = _ewald_pair(grid, d, eta)
        else:
            spec = sfft.rfftn(_free_pair(grid, d), axes=(1, 2))
        out[k] = spec[:ncomp]
    return out


def _prism_spectrum(lattice, t, zz, eta):
    """tensor_spectrum for prism sites of thickness t (nm) on the square lattice."""
    check_prism_lattice(lattice, t)
    grid = SublatticeGrid(lattice)
    if grid.periodic:
        if eta is None:
            eta = math.pi / (2 * EWALD_X * max(grid.cell))
        spec = _ewald_pair(grid, np.zeros(2), eta) + periodic_correction(grid, t)
    else:
        spec = sfft.rfftn(_free_prism(grid, t), axes=(1, 2))
    iso = isotropic_self_term(t, lattice)
    for comp in (0, 1, 3):
        spec[comp] -= iso
    ncomp = 4 if zz else 3
    return np.ascontiguousarray(spec[None, :ncomp])
