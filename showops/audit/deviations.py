"""Deviations found in the show log: pure rules over ``step_log`` rows.

Each rule is named, has a one-line title and names where it comes from. The scan
reads the rows once, in ``id`` order, keeping a little state per performance and
cue, so a season of 150,000 rows takes well under a second (bench/bench_audit.py).

A :class:`Deviation` points at the rows that show it (``row_ids``) and has a stable
``key`` (rule and first row), so promoting it to a near miss is done once: the store
refuses a second record for the same key.

Rows are mappings with the ``step_log`` columns of DEVELOPERS.md (``id``,
``at_utc``, ``device_at``, ``event``, ``person_id``, ``person_name``, ``role``,
``performance_id``, ``cue_id``, ``step_key``, ``step_number``,
``procedure_version``, ``detail`` ...).
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from datetime import datetime, timezone
from functools import cached_property
from typing import Any, Iterable, Mapping, Sequence

#: rule name -> (title, where the rule comes from)
RULES: dict[str, tuple[str, str]] = {
    "refused_attempt": ("Refused attempt",
                        "the live runner's enforcement (order, role, training, blocked cue); a refused "
                        "act is a nonconformity under ISO 45001:2018 §10.2"),
    "hold": ("HOLD called", "common practice, no source: a hold stops every cue and is reported"),
    "past_hold_time": ("Step confirmed past its hold time", "the procedure's own `hold` field (seconds a step may last)"),
    "self_check": ("Check confirmed by the person who acted",
                   "two-person rule: DGUV Information 215-320 (the person who secures a rider is not the one "
                   "who checks); FAA AC 120-71 crew monitoring"),
    "unconfirmed_at_completion": ("Cue finished with steps unconfirmed",
                                  "a checklist is complete only when every item is answered "
                                  "(Degani and Wiener, NASA CR-177549, 1990)"),
    "cue_left_open": ("Cue started and never finished", "common practice, no source"),
    "brake_off_too_long": ("Brake off longer than the procedure allows",
                           "the procedure's `hold` times for the steps run with the brake off"),
    "late_record": ("Confirmation recorded late",
                    "device and server times far apart; threshold is this project's choice, no source"),
    "signoff_missing": ("Sign-off missing at the end of the night",
                        "common practice, no source: the show report is signed; cf. the WHO Surgical "
                        "Safety Checklist's 'sign out'"),
}

#: The live runner's refusal codes (showops.live.runner) -> the class reported.
REFUSAL_CODES: dict[str, str] = {
    "blocked": "blocked_cue", "wrong_person": "wrong_role", "not_stage_manager": "wrong_role",
    "untrained": "untrained", "out_of_order": "out_of_order", "needs": "out_of_order",
    "no_standby": "out_of_order", "no_go": "out_of_order", "not_confirmed": "out_of_order",
    "not_started": "out_of_order", "finished": "out_of_order", "held": "out_of_order",
    "already_done": "out_of_order", "same_person": "same_person",
}

#: Refusal classes, read from a refused row's detail (``code`` if the runner gives one,
#: else words in its ``reason``).
REFUSAL_CLASSES: tuple[tuple[str, tuple[str, ...]], ...] = (
    ("blocked_cue", ("blocked",)),
    ("untrained", ("train", "rehears", "brief")),
    ("wrong_role", ("role", "not assigned", "assigned")),
    ("out_of_order", ("order", "before", "not yet", "needs", "standby", "waiting")),
    ("same_person", ("same person", "second person", "acted")),
)

#: The events the live runner writes while a cue runs (showops.live.runner.CUE_EVENTS).
CUE_EVENTS = frozenset(("cue_started", "standby", "go", "step_confirmed", "check_confirmed", "refused", "hold",
                        "resume", "cue_completed"))

#: Device and server times further apart than this mark a late record (this
#: project's choice: a phone that was offline for a minute; no published source).
LATE_AFTER_S = 60.0



@dataclass(frozen=True)
class StepFacts:
    """What the rules need to know about one step of a procedure."""

    key: str
    number: int
    title: str
    by: str | None = None
    check: str | None = None
    hold_s: float | None = None
    sets: tuple[str, ...] = ()


@dataclass(frozen=True)
class ProcedureFacts:
    """The steps of one procedure version, and the brake-off allowance derived from them."""

    version: str
    title: str
    steps: tuple[StepFacts, ...]

    @classmethod
    def from_procedure(cls, procedure) -> "ProcedureFacts":
        """Build from a :class:`showops.procedure.model.Procedure` (its main steps)."""
        steps = tuple(StepFacts(s.key, s.number, s.title, s.by, s.check, s.hold_s, tuple(s.sets))
                      for s in procedure.main_steps)
        return cls(procedure.version, procedure.title, steps)

    @cached_property
    def by_key(self) -> dict[str, StepFacts]:
        return {s.key: s for s in self.steps}

    def brake_off_allowance_s(self) -> float | None:
        """Seconds the brake may be off: the sum of the ``hold`` times of the steps from
        the one that sets ``brake off`` to the one that sets ``brake on`` (inclusive).

        Returns None when none of those steps has a ``hold`` (nothing to judge by).
        """
        total, inside, any_hold = 0.0, False, False
        for step in self.steps:
            if "brake off" in step.sets:
                inside = True
            if inside and step.hold_s is not None:
                total += step.hold_s
                any_hold = True
            if inside and "brake on" in step.sets:
                break
        return total if inside and any_hold else None


@dataclass(frozen=True)
class Deviation:
    """One finding of one rule, pointing at its rows."""

    rule: str
    performance_id: int
    cue_id: int | None
    step_key: str | None
    row_ids: tuple[int, ...]
    at_utc: str
    text: str
    detail: dict[str, Any] = field(default_factory=dict, compare=False, hash=False)

    @property
    def key(self) -> str:
        """Stable across scans: the rule and the rows (or the performance)."""
        if self.rule == "signoff_missing":
            return f"signoff_missing:p{self.performance_id}"
        return f"{self.rule}:{self.row_ids[0]}" if self.row_ids else f"{self.rule}:p{self.performance_id}"

    @property
    def title(self) -> str:
        return RULES[self.rule][0]

    def to_dict(self) -> dict[str, Any]:
        return {"key": self.key, "rule": self.rule, "title": self.title, "performance_id": self.performance_id,
                "cue_id": self.cue_id, "step_key": self.step_key, "row_ids": list(self.row_ids),
                "at_utc": self.at_utc, "text": self.text, "detail": self.detail}


_fromiso = datetime.fromisoformat


def parse_utc(text: str) -> datetime:
    """Read an ISO 8601 time from the log (UTC when it carries no offset; ``Z`` allowed)."""
    out = _fromiso(text)
    return out if out.tzinfo is not None else out.replace(tzinfo=timezone.utc)


def _detail(row: Mapping) -> dict:
    raw = row.get("detail")
    if not raw:
        return {}
    if isinstance(raw, dict):
        return raw
    try:
        value = json.loads(raw)
    except (TypeError, ValueError):
        return {"reason": str(raw)}
    return value if isinstance(value, dict) else {"reason": str(value)}


def refusal_class(detail: Mapping) -> str:
    """Classify a refusal by its detail: the runner's ``code`` when it names one of
    :data:`REFUSAL_CLASSES`, else words of its ``reason``; ``other`` when neither does."""
    code = str(detail.get("code") or detail.get("rule") or "").lower().replace("-", "_")
    if code in REFUSAL_CODES:
        return REFUSAL_CODES[code]
    if code in {name for name, _ in REFUSAL_CLASSES}:
        return code
    reason = " ".join(str(detail.get(k, "")) for k in ("code", "rule", "reason", "message")).lower()
    for name, words in REFUSAL_CLASSES:
        if any(w in reason for w in words):
            return name
    return "other"


class _CueRun:
    # ``due`` is the row at which the next step fell due (the cue's start, or the
    # previous step's completion); a step's hold counts from its go, else from then,
    # as the live runner counts it (showops.live.runner.StepState.started_at).
    __slots__ = ("started", "confirmed", "checked", "due", "go", "brake_off", "completed")

    def __init__(self, started):
        self.started = started
        self.confirmed: dict[str, Mapping] = {}
        self.checked: dict[str, Mapping] = {}
        self.due = started
        self.go: dict[str, Mapping] = {}
        self.brake_off = None
        self.completed = None


def scan(rows: Iterable[Mapping], procedures: Mapping[str, ProcedureFacts], *,
         late_after_s: float = LATE_AFTER_S, finished: Iterable[int] | None = None) -> list[Deviation]:
    """Run every rule over ``rows`` (in ``id`` order) and return the deviations found.

    :param procedures: procedure version -> its facts; cues whose version is unknown
        are still checked by the rules that need no procedure (refusals, holds, late
        records, self-checks, sign-off).
    :param finished: the performances whose night is over; only these are checked
        for cues left open and a missing sign-off. ``None`` checks every one.
    """
    finished_set = None if finished is None else set(finished)
    out: list[Deviation] = []
    runs: dict[tuple[int, int], _CueRun] = {}
    last_row: dict[int, Mapping] = {}       # performance -> last cue-related row
    signoff: dict[int, Mapping] = {}        # performance -> last signoff row
    add = out.append

    for row in rows:
        event = row["event"]
        pid = row.get("performance_id")
        if pid is None:
            continue
        cid = row.get("cue_id")
        rid = row["id"]
        at = row["at_utc"]
        device_at = row.get("device_at")
        if device_at and device_at != at:
            gap = (parse_utc(at) - parse_utc(device_at)).total_seconds()
            if abs(gap) > late_after_s:
                word = "after" if gap > 0 else "before"
                add(Deviation("late_record", pid, cid, row.get("step_key"), (rid,), at,
                              f"{event} by {row.get('person_name') or '?'} reached the server {abs(gap):.0f} s "
                              f"{word} the device's time (limit {late_after_s:.0f} s)",
                              {"gap_s": gap}))
        if event == "signoff":
            signoff[pid] = row
            continue
        if event == "refused":
            detail = _detail(row)
            cls = refusal_class(detail)
            reason = detail.get("reason") or detail.get("message") or cls.replace("_", " ")
            add(Deviation("refused_attempt", pid, cid, row.get("step_key"), (rid,), at,
                          f"{row.get('person_name') or '?'}" + (f" ({row['role']})" if row.get('role') else "") + f" refused: {reason}",
                          {"class": cls}))
            continue
        if event == "hold":
            detail = _detail(row)
            reason = detail.get("note") or detail.get("reason") or ""
            add(Deviation("hold", pid, cid, row.get("step_key"), (rid,), at,
                          f"HOLD by {row.get('person_name') or '?'}" + (f": {reason}" if reason else ""), {}))
        if cid is None or event not in CUE_EVENTS:
            continue   # care and audit events name a cue too; they are not part of running it
        last_row[pid] = row
        if event == "cue_started":
            runs[(pid, cid)] = _CueRun(row)
            continue
        run = runs.get((pid, cid))
        if run is None:
            run = runs[(pid, cid)] = _CueRun(row)
        facts = procedures.get(row.get("procedure_version") or "")
        key = row.get("step_key")
        if event == "go":
            run.go.setdefault(key, row)
        elif event == "step_confirmed":
            run.confirmed[key] = row
            step = facts.by_key.get(key) if facts else None
            if step is not None:
                if step.hold_s is not None:
                    begin = run.go.get(key) or run.due
                    elapsed = (parse_utc(at) - parse_utc(begin["at_utc"])).total_seconds()
                    if elapsed > step.hold_s:
                        add(Deviation("past_hold_time", pid, cid, key, (begin["id"], rid), at,
                                      f"step {step.number} '{step.title}' took {elapsed:.0f} s; its hold is "
                                      f"{step.hold_s:.0f} s", {"elapsed_s": elapsed, "hold_s": step.hold_s}))
                if "brake off" in step.sets:
                    run.brake_off = row
                elif "brake on" in step.sets and run.brake_off is not None:
                    _brake_interval(run, row, facts, add)
                if not step.check:
                    run.due = row
            elif not facts:
                run.due = row
        elif event == "check_confirmed":
            run.checked[key] = row
            run.due = row
            acted = run.confirmed.get(key)
            if acted is not None and acted.get("person_id") == row.get("person_id") \
                    and row.get("person_id") is not None:
                add(Deviation("self_check", pid, cid, key, (acted["id"], rid), at,
                              f"{row.get('person_name') or '?'} both acted on and checked step "
                              f"{row.get('step_number') or key}", {}))
        elif event == "cue_completed":
            run.completed = row
            unfinished = _detail(row).get("unfinished") if facts is None else None
            if unfinished:
                add(Deviation("unconfirmed_at_completion", pid, cid, None, (rid,), at,
                              f"cue ended with {len(unfinished)} step(s) unconfirmed", {"missing": unfinished}))
            if facts is not None:
                missing = [s for s in facts.steps if s.key not in run.confirmed
                           or (s.check and s.key not in run.checked)]
                if missing:
                    names = ", ".join(f"{s.number} {s.title}" + (" (check)" if s.key in run.confirmed else "")
                                      for s in missing)
                    add(Deviation("unconfirmed_at_completion", pid, cid, missing[0].key, (rid,), at,
                                  f"cue completed with {len(missing)} step(s) unconfirmed: {names}",
                                  {"missing": [s.key for s in missing]}))
            if run.brake_off is not None:
                _brake_interval(run, row, facts, add, closed=False)

    for (pid, cid), run in runs.items():
        if finished_set is not None and pid not in finished_set:
            continue
        if run.completed is None:
            add(Deviation("cue_left_open", pid, cid, None, (run.started["id"],), run.started["at_utc"],
                          "cue started and never marked complete", {}))
    for pid, row in last_row.items():
        if finished_set is not None and pid not in finished_set:
            continue
        sign = signoff.get(pid)
        if sign is None or sign["id"] < row["id"]:
            add(Deviation("signoff_missing", pid, None, None, (row["id"],), row["at_utc"],
                          "no sign-off after the night's last cue", {}))
    out.sort(key=lambda d: (d.row_ids[0] if d.row_ids else 0, d.rule))
    return out


def _brake_interval(run: _CueRun, row: Mapping, facts: ProcedureFacts | None, add, *, closed: bool = True) -> None:
    allowed = facts.brake_off_allowance_s() if facts else None
    off = run.brake_off
    run.brake_off = None
    elapsed = (parse_utc(row["at_utc"]) - parse_utc(off["at_utc"])).total_seconds()
    if not closed:
        add(Deviation("brake_off_too_long", off["performance_id"], off["cue_id"], off.get("step_key"),
                      (off["id"], row["id"]), row["at_utc"],
                      f"brake released and not put back on before the cue was completed ({elapsed:.0f} s)",
                      {"elapsed_s": elapsed, "allowed_s": allowed}))
    elif allowed is not None and elapsed > allowed:
        add(Deviation("brake_off_too_long", off["performance_id"], off["cue_id"], off.get("step_key"),
                      (off["id"], row["id"]), row["at_utc"],
                      f"brake off for {elapsed:.0f} s; the procedure allows {allowed:.0f} s",
                      {"elapsed_s": elapsed, "allowed_s": allowed}))


def counts_by_rule(deviations: Sequence[Deviation]) -> dict[str, int]:
    """Return rule -> number found, with every rule present (zeros included)."""
    counts = dict.fromkeys(RULES, 0)
    for d in deviations:
        counts[d.rule] += 1
    return counts
