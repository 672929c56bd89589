"""The instrument of a heating plan: command-line values over the scenario's (named) instruments."""

from thinfilm.input.errors import InputError, option
from thinfilm.input.units import parse_quantity

__all__ = ["instrument_values"]


def _quantity(keyword, text, kind, example):
    """``text`` as a positive quantity of dimension ``kind`` (SI); errors name the option as
    the caller spells it (``--field-of-view`` on the command line, ``field_of_view`` in Python)."""
    name = option(keyword, None)
    eg = f'{name} "{example}"' if name.startswith("-") else f'{keyword}="{example}"'
    try:
        v = parse_quantity(text, kind)
    except ValueError as exc:
        raise InputError(f"{name} {text!r}: {exc}. Give the value with a {kind} unit, for "
                         f"example {eg}.") from None
    if not v > 0:
        raise InputError(f"{name} {text!r}: must be positive; give a {kind} greater than zero, "
                         f"for example {eg}.")
    return v


def instrument_values(scenario, resolution=None, exposure=None, field_of_view=None, name=None):
    """Instrument of the plan: command-line values override the scenario's ``instrument``.

    ``name`` picks one of the scenario's named instruments (default: the first).

    Returns
    -------
    dict
        resolution_nm, exposure_s, field_of_view_nm (None when neither gives it), and
        ``source`` {name: "command line" | "scenario"}.

    Raises
    ------
    InputError
        Missing unit, non-positive value, missing resolution or exposure, or a resolution
        not smaller than the field of view.
    """
    ins = dict(getattr(scenario, "instrument", {}) or {})
    if name is not None:
        named = {i.get("name"): i for i in getattr(scenario, "instruments", ())}
        if name not in named:
            flag = option("instrument", None)
            raise InputError(f"{flag} {name!r}: the scenario names "
                             f"{', '.join(repr(n) for n in named if n) or 'no instruments'}; "
                             f"give one of those names, or leave {flag} out")
        ins = dict(named[name])
    out, src = {}, {}
    for key, opt, val, kind, ex, scale in (
            ("resolution_nm", "resolution", resolution, "length", "30 nm", 1e9),
            ("exposure_s", "exposure", exposure, "time", "10 ms", 1.0),
            ("field_of_view_nm", "field_of_view", field_of_view, "length", "5 um", 1e9)):
        if val is not None:
            out[key], src[key] = _quantity(opt, val, kind, ex) * scale, "command line"
        elif key in ins:
            out[key], src[key] = float(ins[key]), "scenario"
        elif key != "field_of_view_nm":
            what = "resolution" if key == "resolution_nm" else "exposure"
            flag = option(opt, None)
            eg = f'{flag} "{ex}"' if flag.startswith("-") else f'{opt}="{ex}"'
            raise InputError(f"no instrument {what}: give {flag} with a unit, e.g. {eg}, "
                             f"or set instrument.{what} in the scenario.")
        else:
            out[key] = None
    fov = out["field_of_view_nm"]
    if fov is not None and out["resolution_nm"] >= fov:
        raise InputError(f"{option('resolution', None)} ({out['resolution_nm']:g} nm) must be "
                         f"smaller than {option('field_of_view', None)} ({fov:g} nm): the "
                         f"instrument cannot resolve anything inside its own view. Check the "
                         f"units of both values.")
    out["source"] = src
    out["name"] = ins.get("name")
    return out
