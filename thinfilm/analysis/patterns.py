"""Patterned perpendicular states: stripe period and orientation from S(k), bubble counts and sizes.

Geometry is passed as plain arrays: either ``spacing_nm`` for a square grid (pixels, or a square
lattice of that spacing) or a lattice's ``positions_nm`` (ny, nx, 2), ``box_nm`` and ``period``
(from :class:`thinfilm.lattice.Lattice`). The structure factor is
:func:`thinfilm.analysis.correlation.structure_factor`; domains are labelled by
:func:`thinfilm.analysis.domains.label_domains`.
"""

import math

import numpy as np

from thinfilm.analysis.domains import label_domains
from thinfilm.analysis.lattice_fourier import structure_factor
from thinfilm.input.errors import InputError

__all__ = ["stripe_period", "stripe_orientation", "bubble_statistics", "square_grid"]


def square_grid(ny, nx, spacing_nm):
    """(positions_nm (ny, nx, 2), box_nm) of a square grid of the given spacing (nm)."""
    if not spacing_nm > 0:
        raise InputError(f"patterns: spacing_nm must be positive; got {spacing_nm!r}")
    i, j = np.meshgrid(np.arange(ny), np.arange(nx), indexing="ij")
    pos = np.stack([j * spacing_nm, i * spacing_nm], axis=-1).astype(float)
    return pos, (nx * spacing_nm, ny * spacing_nm)


def _geometry(field, spacing_nm, positions_nm, box_nm):
    f = np.asarray(field, dtype=float)
    if f.ndim != 2:
        raise InputError(f"patterns: the field must be a 2D array (ny, nx); got shape {f.shape}")
    if positions_nm is None:
        if spacing_nm is None:
            raise InputError("patterns: give spacing_nm (square grid) or positions_nm and box_nm")
        positions_nm, box_nm = square_grid(*f.shape, spacing_nm)
    elif box_nm is None:
        raise InputError("patterns: positions_nm needs box_nm (the torus periods in nm)")
    return f, positions_nm, box_nm


def _spectrum(field, spacing_nm, positions_nm, box_nm, period, k_max):
    """|k| (rad/nm), angle of k and S(k) of the modes with 0 < |k| <= k_max; and dk."""
    f, pos, box = _geometry(field, spacing_nm, positions_nm, box_nm)
    kx, ky, s = structure_factor(f, pos, box, period, subtract_mean=True)
    k = np.hypot(kx, ky)
    if k_max is None:
        ny, nx = f.shape
        k_max = math.pi / min(box[0] / nx, box[1] / ny)  # pi / smallest grid step
    keep = (k > 0) & (k <= k_max * (1 + 1e-12))
    if not np.any(s[keep] > 0):
        raise InputError("patterns: the field is uniform (no weight at k != 0)")
    return k[keep], np.arctan2(ky[keep], kx[keep]), s[keep], 2 * math.pi / max(box)


