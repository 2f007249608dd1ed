"""The night's show report, built from the performance's log rows (pure).

The running order with each rig cue's start and end, who confirmed what, the
deviations, the records (incidents, near misses, unsafe conditions), the stage
manager's notes and the sign-off: everything is read from ``step_log`` rows and
the audit records, never typed in. ``sheets/report.py`` renders it.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from typing import Any, Iterable, Mapping, Sequence

from showops.audit.deviations import Deviation
from showops.audit.season import CueRef, RecordRef


@dataclass(frozen=True)
class Confirmation:
    """One step as it was confirmed: who acted, who checked, when."""

    step_number: int | None
    step_key: str
    by: str | None
    by_role: str | None
    at_utc: str | None
    checked_by: str | None = None
    checked_at: str | None = None
    row_ids: tuple[int, ...] = ()


@dataclass(frozen=True)
class CueRun:
    """One cue of the running order as the log shows it."""

    cue: CueRef
    started_at: str | None
    completed_at: str | None
    confirmations: tuple[Confirmation, ...]
    holds: int = 0
    refusals: int = 0


@dataclass(frozen=True)
class Note:
    """A stage manager's note on the night."""

    written_at: str
    written_by: str
    text: str


@dataclass
class ShowReport:
    """Everything the night's show report shows."""

    performance_id: int
    production: str
    company: str
    venue: str
    starts_at: str
    stage_manager: str | None
    running_order: list[CueRun]
    deviations: list[Deviation]
    records: list[RecordRef]
    notes: list[Note]
    signoff_by: str | None
    signoff_at: str | None
    first_row: int | None = None
    last_row: int | None = None
    last_hash: str | None = None
    extra: dict[str, Any] = field(default_factory=dict)

    @property
    def confirmations(self) -> int:
        return sum(len(c.confirmations) for c in self.running_order)

    @property
    def checks(self) -> int:
        return sum(1 for c in self.running_order for s in c.confirmations if s.checked_by)


def running_order(cues: Sequence[CueRef], rows: Iterable[Mapping]) -> tuple[list[CueRun], dict]:
    """Fold the performance's rows (``id`` order) into the running order.

    :param cues: the production's cues in running order; cues with no row are listed
        as not run.
    :returns: the runs, and a dict with ``signoff`` (the last sign-off row),
        ``first_row``, ``last_row`` and ``last_hash``.
    """
    started: dict[int, str] = {}
    completed: dict[int, str] = {}
    steps: dict[int, dict[str, dict]] = {}
    holds: dict[int, int] = {}
    refusals: dict[int, int] = {}
    info: dict[str, Any] = {"signoff": None, "first_row": None, "last_row": None, "last_hash": None}
    for row in rows:
        if info["first_row"] is None:
            info["first_row"] = row["id"]
        info["last_row"], info["last_hash"] = row["id"], row.get("hash")
        event, cid = row["event"], row.get("cue_id")
        if event == "signoff":
            info["signoff"] = row
            continue
        if cid is None:
            continue
        if event == "cue_started":
            started.setdefault(cid, row["at_utc"])
        elif event == "cue_completed":
            completed[cid] = row["at_utc"]
        elif event == "hold":
            holds[cid] = holds.get(cid, 0) + 1
        elif event == "refused":
            refusals[cid] = refusals.get(cid, 0) + 1
        elif event in ("step_confirmed", "check_confirmed"):
            entry = steps.setdefault(cid, {}).setdefault(row.get("step_key") or "?", {"number": row.get("step_number")})
            if event == "step_confirmed":
                entry.update(by=row.get("person_name"), role=row.get("role"), at=row["at_utc"], act_id=row["id"])
            else:
                entry.update(checked_by=row.get("person_name"), checked_at=row["at_utc"], check_id=row["id"])
    runs = []
    for cue in cues:
        confs = tuple(
            Confirmation(e.get("number"), key, e.get("by"), e.get("role"), e.get("at"), e.get("checked_by"),
                         e.get("checked_at"), tuple(i for i in (e.get("act_id"), e.get("check_id")) if i))
            for key, e in sorted(steps.get(cue.id, {}).items(),
                                 key=lambda kv: (kv[1].get("number") is None, kv[1].get("number") or 0)))
        runs.append(CueRun(cue, started.get(cue.id), completed.get(cue.id), confs,
                           holds.get(cue.id, 0), refusals.get(cue.id, 0)))
    return runs, info


def signoff_name(row: Mapping | None) -> str | None:
    """The name on a sign-off row (its detail may carry a typed name)."""
    if not row:
        return None
    try:
        detail = json.loads(row.get("detail") or "{}")
    except (TypeError, ValueError):
        detail = {}
    return (detail.get("name") if isinstance(detail, dict) else None) or row.get("person_name")
