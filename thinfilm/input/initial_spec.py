"""The ``initial: {labyrinth: <domain width>}`` key: a demagnetised start of up and down domains.

The width is a length (e.g. ``"12 nm"``): the width of one domain, half the period of the
pattern (:mod:`thinfilm.model.labyrinth`). It must be at least two lattice spacings (walls need
room on the lattice) and at most half the shorter side of the lattice (a period must fit; with
``sizes``, of the smallest L x L lattice).
"""

from thinfilm.input.spec import box_nm

__all__ = ["labyrinth_width_nm"]


def labyrinth_width_nm(r, lat):
    """Domain width in nm from the Reader ``r`` of the ``initial`` mapping, checked on ``lat``."""
    r.check_keys({"labyrinth"})
    if not r.has("labyrinth"):
        raise r.error('needs a domain width, e.g. {labyrinth: "12 nm"}', "labyrinth")
    width = round(r.quantity("labyrinth", "length", positive=True) * 1e9, 9)
    lo = 2 * lat.spacing_nm
    hi = 0.5 * min(box_nm(lat.shape, lat.nx, lat.ny, lat.spacing_nm))
    if not lo <= width <= hi:
        raise r.error(f"domain width {width:.4g} nm is outside {lo:.4g}-{hi:.4g} nm: at least two "
                      f"lattice spacings, at most half the shorter side of the (smallest) lattice",
                      "labyrinth")
    return width
