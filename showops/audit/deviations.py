"""Deviations found in the show log: pure rules over ``step_log`` rows.

Each rule is named, has a one-line title and names where it comes from. The scan
reads the rows once, in ``id`` order, keeping a little state per performance and
cue. Every rule's state is per performance, so a performance's deviations depend on
its own rows only: the store keeps each performance's scan and rescans only the
performances whose rows have changed (``store.audit.find_deviations``).

A :class:`Deviation` points at the rows that show it (``row_ids``) and has a stable
``key`` (rule and first row), so promoting it to a near miss is done once: the store
refuses a second record for the same key.

Rows are tuples of :data:`COLUMNS` for :func:`scan_rows` (what the store reads, a
season of 190,000 rows in well under a second, bench/bench_audit.py), or mappings
with those keys for :func:`scan`. :data:`RULE_SET_VERSION` changes whenever this
module does, so a stored scan made by other rules is never reused.
"""

from __future__ import annotations

import hashlib
import inspect
import json
import sys
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

#: The ``step_log`` columns the rules read, in the order :func:`scan_rows` takes them.
COLUMNS: tuple[str, ...] = ("id", "at_utc", "device_at", "event", "person_id", "person_name", "role",
                            "performance_id", "cue_id", "step_key", "step_number", "procedure_version", "detail")

#: The only events whose ``detail`` the rules read (a refusal's reason, a HOLD's note,
#: an ended cue's unfinished steps): a reader may pass None as any other row's detail.
DETAIL_EVENTS = frozenset(("refused", "hold", "cue_completed"))


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
        return self._brake_off_allowance_s

    @cached_property
    def _brake_off_allowance_s(self) -> float | None:
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


def _detail(raw: Any) -> dict:
    """A row's ``detail`` (JSON text, or a dict) as a dict; text that is not a JSON object
    becomes ``{"reason": text}``."""
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
    # Rows are kept as the little they are needed for: (id, at_utc, its parsed time or
    # None when it was not needed yet), or (id, person_id) for a confirmation. ``due`` is
    # the row at which the next step fell due (the cue's start, or the previous step's
    # completion); a step's hold counts from its go, else from then, as the live runner
    # counts it (showops.live.runner.StepState.started_at).
    __slots__ = ("started", "confirmed", "checked", "due", "go", "brake_off", "completed")

    def __init__(self, started: tuple[int, str, datetime | None]):
        self.started = started
        self.confirmed: dict[str, tuple[int, Any]] = {}
        self.checked: set[str] = set()
        self.due = started
        self.go: dict[str, tuple[int, str, datetime | None]] = {}
        self.brake_off: tuple[int, str, str | None] | None = None
        self.completed: int | None = None


def deviation_order(d: Deviation) -> tuple[int, str]:
    """The order :func:`scan` returns deviations in: by first row, then rule. Results of
    separate performances merged and sorted by this are in the order of one scan of all."""
    return (d.row_ids[0] if d.row_ids else 0, d.rule)


def scan(rows: Iterable[Mapping], procedures: Mapping[str, ProcedureFacts], *,
         late_after_s: float = LATE_AFTER_S, finished: Iterable[int] | None = None) -> list[Deviation]:
    """Run every rule over ``rows`` (mappings with the :data:`COLUMNS` keys, in ``id``
    order) and return the deviations found. See :func:`scan_rows`."""
    return scan_rows((tuple(row.get(c) for c in COLUMNS) for row in rows), procedures,
                     late_after_s=late_after_s, finished=finished)


