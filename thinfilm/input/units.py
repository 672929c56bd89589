"""Physical constants and parsing of quantities with units (pint at the boundary only)."""

import math
import re

import pint

__all__ = [
    "KB_J_PER_K",
    "MU_B_J_PER_T",
    "GAMMA_E_RAD_PER_S_T",
    "MEV_J",
    "MU0",
    "parse_quantity",
    "ureg",
]

# CODATA 2018 exact / recommended values.
KB_J_PER_K = 1.380649e-23  # Boltzmann constant, exact (SI 2019)
MU_B_J_PER_T = 9.2740100783e-24  # Bohr magneton (CODATA 2018)
GAMMA_E_RAD_PER_S_T = 1.76085963023e11  # electron gyromagnetic ratio |gamma_e| (CODATA 2018)
MEV_J = 1.602176634e-22  # 1 meV in J (exact elementary charge)
MU0 = 1.25663706212e-6  # vacuum permeability, N/A^2 (CODATA 2018)

ureg = pint.UnitRegistry()
ureg.define("muB = bohr_magneton")
ureg.define("mu_B = bohr_magneton")
# the Bohr magneton exactly as the unit parser converts it, so "3 muB" reads back as 3
MU_B_J_PER_T = float(ureg.Quantity(1, "bohr_magneton").to("J/T").magnitude)

# pint dimensionality strings of the quantities a scenario may hold.
DIMENSIONS = {
    "energy": "[mass] * [length] ** 2 / [time] ** 2",
    "length": "[length]",
    "time": "[time]",
    "temperature": "[temperature]",
    "field": "[mass] / [current] / [time] ** 2",
    "moment": "[current] * [length] ** 2",
    "stiffness": "[mass] * [length] / [time] ** 2",
    "energy_density": "[mass] / [length] / [time] ** 2",
    "magnetisation": "[current] / [length]",
}
SI_UNIT = {
    "energy": "J",
    "length": "m",
    "time": "s",
    "temperature": "K",
    "field": "T",
    "moment": "J/T",
    "stiffness": "J/m",
    "energy_density": "J/m^3",
    "magnetisation": "A/m",
}
EXAMPLE = {
    "energy": '"1.5 meV"',
    "length": '"0.4 nm"',
    "time": '"2 fs"',
    "temperature": '"45 K"',
    "field": '"0.05 T"',
    "moment": '"3 muB"',
    "stiffness": '"15 pJ/m"',
    "energy_density": '"0.5 MJ/m^3"',
    "magnetisation": '"1.1 MA/m"',
}


_NUMBER = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")
# an exponent written straight after a unit name: "m3", "m-3", "s^-1" is pint's already
_EXPONENT = re.compile(r"(?<=[A-Za-z\u00b5\u03bc])(-?\d+)(?![\d.])")


def _quantity(text):
    """pint Quantity of "value unit" text. The value is split off first, so offset units
    ("27 degC", "80 degF") are read as a temperature on that scale, and the common exponent
    spellings "m3" and "m-3" mean m^3 and m^-3 (pint itself reads "m^3", "m**3", "m³")."""
    m = _NUMBER.match(text)
    if m is None or not m.group(2):
        return ureg.Quantity(text.strip())
    unit = _EXPONENT.sub(r"**\1", m.group(2))
    return ureg.Quantity(float(m.group(1)), unit)


def parse_quantity(text, kind):
    """Parse ``"1.5 meV"``-like text into a float in SI units of ``kind``.

    Parameters
    ----------
    text : str or number
        Value and unit. Plain numbers are refused: every quantity carries its unit. Any unit
        pint knows for the dimension of ``kind`` is accepted ("0.8 MJ/m^3", "0.8 MJ/m3",
        "27 degC", "2 um", "5 G", "10 Oe" as mu0 H), with exponents as ^n, **n, superscripts
        or digits after the unit name.
    kind : str
        One of the keys of ``DIMENSIONS`` (``"energy"``, ``"length"``, ...).

    Returns
    -------
    float
        The value in the SI unit given by ``SI_UNIT[kind]`` (K for temperature).

    Raises
    ------
    ValueError
        With a message naming the problem and an example of allowed input.
    """
    example = EXAMPLE[kind]
    if isinstance(text, bool) or not isinstance(text, str):
        raise ValueError(
            f"must be a quantity with a unit written as a string, such as {example}; got {text!r}"
        )
    try:
        q = _quantity(text)
    except Exception as exc:  # pint raises several unrelated exception types
        raise ValueError(f"cannot read {text!r} as a quantity (example: {example})") from exc
    if kind == "field" and q.check("[mass] ** 0.5 / [length] ** 0.5 / [time]"):
        # Gaussian units (G, Oe): pint keeps them apart from the tesla; 1 G = 1e-4 T, and an
        # applied H in Oe is taken as the vacuum flux density mu0 H (1 Oe -> 1e-4 T)
        return float(q.to("gauss").magnitude) * 1e-4
    if kind == "field" and q.check("[current] / [length]"):
        raise ValueError(f"{text!r} is a magnetic field strength H ({q.units:~}); give the "
                         f"flux density mu0 H in tesla (1 Oe is 0.1 mT in vacuum), for example "
                         f"{example}")
    if isinstance(q, (int, float)) or q.dimensionless:
        raise ValueError(f"{text!r} has no unit; write it like {example}")
    if not q.check(DIMENSIONS[kind]):
        raise ValueError(
            f"{text!r} has the wrong kind of unit ({q.units:~}); {kind} is needed, "
            f"for example {example}"
        )
    if kind == "temperature":
        value = q.to("K").magnitude
    else:
        value = q.to(SI_UNIT[kind]).magnitude
    value = float(value)
    if not math.isfinite(value):
        raise ValueError(f"{text!r} is not a finite number")
    return value
