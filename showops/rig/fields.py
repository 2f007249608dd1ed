"""Read one TOML table of a rig file, field by field, with errors that say what to fix.

Every kind of rig reads its tables through :class:`TableReader`, so every kind
reports a missing key, an unknown key, a bad unit or an out-of-range number the
same way: ``FILE: table.key: what was expected``.
"""

from __future__ import annotations

import math
from typing import Any, Sequence

from showops.errors import RigFileError, UnitError
from showops.units import Dimension, to_si


#: Magnitudes beyond any hand-worked stage machine, per dimension (SI): a value past
#: these is a typo or a wrong unit, and would only make nonsense (or overflow) later.
#: Chosen generously (common practice, no source).
PLAUSIBLE_MAX: dict[str, float] = {
    "length": 100.0, "mass": 100_000.0, "force": 1e7, "moment": 1e7, "pressure": 1e13,
    "area": 10.0, "second_moment": 1.0, "linear_mass": 10_000.0, "dimensionless": 1e6,
    "time": 1e7, "speed": 100.0,
}
#: The smallest sensible positive value of a section property: no structural material
#: is softer than 1 MPa, no member thinner than 0.01 mm² or stiffer-free than 1e-14 m⁴.
PLAUSIBLE_MIN: dict[str, float] = {"pressure": 1e6, "area": 1e-8, "second_moment": 1e-14}


class TableReader:
    """Take fields out of one table; :meth:`finish` rejects any key left unread.

    :param source: the file name used in messages.
    :param prefix: the table's dotted name (``"geometry"``, ``"load[2]"``), or ``""``.
    :param table: the parsed TOML table.
    """

    def __init__(self, source: str, prefix: str, table: Any):
        self.source = source
        self.prefix = prefix
        if not isinstance(table, dict):
            raise RigFileError(source, prefix or None, f"expected a table, got {_kind(table)}")
        self.table = table
        self.used: set[str] = set()

    def key(self, name: str) -> str:
        """Return the dotted key for messages."""
        return f"{self.prefix}.{name}" if self.prefix else name

    def error(self, name: str | None, message: str) -> RigFileError:
        """Return (not raise) an error about ``name`` in this table."""
        return RigFileError(self.source, self.key(name) if name else (self.prefix or None), message)

    def has(self, name: str) -> bool:
        """Return whether the table has ``name``."""
        return name in self.table

    def raw(self, name: str, default: Any = ...) -> Any:
        """Return the raw value; raise for a missing key when there is no default."""
        self.used.add(name)
        if name not in self.table:
            if default is ...:
                raise self.error(name, "missing (this field is required)")
            return default
        return self.table[name]

    def quantity(self, name: str, dimension: Dimension, default: Any = ..., *,
                 positive: bool = False, nonnegative: bool = False,
                 negative: bool = False) -> float:
        """Return a number or unit string as SI, checked for sign.

        :raises RigFileError: when missing (and no default), unreadable, of the wrong
            dimension, not finite, or of the wrong sign.
        """
        value = self.raw(name, default)
        if value is None:
            return None  # type: ignore[return-value]
        try:
            number = to_si(value, dimension, what=self.key(name))
        except UnitError as exc:
            raise RigFileError(self.source, None, str(exc)) from None
        if positive and not number > 0:
            raise self.error(name, f"must be greater than zero, got {value!r}")
        _plausible(self, name, value, number, dimension)
        if nonnegative and not number >= 0:
            raise self.error(name, f"must be zero or more, got {value!r}")
        if negative and not number < 0:
            raise self.error(name, f"must be negative (behind the pivot line), got {value!r}")
        return number

    def integer(self, name: str, default: Any = ..., *, minimum: int = 1) -> int:
        """Return a whole number of at least ``minimum``."""
        value = self.raw(name, default)
        if value is None:
            return None  # type: ignore[return-value]
        if isinstance(value, bool) or not isinstance(value, (int, float)) or (
                isinstance(value, float) and (not math.isfinite(value) or value != int(value))):
            raise self.error(name, f"expected a whole number, got {value!r}")
        if value < minimum:
            raise self.error(name, f"must be at least {minimum}, got {value!r}")
        return int(value)

    def text(self, name: str, default: Any = ...) -> str:
        """Return a non-empty string."""
        if name not in self.table and default is not ...:
            self.used.add(name)
            return default
        value = self.raw(name)
        if not isinstance(value, str) or not value.strip():
            raise self.error(name, f"expected a non-empty string, got {value!r}")
        return value.strip()

    def choice(self, name: str, allowed: Sequence[str], default: Any = ...) -> str:
        """Return one of ``allowed``."""
        value = self.raw(name, default)
        if value not in allowed:
            raise self.error(name, f"expected one of {', '.join(allowed)}; got {value!r}")
        return value

    def boolean(self, name: str, default: bool = False) -> bool:
        """Return a TOML boolean."""
        value = self.raw(name, default)
        if not isinstance(value, bool):
            raise self.error(name, f"expected true or false, got {value!r}")
        return value

    def list_of_quantities(self, name: str, dimension: Dimension, *, positive: bool = True) -> tuple[float, ...]:
        """Return a list of quantities (empty when missing)."""
        values = self.raw(name, [])
        if not isinstance(values, list):
            raise self.error(name, f"expected a list, got {_kind(values)}")
        out = []
        for i, value in enumerate(values):
            try:
                number = to_si(value, dimension, what=f"{self.key(name)}[{i + 1}]")
            except UnitError as exc:
                raise RigFileError(self.source, None, str(exc)) from None
            if positive and not number > 0:
                raise RigFileError(self.source, f"{self.key(name)}[{i + 1}]",
                                   f"must be greater than zero, got {value!r}")
            _plausible(self, f"{name}[{i + 1}]", value, number, dimension)
            out.append(number)
        return tuple(out)

    def sub(self, name: str, *, required: bool = True) -> "TableReader | None":
        """Return a reader for a sub-table (``None`` when optional and absent)."""
        if name not in self.table and not required:
            self.used.add(name)
            return None
        return TableReader(self.source, self.key(name), self.raw(name))

    def array(self, name: str, *, required: bool = True) -> list["TableReader"]:
        """Return readers for an array of tables (``[[name]]``)."""
        value = self.raw(name, ... if required else [])
        if not isinstance(value, list):
            raise self.error(name, f"expected [[{name}]] tables, got {_kind(value)}")
        return [TableReader(self.source, f"{self.key(name)}[{i + 1}]", item)
                for i, item in enumerate(value)]

    def finish(self) -> None:
        """Raise for the first key that no field read (a typo, or a key of another kind)."""
        for name in self.table:
            if name not in self.used:
                raise self.error(name, "unknown key (check the spelling against docs/rig-file.md)")


def _plausible(table: "TableReader", name: str, value: Any, number: float, dimension: str) -> None:
    """Raise for a magnitude no stage machine has (see :data:`PLAUSIBLE_MAX`)."""
    top = PLAUSIBLE_MAX.get(dimension)
    if top is not None and abs(number) > top:
        raise table.error(name, f"{value!r} is beyond any stage machine (at most {top:g} in SI units for a "
                                f"{dimension.replace('_', ' ')}); check the number and its unit")
    bottom = PLAUSIBLE_MIN.get(dimension)
    if bottom is not None and 0 < abs(number) < bottom:
        raise table.error(name, f"{value!r} is too small for a {dimension.replace('_', ' ')} "
                                f"(at least {bottom:g} in SI units); check the number and its unit")


def _kind(value: Any) -> str:
    return {dict: "a table", list: "a list", str: "a string", bool: "a boolean"}.get(
        type(value), type(value).__name__)
