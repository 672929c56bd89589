"""Up/down domains: thresholding, connected-component labelling on grids or lattices, size
statistics."""

import numpy as np
from scipy import ndimage, sparse
from scipy.sparse import csgraph
from scipy.spatial import cKDTree

from thinfilm.input.errors import InputError

__all__ = ["label_domains", "domain_statistics"]


def _smooth_grid(f, valid, sigma_px, periodic):
    """Gaussian smoothing of a pixel grid, normalised by the smoothed validity (masked pixels)."""
    mode = "wrap" if periodic else "constant"
    num = ndimage.gaussian_filter(np.where(valid, f, 0.0), sigma_px, mode=mode)
    den = ndimage.gaussian_filter(valid.astype(float), sigma_px, mode=mode)
    return np.where(den > 1e-12, num / np.maximum(den, 1e-12), 0.0)


def _smooth_sites(f, valid, positions_nm, box_nm, sigma_nm, periodic):
    """Gaussian smoothing over site positions (weights exp(-d^2 / 2 sigma^2), cut at 4 sigma)."""
    xy = np.asarray(positions_nm, dtype=float).reshape(-1, 2)
    ok = valid.ravel()
    if periodic:
        box = np.asarray(box_nm, dtype=float)
        tree = cKDTree(np.mod(xy, box), boxsize=box)
    else:
        tree = cKDTree(xy)
    dm = tree.sparse_distance_matrix(tree, 4.0 * sigma_nm, output_type="coo_matrix")
    w = np.exp(-0.5 * (dm.data / sigma_nm) ** 2) * ok[dm.col]
    wmat = sparse.csr_matrix((w, (dm.row, dm.col)), shape=(xy.shape[0],) * 2)  # self pairs included
    vals = np.where(ok, f.ravel(), 0.0)
    den = wmat @ ok.astype(float)
    return np.where(den > 0, (wmat @ vals) / np.where(den > 0, den, 1.0), 0.0).reshape(f.shape)


def _first_appearance(comp, valid):
    """Relabel component ids to 1..n in raster order of first appearance; 0 on invalid sites."""
    out = np.zeros(comp.shape, dtype=np.int64)
    ids = comp[valid]
    uniq, first, inv = np.unique(ids, return_index=True, return_inverse=True)
    rank = np.empty(uniq.size, dtype=np.int64)
    rank[np.argsort(first)] = np.arange(1, uniq.size + 1)
    out[valid] = rank[inv.ravel()]
    return out


