"""One performance as the crew will run it: the pure data a crew sheet, the running
order and the live runner are built from.

``store`` builds a :class:`NightPlan` from the database; ``show.verdicts`` fills in
each cue's verdict; ``sheets`` renders it. No field here holds one person's mass:
riders' masses are used in the computation and never leave it (only the riders'
total against the limit is shown).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import datetime
from typing import Any

from showops.verdict import Reason, Verdict


@dataclass(frozen=True)
class Assignment:
    """A person in a role on one cue (``lifters`` may hold several people)."""

    role: str
    person_id: int
    name: str


@dataclass(frozen=True)
class CueNight:
    """One cue of one performance, with everything its page on the sheet shows.

    For a cue that uses no rig, ``rig`` and everything after ``name`` is empty and
    ``verdict`` is ``ok``.
    """

    cue_id: int
    number: str
    name: str
    rig: str | None = None                 # the rig's slug ("orchard-lift")
    rig_name: str | None = None            # its display name ("Orchard lift")
    rig_version: str | None = None         # sha256 of the rig file's text
    procedure_title: str | None = None
    procedure_version: str | None = None   # sha256 of the procedure's text
    riders: tuple[str, ...] = ()           # riders' names, never their masses
    rider_total_kg: float | None = None    # riders with allowance, against the rated payload
    crew: tuple[Assignment, ...] = ()
    load: dict[str, Any] | None = None     # the rig solver's to_dict() for tonight's riders
    verdict: Verdict = "ok"
    reasons: tuple[Reason, ...] = ()
    fixes: tuple[str, ...] = ()            # what would clear a blocked cue
    signal: str | None = None              # the rider's agreed emergency signal
    findings: tuple[str, ...] = ()         # procedure checker findings, one line each
    rule_set_version: str | None = None
    procedure: Any = None                  # the parsed showops.procedure.model.Procedure

    def people_in(self, role: str) -> tuple[Assignment, ...]:
        """Return the people assigned to ``role`` on this cue."""
        return tuple(a for a in self.crew if a.role == role)


@dataclass(frozen=True)
class NightPlan:
    """A performance, its running order and each cue's verdict."""

    performance_id: int
    production: str
    company: str
    venue: str
    starts_at: datetime
    stage_manager: str | None
    cues: tuple[CueNight, ...]
    readiness: tuple[Reason, ...] = ()      # rig readiness lines for the sheet's cover
    notes: tuple[str, ...] = field(default=())

    @property
    def rig_cues(self) -> tuple[CueNight, ...]:
        return tuple(c for c in self.cues if c.rig)
