"""The ``instrument`` key: one instrument (a mapping) or several (a list of named mappings).

Each instrument gives its resolution, pixel size, field of view (lengths), exposure (time)
and noise (fraction of full contrast); lengths are returned in nm, the exposure in s.
"""

from thinfilm.input.reader import Reader

__all__ = ["parse_instruments"]


def _one_instrument(ins, named):
    keys = {"resolution", "pixel", "noise", "exposure", "field_of_view"}
    ins.check_keys(keys | ({"name"} if named else set()))
    out = {}
    if named:
        name = ins.raw("name", required=True)
        if not isinstance(name, str) or not name.strip() or not name.replace("-", "").isalnum():
            raise ins.error(f"must be a short name of letters, digits and '-', got {name!r}",
                            "name")
        out["name"] = name
    for key, kind, name in (("resolution", "length", "resolution_nm"),
                            ("pixel", "length", "pixel_nm"),
                            ("field_of_view", "length", "field_of_view_nm")):
        v = ins.quantity(key, kind, positive=True)
        if v is not None:
            out[name] = v * 1e9
    exp = ins.quantity("exposure", "time", positive=True)
    if exp is not None:
        out["exposure_s"] = exp
    noise = ins.number("noise", lo=0.0)
    if noise is not None:
        out["noise"] = noise
    if ("resolution_nm" in out and "field_of_view_nm" in out
            and out["resolution_nm"] >= out["field_of_view_nm"]):
        raise ins.error(f"resolution ({out['resolution_nm']:g} nm) must be smaller than the "
                        f"field of view ({out['field_of_view_nm']:g} nm)", "resolution")
    return out


def parse_instruments(r):
    """The instrument (a mapping) or instruments (a list of mappings, each with a name).

    Returns (primary instrument dict, tuple of all instrument dicts); the first of a list is
    the primary one (the sweep's instrument-limited lengths and the movie use it).
    """
    val = r.raw("instrument")
    if not isinstance(val, list):
        one = _one_instrument(r.sub("instrument"), named=False)
        return one, ((one,) if one else ())
    if not val:
        raise r.error("an instrument list must not be empty", "instrument")
    out = []
    for k, item in enumerate(val):
        out.append(_one_instrument(Reader(item, r.path, f"instrument[{k}]"), named=True))
    names = [o["name"] for o in out]
    if len(set(names)) != len(names):
        raise r.error(f"instrument names must differ, got {names}", "instrument")
    return out[0], tuple(out)