def stripe_period(field, spacing_nm=None, *, positions_nm=None, box_nm=None, period=(1, 1),
                  k_max=None):
    """Stripe (or domain) period from the radial peak of the structure factor.

    S(k) of the mean-subtracted field is averaged in rings of width dk = 2 pi / max(Lx, Ly);
    the peak ring k* (k = 0 left out) and its two neighbours give the S-weighted mean
    wavenumber k_peak, and ``period_nm = 2 pi / k_peak``. For stripes of period lambda
    commensurate with the box the weight sits on |k| = 2 pi / lambda and the period is exact;
    otherwise it is resolved to about dk / k_peak relative. The peak ring moves in steps of dk
    and lags a ring that broadens towards larger k (a labyrinth narrowing by new fingers); the
    S-weighted mean wavenumber over 0 < |k| <= 2 k_peak (the ring without the harmonics and
    most of the thermal short-wavelength noise) follows it smoothly: ``mean_period_nm``.

    Parameters
    ----------
    field : ndarray (ny, nx)
        Scalar per site, e.g. m_z, dimensionless.
    spacing_nm : float, optional
        Square-grid spacing (nm) when no positions are given.
    positions_nm, box_nm, period : optional
        Lattice geometry (nm) as for :func:`~thinfilm.analysis.correlation.structure_factor`;
        periodic boundaries are assumed.
    k_max : float, optional
        Largest |k| used (rad/nm); default pi / (smallest grid step).

    Returns
    -------
    dict
        ``period_nm``, ``mean_period_nm`` (2 pi / ``k_centroid_per_nm``), ``k_peak_per_nm``,
        ``k_centroid_per_nm``, ``k_mean_per_nm`` (S-weighted mean |k| of all modes),
        ``k_bins_per_nm`` and ``s_radial`` (ring centres and ring-averaged S), ``dk_per_nm``.
    """
    k, _, s, dk = _spectrum(field, spacing_nm, positions_nm, box_nm, period, k_max)
    ring = np.rint(k / dk).astype(np.int64)
    total = np.bincount(ring, weights=s)
    count = np.bincount(ring)
    ok = count > 0
    radial = np.where(ok, total / np.maximum(count, 1), 0.0)
    radial[0] = 0.0
    peak = int(np.argmax(radial))
    near = np.abs(ring - peak) <= 1
    k_peak = float(np.sum(k[near] * s[near]) / np.sum(s[near]))
    band = k <= 2 * k_peak
    k_centroid = float(np.sum(k[band] * s[band]) / np.sum(s[band]))
    return {
        "period_nm": 2 * math.pi / k_peak,
        "mean_period_nm": 2 * math.pi / k_centroid,
        "k_peak_per_nm": k_peak,
        "k_centroid_per_nm": k_centroid,
        "k_mean_per_nm": float(np.sum(k * s) / np.sum(s)),
        "k_bins_per_nm": np.nonzero(ok)[0] * dk,
        "s_radial": radial[ok],
        "dk_per_nm": dk,
    }


def stripe_orientation(field, spacing_nm=None, *, positions_nm=None, box_nm=None, period=(1, 1),
                       k_max=None):
    """Nematic orientation order of stripes from the structure factor.

    Q = |sum_k S(k) exp(2 i theta_k)| / sum_k S(k) over 0 < |k| <= k_max, theta_k the angle of
    k: 1 for straight parallel stripes, near 0 for labyrinths or isotropic patterns (about
    1/sqrt(number of modes carrying the weight)). The stripes run at
    ``angle_rad = arg(...)/2 + pi/2`` from the x axis, in [0, pi).

    Arguments as :func:`stripe_period`. Returns dict ``order`` (Q, 0..1) and ``angle_rad``.
    """
    _, theta, s, _ = _spectrum(field, spacing_nm, positions_nm, box_nm, period, k_max)
    z = np.sum(s * np.exp(2j * theta)) / np.sum(s)
    return {"order": float(abs(z)), "angle_rad": float((np.angle(z) / 2 + math.pi / 2) % math.pi)}


def _shape_of(xy, box, periodic):
    """Centroid (2,), gyration eigenvalues (2,) (nm^2) and whether the unwrapping is unsafe."""
    d = xy - xy[0]
    unsafe = False
    if periodic:
        d = d - box * np.round(d / box)
        unsafe = bool(np.any(np.ptp(d, axis=0) > 0.5 * box - 1e-9))
    c = d.mean(axis=0)
    g = np.cov((d - c).T, bias=True) if len(d) > 1 else np.zeros((2, 2))
    cen = xy[0] + c
    if periodic:
        cen = np.mod(cen, box)
    return cen, np.sort(np.linalg.eigvalsh(np.atleast_2d(g)))[::-1], unsafe


