"""One disorder realisation: a Model + a DisorderSpec + a seed -> SiteParameters.

Every component draws from its own child of ``numpy.random.SeedSequence(seed)`` (vacancies,
K, J, moment, grains), so switching one component on or off leaves the others unchanged, and a
realisation is a pure function of (model, spec, seed).

Spreads: a parameter is multiplied by the factor f = 1 + s xi, s the relative spread and xi of
zero mean and unit variance: standard normal ("gaussian") or uniform on [-sqrt3, sqrt3]
("uniform"). Clipping to physical ranges: J and K factors at 0 (a ferromagnetic bond stays
ferromagnetic or vanishes, an easy axis stays an easy axis or vanishes; the sign of the
material value is never flipped), moment factors at MIN_MOMENT_FACTOR = 0.1 (a moment must be
positive, and the LLG step shrinks with the smallest moment). With s = 0 the factor is exactly
1.0, so the parameters equal the uniform model bit for bit.

Order of the factors: grain (K, axis, boundary J) x site spread x map; per-site axes
(``axis_cone_deg``) are drawn in a cone around the grain axis (or the material axis).
Exchange spreads and maps act per bond (map: the mean of the two end sites' factors).
Vacancies: each site is empty independently with the given probability (site dilution as in
site percolation), and a map with ``sets: vacancies`` empties the sites whose pixel value is
below the threshold.
"""

import numpy as np

from thinfilm.input.disorder_spec import DisorderSpec, read_map
from thinfilm.model.grains import boundary_bonds, cone_axes, voronoi_grains, wrapped_positions
from thinfilm.model.parameters import Model
from thinfilm.model.site_parameters import SiteParameters, bond_slots

__all__ = ["realise_disorder", "spread_factors", "sample_map", "MIN_MOMENT_FACTOR"]

MIN_MOMENT_FACTOR = 0.1
_STREAMS = ("vacancies", "anisotropy", "exchange", "moment", "grains", "axis")


def spread_factors(spec, n, rng, floor=0.0):
    """n factors 1 + s xi (see module doc), clipped below at floor; ones when spec is None."""
    if spec is None:
        return np.ones(n)
    if spec.distribution == "gaussian":
        xi = rng.standard_normal(n)
    else:
        xi = np.sqrt(3.0) * (2.0 * rng.random(n) - 1.0)
    return np.maximum(1.0 + spec.spread * xi, floor)


def sample_map(lattice, image, scale_nm):
    """Pixel value at every site (ny, nx): the pixel holding the site's position.

    Periodic films use positions wrapped into the box; pixel indices are clipped to the image
    (open honeycomb edges have sites slightly below y = 0).
    """
    pos = wrapped_positions(lattice)
    col = np.clip(np.floor(pos[:, 0] / scale_nm).astype(np.int64), 0, image.shape[1] - 1)
    row = np.clip(np.floor(pos[:, 1] / scale_nm).astype(np.int64), 0, image.shape[0] - 1)
    return np.asarray(image, dtype=np.float64)[row, col].reshape(lattice.ny, lattice.nx)


def realise_disorder(model, spec, seed):
    """SiteParameters of one realisation.

    Parameters
    ----------
    model : Model
        The material (mean values): J, K, axis, moment, field.
    spec : DisorderSpec
        From :func:`thinfilm.input.disorder_spec.parse_disorder`.
    seed : int
        Realisation seed (e.g. spec.seed + realisation index).
    """
    if not isinstance(model, Model):
        raise TypeError("realise_disorder needs a Model")
    if not isinstance(spec, DisorderSpec):
        raise TypeError("realise_disorder needs a DisorderSpec")
    lat = model.lattice
    ny, nx, z = lat.ny, lat.nx, lat.coordination
    n = ny * nx
    rngs = dict(zip(_STREAMS, (np.random.default_rng(c) for c in
                               np.random.SeedSequence(int(seed)).spawn(len(_STREAMS))),
                    strict=True))
    nbr, _, bond_id = bond_slots(lat)
    has = nbr >= 0
    n_bonds = int(bond_id.max()) + 1 if has.any() else 0
    occ = np.ones(n, dtype=bool)
    if spec.vacancies > 0:
        occ = rngs["vacancies"].random(n) >= spec.vacancies
    k_f = np.ones(n)
    j_f = np.ones(n_bonds)
    mu_f = np.ones(n)
    axes = np.broadcast_to(model.axis, (n, 3)).copy()
    grain_id = None
    if spec.grains is not None:
        g = spec.grains
        rg = rngs["grains"]
        grain_id, centres = voronoi_grains(lat, g.size_nm, rg)
        m = len(centres)
        axes = cone_axes(model.axis, np.deg2rad(g.axis_cone_deg), m, rg)[grain_id.ravel()]
        k_f = k_f * spread_factors(g.anisotropy, m, rg)[grain_id.ravel()]
        if g.boundary_exchange != 1.0:
            on_b = boundary_bonds(grain_id, nbr)
            weak = np.zeros(n_bonds, dtype=bool)
            weak[bond_id[on_b]] = True
            j_f = np.where(weak, j_f * g.boundary_exchange, j_f)
    if spec.axis_cone_deg > 0:  # per-site axes in a cone around the (grain) axis
        axes = cone_axes(axes, np.deg2rad(spec.axis_cone_deg), n, rngs["axis"])
    k_f = k_f * spread_factors(spec.anisotropy, n, rngs["anisotropy"])
    j_f = j_f * spread_factors(spec.exchange, n_bonds, rngs["exchange"])
    mu_f = mu_f * spread_factors(spec.moment, n, rngs["moment"], MIN_MOMENT_FACTOR)
    if spec.map is not None:
        mp = spec.map
        v = sample_map(lat, read_map(mp.file), mp.scale_nm).ravel()
        if mp.sets == "vacancies":
            occ &= ~(v < mp.threshold)
        else:
            lo, hi = mp.range
            f = lo + (hi - lo) * v
            if mp.sets == "anisotropy":
                k_f = k_f * f
            elif mp.sets == "moment":
                mu_f = mu_f * np.maximum(f, MIN_MOMENT_FACTOR)
            else:
                per_slot = np.where(has, 0.5 * (f[:, None] + f[np.where(has, nbr, 0)]), 0.0)
                fb = np.ones(n_bonds)
                fb[bond_id[has]] = per_slot[has]
                j_f = j_f * fb
    live = has & occ[:, None] & occ[np.where(has, nbr, 0)]
    exch = np.where(live, model.exchange_J * j_f[np.where(has, bond_id, 0)], 0.0)
    aniso = np.where(occ, model.anisotropy_J * k_f, 0.0)
    mom = np.where(occ, model.moment_J_per_T * mu_f, 0.0)
    return SiteParameters(lat, model.moment_J_per_T, exch.reshape(ny, nx, z),
                          aniso.reshape(ny, nx), axes.reshape(ny, nx, 3), mom.reshape(ny, nx),
                          occ.reshape(ny, nx), model.field_T, model.axis,
                          None if grain_id is None else grain_id)


def scenario_site_parameters(scenario, model):
    """SiteParameters of the scenario's disorder on ``model`` (None for a perfect film).

    Realisation k (``scenario.disorder_realisation``) uses the seed disorder.seed + k, or the
    scenario seed + k when the disorder section has no seed of its own.
    """
    spec = getattr(scenario, "disorder", None)
    if spec is None or not spec.is_disordered:
        return None
    base = spec.seed if spec.seed is not None else int(scenario.seed)
    return realise_disorder(model, spec, base + int(getattr(scenario, "disorder_realisation", 0)))