def label_domains(
    field,
    *,
    level=0.0,
    smoothing_nm=None,
    pixel_nm=None,
    positions_nm=None,
    box_nm=None,
    neighbours=None,
    periodic=False,
    valid=None,
):
    """Label connected up and down domains of a scalar field.

    A site is "up" when its (optionally smoothed) value is > ``level`` and "down" otherwise.
    Without ``neighbours`` the array is a square grid or image with 4-connectivity
    (``scipy.ndimage.label``); with ``periodic=True`` labels touching across the left/right and
    top/bottom edges are joined (connected components of the graph of edge pairs). With
    ``neighbours`` (a lattice neighbour table, -1 for no bond) components follow the lattice
    bonds joining like-sign sites (``scipy.sparse.csgraph.connected_components``), so periodic
    wrapping is whatever the table holds.

    Parameters
    ----------
    field : ndarray, shape (ny, nx)
        Scalar per site or pixel (e.g. m_z), dimensionless.
    level : float
        Threshold, in field units.
    smoothing_nm : float, optional
        Standard deviation of a Gaussian smoothing applied before thresholding, nm. Grids need
        ``pixel_nm``; lattices need ``positions_nm`` (and ``box_nm`` when periodic).
    pixel_nm : float, optional
        Pixel / grid spacing in nm (square grids).
    positions_nm : ndarray (ny, nx, 2), optional
        Site positions in nm (lattices, for smoothing).
    box_nm : (float, float), optional
        Torus periods in nm (periodic lattices, for smoothing).
    neighbours : ndarray (ny * nx, z), optional
        Flat neighbour table; selects lattice connectivity.
    periodic : bool
        Join domains across the grid edges (grids only).
    valid : ndarray of bool (ny, nx), optional
        False marks invalid pixels; they get label 0 and break connectivity.

    Returns
    -------
    labels : ndarray of int64, shape (ny, nx)
        1..n in raster order of first appearance; 0 on invalid sites.
    signs : ndarray of int8, shape (n + 1,)
        +1 for up domains, -1 for down domains; ``signs[0] = 0``.
    """
    f = np.asarray(field, dtype=np.float64)
    if f.ndim != 2 or min(f.shape) < 1:
        raise InputError(
            f"label_domains: the field must be a 2D array (ny, nx); got shape {f.shape}"
        )
    valid = np.ones(f.shape, bool) if valid is None else np.asarray(valid, dtype=bool)
    if valid.shape != f.shape:
        raise InputError(f"label_domains: valid has shape {valid.shape}, the field {f.shape}")
    if not np.all(np.isfinite(f[valid])):
        raise InputError("label_domains: the field holds NaN or infinite values at valid sites")
    if smoothing_nm is not None and smoothing_nm > 0:
        if neighbours is None:
            if pixel_nm is None or not pixel_nm > 0:
                raise InputError("label_domains: smoothing a grid needs a positive pixel_nm")
            f = _smooth_grid(f, valid, smoothing_nm / pixel_nm, periodic)
        else:
            if positions_nm is None or (periodic and box_nm is None):
                raise InputError(
                    "label_domains: smoothing on a lattice needs positions_nm "
                    "(and box_nm if periodic)"
                )
            f = _smooth_sites(f, valid, positions_nm, box_nm, float(smoothing_nm), periodic)
    up = (f > level) & valid
    down = (~up) & valid
    if neighbours is None:
        lab_up, n_up = ndimage.label(up)
        lab_dn, n_dn = ndimage.label(down)
        comp = np.where(up, lab_up, np.where(down, lab_dn + n_up, 0))
        n_nodes = n_up + n_dn + 1
        if periodic:
            pairs = [np.stack([comp[:, 0], comp[:, -1]], 1), np.stack([comp[0, :], comp[-1, :]], 1)]
            pairs = np.concatenate(pairs)
            pairs = pairs[(pairs[:, 0] > 0) & (pairs[:, 1] > 0)]
            # both ends are in the same phase exactly when their ids lie in the same range
            same = (pairs[:, 0] <= n_up) == (pairs[:, 1] <= n_up)
            pairs = pairs[same]
            graph = sparse.coo_matrix(
                (np.ones(len(pairs)), (pairs[:, 0], pairs[:, 1])), shape=(n_nodes,) * 2
            )
            _, root = csgraph.connected_components(graph, directed=False)
            comp = root[comp]
    else:
        nb = np.asarray(neighbours)
        if nb.ndim != 2 or nb.shape[0] != f.size:
            raise InputError(
                f"label_domains: neighbours must have shape ({f.size}, z) for a field of shape "
                f"{f.shape}; got {nb.shape}"
            )
        src = np.repeat(np.arange(f.size), nb.shape[1])
        dst = nb.ravel()
        flat_up, flat_ok = up.ravel(), valid.ravel()
        keep = dst >= 0
        src, dst = src[keep], dst[keep]
        keep = flat_ok[src] & flat_ok[dst] & (flat_up[src] == flat_up[dst])
        graph = sparse.coo_matrix(
            (np.ones(keep.sum()), (src[keep], dst[keep])), shape=(f.size,) * 2
        )
        _, comp = csgraph.connected_components(graph, directed=False)
        comp = comp.reshape(f.shape)
    labels = _first_appearance(comp, valid)
    signs = np.zeros(labels.max() + 1, dtype=np.int8)
    signs[labels[valid]] = np.where(up[valid], 1, -1)
    return labels, signs