def scan_rows(rows: Iterable[Sequence], procedures: Mapping[str, ProcedureFacts], *,
              late_after_s: float = LATE_AFTER_S, finished: Iterable[int] | None = None) -> list[Deviation]:
    """Run every rule over ``rows``, tuples of the :data:`COLUMNS` in that order, and
    return the deviations found (sorted by :func:`deviation_order`).

    Rows must be in ``id`` order within each performance; every rule keeps its state
    per performance (and cue), so scanning performances apart and merging gives the
    same deviations as one scan of all. A row's ``detail`` is read only for
    :data:`DETAIL_EVENTS`.

    :param procedures: procedure version -> its facts; cues whose version is unknown
        are still checked by the rules that need no procedure (refusals, holds, late
        records, self-checks, sign-off).
    :param finished: the performances whose night is over; only these are checked
        for cues left open and a missing sign-off. ``None`` checks every one.
    :raises ValueError: when a row has not exactly the :data:`COLUMNS` (or a time
        cannot be read as ISO 8601).
    """
    finished_set = None if finished is None else set(finished)
    out: list[Deviation] = []
    runs: dict[tuple[int, int], _CueRun] = {}
    last_row: dict[int, tuple[int, str]] = {}   # performance -> (id, at_utc) of its last cue row
    signoff: dict[int, int] = {}                # performance -> id of its last signoff row
    add = out.append
    facts_of = procedures.get
    cue_events = CUE_EVENTS
    fromiso, utc = _fromiso, timezone.utc
    same_minute_is_on_time = late_after_s >= 60.0
    facts, last_version = None, object()
    run, run_pid, run_cid = None, None, None

    for rid, at, device_at, event, person_id, person_name, role, pid, cid, key, number, version, detail in rows:
        if pid is None:
            continue
        at_time = None
        # Same date, hour and minute at the same UTC offset: less than 60 s apart, so not
        # late under any threshold of 60 s or more; most confirmations end here unparsed.
        if device_at and device_at != at and not (
                same_minute_is_on_time and at[:16] == device_at[:16] and at[-6:] == device_at[-6:]
                and at[-6] in "+-" and at[-3] == ":"):
            at_time = fromiso(at)
            if at_time.tzinfo is None:
                at_time = at_time.replace(tzinfo=utc)
            gap = (at_time - parse_utc(device_at)).total_seconds()
            if abs(gap) > late_after_s:
                word = "after" if gap > 0 else "before"
                add(Deviation("late_record", pid, cid, key, (rid,), at,
                              f"{event} by {person_name or '?'} reached the server {abs(gap):.0f} s "
                              f"{word} the device's time (limit {late_after_s:.0f} s)",
                              {"gap_s": gap}))
        if event == "signoff":
            signoff[pid] = rid
            continue
        if event == "refused":
            info = _detail(detail)
            cls = refusal_class(info)
            reason = info.get("reason") or info.get("message") or cls.replace("_", " ")
            add(Deviation("refused_attempt", pid, cid, key, (rid,), at,
                          f"{person_name or '?'}" + (f" ({role})" if role else "") + f" refused: {reason}",
                          {"class": cls}))
            continue
        if event == "hold":
            info = _detail(detail)
            reason = info.get("note") or info.get("reason") or ""
            add(Deviation("hold", pid, cid, key, (rid,), at,
                          f"HOLD by {person_name or '?'}" + (f": {reason}" if reason else ""), {}))
        if cid is None or event not in cue_events:
            continue   # care and audit events name a cue too; they are not part of running it
        last_row[pid] = (rid, at)
        if event == "cue_started":
            run = runs[(pid, cid)] = _CueRun((rid, at, at_time))
            run_pid, run_cid = pid, cid
            continue
        if cid != run_cid or pid != run_pid:   # a cue's rows mostly come one after another
            run = runs.get((pid, cid))
            if run is None:
                run = runs[(pid, cid)] = _CueRun((rid, at, at_time))
            run_pid, run_cid = pid, cid
        if version != last_version:   # a night's rows name the same few versions over and over
            facts, last_version = facts_of(version or ""), version
        if event == "go":
            run.go.setdefault(key, (rid, at, at_time))
        elif event == "step_confirmed":
            run.confirmed[key] = (rid, person_id)
            step = facts.by_key.get(key) if facts else None
            if step is not None:
                if step.hold_s is not None:
                    begin = run.go.get(key) or run.due
                    if at_time is None:
                        at_time = fromiso(at)
                        if at_time.tzinfo is None:
                            at_time = at_time.replace(tzinfo=utc)
                    elapsed = (at_time - (begin[2] or parse_utc(begin[1]))).total_seconds()
                    if elapsed > step.hold_s:
                        add(Deviation("past_hold_time", pid, cid, key, (begin[0], rid), at,
                                      f"step {step.number} '{step.title}' took {elapsed:.0f} s; its hold is "
                                      f"{step.hold_s:.0f} s", {"elapsed_s": elapsed, "hold_s": step.hold_s}))
                if "brake off" in step.sets:
                    run.brake_off = (rid, at, key)
                elif "brake on" in step.sets and run.brake_off is not None:
                    _brake_interval(run, pid, cid, rid, at, facts, add)
                if not step.check:
                    run.due = (rid, at, at_time)
            elif not facts:
                run.due = (rid, at, at_time)
        elif event == "check_confirmed":
            run.checked.add(key)
            run.due = (rid, at, at_time)
            acted = run.confirmed.get(key)
            if acted is not None and acted[1] == person_id and person_id is not None:
                add(Deviation("self_check", pid, cid, key, (acted[0], rid), at,
                              f"{person_name or '?'} both acted on and checked step {number or key}", {}))
        elif event == "cue_completed":
            run.completed = rid
            unfinished = _detail(detail).get("unfinished") if facts is None else None
            if unfinished:
                add(Deviation("unconfirmed_at_completion", pid, cid, None, (rid,), at,
                              f"cue ended with {len(unfinished)} step(s) unconfirmed", {"missing": unfinished}))
            if facts is not None:
                confirmed, checked = run.confirmed, run.checked
                missing = [s for s in facts.steps if s.key not in confirmed or (s.check and s.key not in checked)]
                if missing:
                    names = ", ".join(f"{s.number} {s.title}" + (" (check)" if s.key in confirmed else "")
                                      for s in missing)
                    add(Deviation("unconfirmed_at_completion", pid, cid, missing[0].key, (rid,), at,
                                  f"cue completed with {len(missing)} step(s) unconfirmed: {names}",
                                  {"missing": [s.key for s in missing]}))
            if run.brake_off is not None:
                _brake_interval(run, pid, cid, rid, at, facts, add, closed=False)

    for (pid, cid), run in runs.items():
        if finished_set is not None and pid not in finished_set:
            continue
        if run.completed is None:
            add(Deviation("cue_left_open", pid, cid, None, (run.started[0],), run.started[1],
                          "cue started and never marked complete", {}))
    for pid, (last_id, last_at) in last_row.items():
        if finished_set is not None and pid not in finished_set:
            continue
        sign = signoff.get(pid)
        if sign is None or sign < last_id:
            add(Deviation("signoff_missing", pid, None, None, (last_id,), last_at,
                          "no sign-off after the night's last cue", {}))
    out.sort(key=deviation_order)
    return out