def bubble_statistics(field, site_area_nm2, *, spacing_nm=None, positions_nm=None, box_nm=None,
                      neighbours=None, periodic=True, sign=None, level=0.0, max_aspect=2.0,
                      min_area_nm2=0.0):
    """Count and size the bubble domains of a perpendicular film.

    Domains are labelled with :func:`~thinfilm.analysis.domains.label_domains` (lattice bonds
    when ``neighbours`` is given, else 4-connected grid pixels). Bubbles are the domains of
    ``sign`` (default: the minority phase by area) that are compact: aspect ratio
    sqrt(l1/l2) of the gyration tensor <= ``max_aspect``, area >= ``min_area_nm2``, and not
    wrapping or spanning more than half the box. Other domains of that sign (stripes,
    wrapping or large ones) are counted under ``n_other``.

    Parameters
    ----------
    field : ndarray (ny, nx)
        m_z per site.
    site_area_nm2 : float
        Area per site or pixel (nm^2), e.g. ``Lattice.site_area_nm2``.
    spacing_nm : float, optional
        Square-grid spacing (nm) when no positions are given.
    positions_nm, box_nm : optional
        Site positions (ny, nx, 2) and torus periods (nm).
    neighbours : ndarray (ny * nx, z), optional
        ``Lattice.neighbours`` for lattice connectivity.
    periodic : bool
        Periodic edges (grids are joined across their edges; positions are minimum-imaged).

    Returns
    -------
    dict
        ``count``, ``sign``, ``areas_nm2``, ``equivalent_diameters_nm`` (2 sqrt(A / pi)),
        ``mean_diameter_nm``, ``centroids_nm`` (n, 2), ``gyration_radii_nm``
        (sqrt(l1 + l2); R/sqrt2 for a disk of radius R), ``aspect_ratios``, ``n_other``,
        ``labels`` and ``bubble_labels`` (label ids of the bubbles).
    """
    f, pos, box = _geometry(field, spacing_nm, positions_nm, box_nm)
    box = np.asarray(box, dtype=float)
    opts = dict(level=level, periodic=periodic)
    if neighbours is not None:
        opts["neighbours"] = neighbours
    labels, signs = label_domains(f, **opts)
    area = np.bincount(labels.ravel(), minlength=signs.size) * float(site_area_nm2)
    if sign is None:
        up = area[1:][signs[1:] > 0].sum()
        dn = area[1:][signs[1:] < 0].sum()
        sign = 1 if up <= dn else -1
    flat_pos = pos.reshape(-1, 2)
    order = np.argsort(labels.ravel(), kind="stable")
    starts = np.searchsorted(labels.ravel()[order], np.arange(signs.size + 1))
    rows = []
    n_other = 0
    for lab in range(1, signs.size):
        if signs[lab] != sign:
            continue
        xy = flat_pos[order[starts[lab]:starts[lab + 1]]]
        cen, lam, unsafe = _shape_of(xy, box, periodic)
        aspect = math.sqrt(lam[0] / lam[1]) if lam[1] > 0 else math.inf
        if len(xy) == 1:
            aspect = 1.0
        if unsafe or aspect > max_aspect or area[lab] < min_area_nm2:
            n_other += 1
            continue
        rows.append((lab, area[lab], cen, math.sqrt(lam.sum()), aspect))
    areas = np.array([r[1] for r in rows])
    diam = 2 * np.sqrt(areas / math.pi)
    return {
        "count": len(rows),
        "sign": int(sign),
        "areas_nm2": areas,
        "equivalent_diameters_nm": diam,
        "mean_diameter_nm": float(diam.mean()) if rows else math.nan,
        "centroids_nm": np.array([r[2] for r in rows]).reshape(-1, 2),
        "gyration_radii_nm": np.array([r[3] for r in rows]),
        "aspect_ratios": np.array([r[4] for r in rows]),
        "n_other": n_other,
        "labels": labels,
        "bubble_labels": np.array([r[0] for r in rows], dtype=np.int64),
    }