def _summary(areas, total_area, n_bins):
    """Statistics of one set of domain areas (nm^2)."""
    areas = np.sort(np.asarray(areas, dtype=float))[::-1]
    out = {
        "count": int(areas.size),
        "areas_nm2": areas,
        "equivalent_diameters_nm": 2.0 * np.sqrt(areas / np.pi),
        "total_area_nm2": float(areas.sum()),
    }
    if areas.size == 0:
        nan = float("nan")
        out.update(
            mean_area_nm2=nan,
            median_area_nm2=nan,
            area_weighted_mean_area_nm2=nan,
            mean_equivalent_diameter_nm=nan,
            largest_area_nm2=nan,
            largest_fraction=nan,
            histogram={"edges_nm2": np.array([]), "counts": np.array([], dtype=int)},
        )
        return out
    lo, hi = areas.min(), areas.max()
    if hi <= lo * (1 + 1e-9):
        edges = np.array([lo / np.sqrt(2.0), lo * np.sqrt(2.0)])
    else:
        edges = np.geomspace(lo, hi, int(n_bins) + 1)
    counts, _ = np.histogram(areas, bins=edges)
    out.update(
        mean_area_nm2=float(areas.mean()),
        median_area_nm2=float(np.median(areas)),
        area_weighted_mean_area_nm2=float(np.sum(areas**2) / areas.sum()),
        mean_equivalent_diameter_nm=float(out["equivalent_diameters_nm"].mean()),
        largest_area_nm2=float(hi),
        largest_fraction=float(hi / total_area) if total_area > 0 else float("nan"),
        histogram={"edges_nm2": edges, "counts": counts},
    )
    return out


def domain_statistics(labels, site_area_nm2, *, signs=None, n_bins=20, **label_options):
    """Size statistics of up, down and all domains.

    Parameters
    ----------
    labels : ndarray, shape (ny, nx)
        Integer labels from :func:`label_domains` (then ``signs`` is required), or a float field,
        which is labelled here with ``label_options`` passed to :func:`label_domains`.
    site_area_nm2 : float or ndarray (ny, nx)
        Area of one site or pixel, nm^2.
    signs : ndarray of int8, optional
        Sign of each label (+1 up, -1 down), as returned by :func:`label_domains`.
    n_bins : int
        Logarithmic histogram bins between the smallest and largest area.

    Returns
    -------
    dict
        ``"up"``, ``"down"``, ``"all"``: each with ``count``, ``areas_nm2`` (descending),
        ``equivalent_diameters_nm`` (2 sqrt(A / pi)), ``mean_area_nm2``, ``median_area_nm2``,
        ``area_weighted_mean_area_nm2`` (sum A^2 / sum A), ``mean_equivalent_diameter_nm``,
        ``largest_area_nm2``, ``largest_fraction`` (largest domain / total area of that set),
        ``total_area_nm2`` and ``histogram`` (``edges_nm2``, ``counts``; one bin of width
        sqrt(2) either side when all areas are equal). Also ``labels``, ``signs``,
        ``area_by_label_nm2`` (index = label) and ``up_area_fraction``. Empty sets give count 0
        and nan statistics.
    """
    arr = np.asarray(labels)
    if np.issubdtype(arr.dtype, np.floating):
        arr, signs = label_domains(arr, **label_options)
    elif signs is None:
        raise InputError(
            "domain_statistics: integer labels need the signs array from label_domains"
        )
    if arr.ndim != 2:
        raise InputError(f"domain_statistics: labels must be a 2D array; got shape {arr.shape}")
    signs = np.asarray(signs)
    if arr.size and (arr.min() < 0 or arr.max() >= signs.size):
        raise InputError(
            "domain_statistics: labels and signs do not match (label outside the signs array)"
        )
    site_area = np.broadcast_to(np.asarray(site_area_nm2, dtype=float), arr.shape)
    if not np.all(site_area > 0):
        raise InputError(
            f"domain_statistics: site_area_nm2 must be positive; got {site_area_nm2!r}"
        )
    per_label = np.bincount(arr.ravel(), weights=site_area.ravel(), minlength=signs.size)
    per_label[0] = 0.0
    ids = np.arange(1, signs.size)
    up_ids, dn_ids = ids[signs[1:] > 0], ids[signs[1:] < 0]
    total_up, total_dn = per_label[up_ids].sum(), per_label[dn_ids].sum()
    total = total_up + total_dn
    return {
        "up": _summary(per_label[up_ids], total_up, n_bins),
        "down": _summary(per_label[dn_ids], total_dn, n_bins),
        "all": _summary(per_label[ids], total, n_bins),
        "labels": arr,
        "signs": signs,
        "area_by_label_nm2": per_label,
        "up_area_fraction": float(total_up / total) if total > 0 else float("nan"),
    }
