"""Verdicts and their reasons, shared by every part that can stop a cue.

A verdict is ``ok``, ``caution`` or ``blocked``. Each :class:`Reason` says why in
words a crew understands and, for a computed limit, carries the figure, the limit
and the margin. The rig solver, the procedure checker, the night's casting rules
and the readiness records all speak this one vocabulary, so a crew sheet or a
running order can show any of them the same way.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass
from typing import Iterable, Literal

Verdict = Literal["ok", "caution", "blocked"]
Level = Literal["caution", "blocked"]

VERDICTS: tuple[Verdict, ...] = ("ok", "caution", "blocked")
_RANK = {v: i for i, v in enumerate(VERDICTS)}


@dataclass(frozen=True)
class Reason:
    """Why a verdict is not ``ok``.

    ``limit`` names the rule or limit ("operator_force_per_person", "training",
    "inspection" ...); ``value``/``allowed`` are set for computed limits; ``fix`` says
    what would clear it, where something can.
    """

    text: str
    level: Level = "blocked"
    limit: str = ""
    value: float | None = None
    allowed: float | None = None
    fix: str = ""

    def to_dict(self) -> dict:
        """Return a JSON-ready dict (keys ``text``, ``level``, ``limit``, ``value``, ``allowed``, ``fix``)."""
        return asdict(self)


def worst(verdicts: Iterable[Verdict]) -> Verdict:
    """Return the most severe of ``verdicts`` (``ok`` when there are none)."""
    return max(verdicts, key=_RANK.__getitem__, default="ok")


def verdict_of(reasons: Iterable[Reason]) -> Verdict:
    """Return the verdict that a list of reasons amounts to."""
    return worst(r.level for r in reasons)
