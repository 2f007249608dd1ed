"""The registry of rig kinds: how each is read from a rig file and solved.

A kind is registered once, in its own module, with :func:`register`. To add one, see
"How to add a rig kind" in DEVELOPERS.md.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Callable, Protocol, Sequence

from showops.rig.fields import TableReader
from showops.verdict import Reason, Verdict


class RigResult(Protocol):
    """What every kind's solve returns."""

    verdict: Verdict
    reasons: tuple[Reason, ...]
    operator_force_n: float
    operator_force_per_person_n: float
    empty_operator_force_n: float

    def to_dict(self) -> dict[str, Any]: ...


@dataclass(frozen=True)
class RigKind:
    """One kind of rig.

    :param name: the value of ``kind`` in the rig file.
    :param read: builds the rig model from the file's top-level table; must call
        ``finish()`` on every table it reads so unknown keys are rejected.
    :param solve: ``solve(rig, rider_masses_kg, g)`` returns a :class:`RigResult`.
    :param summary: one line for ``showops rig kinds`` and the docs.
    """

    name: str
    read: Callable[[TableReader, str], Any]
    solve: Callable[[Any, Sequence[float], float], RigResult]
    summary: str


KINDS: dict[str, RigKind] = {}


def register(kind: RigKind) -> RigKind:
    """Add ``kind`` to the registry and return it."""
    KINDS[kind.name] = kind
    return kind


def result_to_dict(result: Any) -> dict[str, Any]:
    """Return a solve result dataclass as a JSON-ready dict.

    Tuples become lists; items with their own ``to_dict`` (states, checks, reasons,
    supports, members) are converted with it. Every kind's ``to_dict`` uses this, so
    the ``rig solve --json`` shape is built one way.
    """
    out: dict[str, Any] = {}
    for name in result.__dataclass_fields__:
        value = getattr(result, name)
        if isinstance(value, tuple):
            value = [item.to_dict() if hasattr(item, "to_dict") else item for item in value]
        out[name] = value
    return out

