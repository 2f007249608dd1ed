"""A procedure as plain data: header, phases, steps (see docs/procedure-file.md).

This is the contract between the parser (``procedure.parse``), the checker
(``procedure.check``), the live runner (``live``) and the sheets: they read these
fields and nothing else.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field
from typing import Literal

#: The states a step may need or set. ``load ok`` is never set by a step: it holds
#: when the rig solver's verdict for tonight's riders is not ``blocked``.
STATE_VALUES: dict[str, tuple[str, ...]] = {
    "brake": ("on", "off"),
    "platform": ("down", "up"),
    "rider": ("aboard", "off"),
    "strap": ("fastened", "open"),
    "area": ("clear",),
    "load": ("ok",),
}

#: Where the simulation starts unless a ``Start:`` header says otherwise.
REST_STATE: dict[str, str] = {"brake": "on", "platform": "down", "rider": "off", "strap": "open"}

FieldName = Literal["by", "go", "check", "say", "reply", "needs", "sets", "hold", "why", "note", "caution"]
#: ``caution`` was added after the first contract: a warning read out *before* the
#: step's action (DOE-STD-1029 puts cautions before the step they govern).
STEP_FIELDS: tuple[str, ...] = ("by", "go", "check", "say", "reply", "needs", "sets", "hold", "why", "note",
                                "caution")

#: The header lines a procedure may start with (``Key: value``, before the first heading).
HEADER_FIELDS: tuple[str, ...] = ("title", "rig", "roles", "signal", "start", "author", "reviewed")


@dataclass(frozen=True)
class Problem:
    """Something the parser could not read as written (an unknown field, a field with
    no value, a step outside a phase ...). The checker reports each one (rule 1)."""

    line: int
    message: str
    found: str = ""
    step: str | None = None


@dataclass(frozen=True)
class Step:
    """One step: one action by one role.

    ``needs`` and ``sets`` hold state words as written (``"brake on"``); ``line`` is
    the 1-based line of the step's ``###`` heading in the file; ``number`` counts the
    steps of the main sequence from 1 (stop steps are numbered after them).
    """

    title: str
    line: int
    phase: str
    number: int
    by: str | None = None
    go: str | None = None
    check: str | None = None
    say: str | None = None
    reply: str | None = None
    needs: tuple[str, ...] = ()
    sets: tuple[str, ...] = ()
    hold_s: float | None = None
    why: str | None = None
    note: str | None = None
    caution: str | None = None
    #: field name -> line it was written on, for findings
    field_lines: dict[str, int] = field(default_factory=dict, compare=False, hash=False)

    @property
    def key(self) -> str:
        """A stable id for the step within its procedure (phase and title)."""
        return f"{self.phase}/{self.title}"


@dataclass(frozen=True)
class Phase:
    """A level-2 heading and its steps; ``stop`` marks the stop procedure."""

    title: str
    line: int
    stop: bool
    steps: tuple[Step, ...]


@dataclass(frozen=True)
class Procedure:
    """A parsed procedure file."""

    title: str
    rig: str                      # the rig's slug (file stem), e.g. "orchard-lift"
    roles: tuple[str, ...]
    signal: str | None            # the rider's agreed emergency signal
    start: dict[str, str]         # starting state (REST_STATE unless a Start: header)
    phases: tuple[Phase, ...]
    text: str                     # the file's text, as read
    source: str = "<procedure>"
    headers: dict[str, str] = field(default_factory=dict)
    #: header name (lower case) -> its line, for findings
    header_lines: dict[str, int] = field(default_factory=dict, compare=False, hash=False)
    #: what the parser could not read (reported by the checker's first rule)
    problems: tuple[Problem, ...] = field(default=(), compare=False, hash=False)

    @property
    def version(self) -> str:
        """The SHA-256 of the text: the procedure version every record names."""
        return hashlib.sha256(self.text.encode("utf-8")).hexdigest()

    @property
    def main_phases(self) -> tuple[Phase, ...]:
        return tuple(p for p in self.phases if not p.stop)

    @property
    def stop_phases(self) -> tuple[Phase, ...]:
        return tuple(p for p in self.phases if p.stop)

    @property
    def main_steps(self) -> tuple[Step, ...]:
        """The steps run in order on a normal cue."""
        return tuple(s for p in self.main_phases for s in p.steps)

    @property
    def stop_steps(self) -> tuple[Step, ...]:
        return tuple(s for p in self.stop_phases for s in p.steps)
