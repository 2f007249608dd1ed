"""Rig care and readiness records as plain data (pure: no Flask, click or sqlite).

The store reads these from its tables and the rules in :mod:`showops.care.rules`
turn them into :class:`showops.verdict.Reason` lines. Dates are
:class:`datetime.date`, times :class:`datetime.datetime` in UTC. A person is named
by id where the people list knows them and always by name, so a record stays
readable after the people list changes.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date, datetime
from typing import Literal

#: The kinds of record a rule can ask for.
RuleKind = Literal["before_each_use", "interval", "after_event"]
RULE_KINDS: tuple[RuleKind, ...] = ("before_each_use", "interval", "after_event")

#: What can happen to a rig that calls for an extraordinary examination.
EventKind = Literal["incident", "overload", "modification"]
EVENT_KINDS: tuple[EventKind, ...] = ("incident", "overload", "modification")

#: The parts of a rig that wear or fail, as the register names them.
PartKind = Literal["brake", "strap", "axle-pin", "caster", "counterweight-plate",
                   "counterweight-fixing", "platform-fixing", "other"]
PART_KINDS: tuple[PartKind, ...] = ("brake", "strap", "axle-pin", "caster", "counterweight-plate",
                                    "counterweight-fixing", "platform-fixing", "other")

#: Outcome of one pre-show item: ``pass`` (as it should be) or ``fault`` (a defect found).
ItemResult = Literal["pass", "fault"]


@dataclass(frozen=True)
class Person:
    """Someone named in a record: ``person_id`` from the people list, ``name`` always."""

    name: str
    person_id: int | None = None

    def same_as(self, other: "Person") -> bool:
        """True when both name the same person (by id when both have one, else by name)."""
        if self.person_id is not None and other.person_id is not None:
            return self.person_id == other.person_id
        return self.name.strip().casefold() == other.name.strip().casefold()


@dataclass(frozen=True)
class Participant:
    """A person in a role on a cue tonight (riders have the role ``rider``)."""

    name: str
    role: str
    person_id: int | None = None

    @property
    def person(self) -> Person:
        return Person(self.name, self.person_id)


@dataclass(frozen=True)
class Rule:
    """One inspection rule of a rule set, with the regulation it comes from.

    ``interval`` rules give ``months``; ``after_event`` rules list the ``events`` that
    call for an extraordinary examination before the next use; the one
    ``before_each_use`` rule is met by the pre-show check.
    """

    key: str
    kind: RuleKind
    title: str
    source: str
    months: int | None = None
    events: tuple[str, ...] = ()
    examiner: str = "competent person"


@dataclass(frozen=True)
class RuleSet:
    """The inspection rules a venue applies to a rig."""

    name: str
    title: str
    rules: tuple[Rule, ...]
    note: str = ""

    def of_kind(self, kind: RuleKind) -> tuple[Rule, ...]:
        return tuple(r for r in self.rules if r.kind == kind)

    def rule(self, key: str) -> Rule | None:
        return next((r for r in self.rules if r.key == key), None)


@dataclass(frozen=True)
class Inspection:
    """One inspection record: what the examiner found and whether the rig may be used.

    ``objection_to_use`` true means the inspection failed: the rig is out of service
    until a later passing record. ``covers`` holds the keys of the rules it meets
    (empty: every ``interval`` rule of the rig's set). ``remedied_*`` is the
    acknowledgement that the follow-up was done.
    """

    id: int
    rig: str
    on: date
    scope: str
    examiner: Person
    findings: str
    objection_to_use: bool
    follow_up: str = ""
    covers: tuple[str, ...] = ()
    remedied_on: date | None = None
    remedied_by: Person | None = None
    remedy: str = ""

    @property
    def passed(self) -> bool:
        return not self.objection_to_use

    @property
    def follow_up_open(self) -> bool:
        return bool(self.follow_up.strip()) and self.remedied_on is None


@dataclass(frozen=True)
class RigEvent:
    """An incident, an overload or a modification of a rig (calls for an extraordinary examination)."""

    id: int
    rig: str
    kind: str
    on: date
    description: str
    reported_by: Person | None = None


@dataclass(frozen=True)
class ChecklistItem:
    """One item of a pre-show check (a step of the checklist file).

    ``load_trial`` marks a trial in motion with a test load: the step moves the
    platform (it ``sets platform up`` or ``platform down``).
    """

    key: str
    title: str
    role: str | None                 # who answers it (the step's ``by``)
    checker: str | None = None       # who checks the answer (the step's ``check``)
    expect: str | None = None        # what should be seen (the step's ``reply``)
    note: str | None = None          # how to look (the step's ``note``)
    load_trial: bool = False
    line: int = 0


@dataclass(frozen=True)
class PreshowAnswer:
    """What a named person observed for one item, at a recorded time."""

    id: int
    performance_id: int
    rig: str
    item_key: str
    observation: str
    result: str
    person: Person
    at: datetime


@dataclass(frozen=True)
class Briefing:
    """Tonight's briefing for one rig, given by one person; ``attendees`` confirmed on their own screens."""

    id: int
    performance_id: int
    rig: str
    given_by: Person
    at: datetime
    attendees: tuple[Person, ...] = ()


@dataclass(frozen=True)
class Rehearsal:
    """A rehearsal of a rig (or of one cue on it) with the team in their roles.

    ``configuration`` is the rig version (the hash of its file) rehearsed; empty when
    not recorded.
    """

    id: int
    rig: str
    on: date
    team: tuple[Participant, ...]
    cue_id: int | None = None
    configuration: str = ""
    note: str = ""


@dataclass(frozen=True)
class AreaRelease:
    """The supervising person releasing the stage for a performance."""

    id: int
    performance_id: int
    person: Person
    role: str
    at: datetime
    note: str = ""


@dataclass(frozen=True)
class Objection:
    """A safety objection against a rig or a cue; resolved only by ``responsible``."""

    id: int
    raised_by: Person
    role: str
    at: datetime
    reason: str
    responsible: Person
    rig: str | None = None
    cue_id: int | None = None
    performance_id: int | None = None
    resolved_by: Person | None = None
    resolved_at: datetime | None = None
    resolution: str = ""

    @property
    def open(self) -> bool:
        return self.resolved_at is None


@dataclass(frozen=True)
class Part:
    """A part in a rig's equipment register, with its rating where one applies.

    ``rating_n`` is the working load limit (or, for a brake, the rated holding force)
    the maker gives, at ``design_factor`` (minimum breaking force / working load
    limit). ``sees`` names the solver figure the part carries (see
    :data:`showops.care.parts.FIGURES`) and ``share`` the fraction of it on this one
    part (two straps side by side: 0.5 each).
    """

    id: int
    rig: str
    name: str
    kind: str
    carries_people: bool
    rating_n: float | None = None
    design_factor: float | None = None
    sees: str | None = None
    share: float = 1.0
    note: str = ""
    fitted_on: date | None = None
    retired_on: date | None = None


@dataclass(frozen=True)
class Due:
    """One line of the due-soon list."""

    rig: str
    rule: Rule
    due_on: date | None      # None: never examined
    last_on: date | None
    status: Literal["overdue", "due soon", "never examined", "extraordinary"]
    days: int | None = None  # days until due (negative: days overdue)
    reason: str = field(default="")