def _brake_interval(run: _CueRun, pid: int, cid: int, rid: int, at: str, facts: ProcedureFacts | None, add, *,
                    closed: bool = True) -> None:
    allowed = facts.brake_off_allowance_s() if facts else None
    off_id, off_at, off_key = run.brake_off
    run.brake_off = None
    elapsed = (parse_utc(at) - parse_utc(off_at)).total_seconds()
    if not closed:
        add(Deviation("brake_off_too_long", pid, cid, off_key, (off_id, rid), at,
                      f"brake released and not put back on before the cue was completed ({elapsed:.0f} s)",
                      {"elapsed_s": elapsed, "allowed_s": allowed}))
    elif allowed is not None and elapsed > allowed:
        add(Deviation("brake_off_too_long", pid, cid, off_key, (off_id, rid), at,
                      f"brake off for {elapsed:.0f} s; the procedure allows {allowed:.0f} s",
                      {"elapsed_s": elapsed, "allowed_s": allowed}))


def counts_by_rule(deviations: Sequence[Deviation]) -> dict[str, int]:
    """Return rule -> number found, with every rule present (zeros included)."""
    counts = dict.fromkeys(RULES, 0)
    for d in deviations:
        counts[d.rule] += 1
    return counts


def _rule_set_version() -> str:
    digest = hashlib.sha256()
    try:
        digest.update(inspect.getsource(sys.modules[__name__]).encode())
    except (OSError, TypeError):  # no source beside the code: hash what the rules are made of
        digest.update(repr((sorted(RULES.items()), sorted(REFUSAL_CODES.items()), REFUSAL_CLASSES,
                            sorted(CUE_EVENTS), LATE_AFTER_S, COLUMNS, sorted(DETAIL_EVENTS))).encode())
        for func in (scan_rows, _brake_interval, refusal_class, ProcedureFacts._brake_off_allowance_s.func):
            digest.update(func.__code__.co_code)
    return digest.hexdigest()[:12]


#: A short hash of this module's text: changes whenever a rule, a title, a threshold or
#: the scan changes, so a scan stored by other rules is never reused.
RULE_SET_VERSION: str = _rule_set_version()
