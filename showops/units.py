"""Quantities in, SI floats out.

A rig file may give any number as a plain number (already SI) or as a string with a
unit ("1100 mm", "4 ft 6 in", "250 lb", "55 lbf"). :func:`to_si` turns either into a
float in the SI unit of the expected dimension. pint is imported only when a string
actually needs parsing, so plain-number files never pay for it.
"""

from __future__ import annotations

import math
import re
from functools import lru_cache
from typing import Literal

from showops.errors import UnitError

Dimension = Literal["length", "mass", "force", "moment", "dimensionless", "time", "speed",
                    "pressure", "area", "second_moment", "linear_mass"]

#: Standard acceleration of gravity, m/s², as defined by the 3rd General Conference
#: on Weights and Measures (CGPM, 1901); also CODATA's exact value.
STANDARD_GRAVITY = 9.80665

_SI_UNIT = {
    "length": "meter",
    "mass": "kilogram",
    "force": "newton",
    "moment": "newton * meter",
    "dimensionless": "dimensionless",
    "time": "second",
    "speed": "meter / second",
    "pressure": "pascal",
    "area": "meter ** 2",
    "second_moment": "meter ** 4",
    "linear_mass": "kilogram / meter",
}

_IMPERIAL_UNIT = {
    "length": ("ft", 1 / 0.3048),
    "mass": ("lb", 1 / 0.45359237),
    "force": ("lbf", 1 / (0.45359237 * STANDARD_GRAVITY)),
    "moment": ("lbf·ft", 1 / (0.45359237 * STANDARD_GRAVITY * 0.3048)),
}
_SI_SYMBOL = {"length": "m", "mass": "kg", "force": "N", "moment": "N·m"}


@lru_cache(maxsize=1)
def _registry():
    import pint  # imported here: slow to load, and only needed for strings with units

    return pint.UnitRegistry()


# "4 ft 6 in" style compound lengths: pint reads "4 ft 6 in" as a product, so split.
#: Longer strings are refused before pint sees them.
MAX_QUANTITY_CHARS = 100

_COMPOUND = re.compile(r"^\s*(?:[-+]?\d[\d.]*(?:e[-+]?\d+)?\s*[a-zA-Z\"']+\s*){2,}$")
_TERM = re.compile(r"([-+]?\d[\d.]*(?:e[-+]?\d+)?)\s*([a-zA-Z\"']+)")


def to_si(value: object, dimension: Dimension, *, what: str = "value") -> float:
    """Return ``value`` as a float in the SI unit of ``dimension``.

    :param value: a number (taken as SI already) or a string with a unit.
    :param dimension: the dimension expected, e.g. ``"length"``.
    :param what: the name used in error messages (the field's key).
    :returns: the value in SI (m, kg, N, N·m, s, m/s).
    :raises UnitError: for booleans, non-numbers, unknown units, a wrong dimension,
        NaN or infinity.
    """
    if isinstance(value, bool):
        raise UnitError(f"{what}: expected a number or a {dimension} with a unit, got {value!r}")
    if isinstance(value, (int, float)):
        result = float(value)
    elif isinstance(value, str):
        result = _parse(value, dimension, what)
    else:
        raise UnitError(f"{what}: expected a number or a {dimension} with a unit, got {value!r}")
    if not math.isfinite(result):
        raise UnitError(f"{what}: expected a finite number, got {value!r}")
    return result


def _parse(text: str, dimension: Dimension, what: str, *, compound: bool = True) -> float:
    text = text.strip().replace("·", "*")
    if not text:
        raise UnitError(f"{what}: expected a {dimension} with a unit, got an empty string")
    if len(text) > MAX_QUANTITY_CHARS:
        # pint's parser recurses on nested brackets; a quantity is a few words at most.
        raise UnitError(f"{what}: {text[:20]!r}... is {len(text)} characters; give a number and a unit")
    terms = _TERM.findall(text) if compound and _COMPOUND.match(text) else []
    if len(terms) >= 2:  # "4 ft 6 in": each term on its own, never split again
        return sum(_parse(f"{n} {u}", dimension, what, compound=False) for n, u in terms)
    import pint

    ureg = _registry()
    try:
        quantity = ureg.Quantity(text)
    except Exception as exc:  # pint's parser raises many unrelated types on bad text
        raise UnitError(f"{what}: cannot read {text!r} as a {dimension} ({_short(exc)})") from None
    try:
        if not hasattr(quantity, "to"):
            # A bare number given as a string ("1.2"): take it as SI, like a TOML number.
            return float(quantity)
        if quantity.dimensionless and dimension != "dimensionless":
            return float(quantity.magnitude)
        return float(quantity.to(_SI_UNIT[dimension]).magnitude)
    except pint.errors.DimensionalityError:
        raise UnitError(
            f"{what}: {text!r} is not a {dimension} (give it in {_example(dimension)})"
        ) from None
    except Exception as exc:  # a complex or non-numeric magnitude, an overflow
        raise UnitError(f"{what}: cannot read {text!r} as a {dimension} ({_short(exc)})") from None


def _short(exc: Exception) -> str:
    return str(exc).splitlines()[0][:80] if str(exc) else type(exc).__name__


def _example(dimension: Dimension) -> str:
    return {
        "length": "m, mm, ft or in",
        "mass": "kg or lb",
        "force": "N, kN or lbf",
        "moment": "N*m or lbf*ft",
        "time": "s or min",
        "speed": "m/s",
        "dimensionless": "a plain number",
        "pressure": "Pa, MPa, GPa or psi (Young's modulus)",
        "area": "m^2, cm^2 or mm^2",
        "second_moment": "m^4, cm^4 or mm^4",
        "linear_mass": "kg/m or lb/ft",
    }[dimension]


def format_quantity(value_si: float, dimension: Dimension, *, imperial: bool = False,
                    digits: int = 1) -> str:
    """Format an SI value for people, optionally in imperial units.

    :returns: e.g. ``"784.5 N"`` or ``"176.4 lbf"``.
    """
    if imperial and dimension in _IMPERIAL_UNIT:
        symbol, factor = _IMPERIAL_UNIT[dimension]
        value_si *= factor
    else:
        symbol = _SI_SYMBOL.get(dimension, "")
    if round(value_si, digits) == 0:
        value_si = 0.0  # never print "-0.0"
    return f"{value_si:,.{digits}f} {symbol}".rstrip()
