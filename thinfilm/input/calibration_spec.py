"""Scenario form ``material.curie_temperature``: the exchange (or stiffness) from a measured Tc.

    material:
      moment: 2.5 muB
      anisotropy: {constant: 0.05 meV}
      curie_temperature: {value: 290 K, error: 3 K}   # or just "290 K"

replaces ``exchange`` (lattice form) or ``stiffness`` (continuum form); see
:mod:`thinfilm.input.calibration`.
"""

from thinfilm.input.calibration import continuum_from_tc, exchange_from_tc
from thinfilm.input.errors import InputError

__all__ = ["KEY", "read_curie", "lattice_exchange", "continuum_stiffness"]

KEY = "curie_temperature"


def read_curie(m):
    """(Tc, Tc error) in K from the Reader ``m`` of the material section."""
    val = m.raw(KEY)
    if isinstance(val, dict):
        sub = m.sub(KEY)
        sub.check_keys({"value", "error"})
        tc = sub.quantity("value", "temperature", required=True, positive=True)
        err = sub.quantity("error", "temperature", default="0 K", nonneg=True)
        return tc, err
    return m.quantity(KEY, "temperature", required=True, positive=True), 0.0


def _exclusive(m, other):
    if m.has(KEY) and m.has(other):
        raise m.error(f"give either {other} or {KEY} (which sets it from a measured Tc), not "
                      "both", KEY)


def lattice_exchange(m, lat, anisotropy_J, dipolar):
    """J (J per bond) and the calibration record (None when ``exchange`` is given)."""
    _exclusive(m, "exchange")
    if not m.has(KEY):
        return m.quantity("exchange", "energy", required=True), None
    _refuse_dipolar(m, dipolar)
    tc, err = read_curie(m)
    try:
        res = exchange_from_tc(tc, lat.shape, anisotropy_J, tc_err_K=err)
    except InputError as exc:
        raise m.error(str(exc), KEY) from None
    return res["exchange_J"], res


def continuum_stiffness(m, lat, ku, ms, t, shape_aniso, dipolar):
    """A (J/m) and the calibration record (None when ``stiffness`` is given)."""
    _exclusive(m, "stiffness")
    if not m.has(KEY):
        return m.quantity("stiffness", "stiffness", required=True, nonneg=True), None
    _refuse_dipolar(m, dipolar)
    tc, err = read_curie(m)
    try:
        res = continuum_from_tc(tc, lat.shape, lat.spacing_nm * 1e-9, ku, ms, t, tc_err_K=err,
                                shape_anisotropy=shape_aniso)
    except InputError as exc:
        raise m.error(str(exc), KEY) from None
    return res["stiffness_J_per_m"], res


def _refuse_dipolar(m, dipolar):
    if dipolar:
        raise m.error("the calibration table holds Tc without the dipolar field; with "
                      "dipolar: true the same J gives another Tc, so give the exchange (or "
                      "stiffness) directly", KEY)
