"""Queries for rig care and readiness: record, read, and turn records into reasons.

Every record is validated here (a :class:`~showops.errors.ValidationError` names the
field), written to its append-only table (``store/schema_care.py``) and also written
as a row of the hash-chained show log through ``showops.store.log.append_events``,
so the audit sees it. The rules themselves are pure, in :mod:`showops.care.rules`.

People, performances, cues and rigs are the show tables' (``person``,
``performance``, ``cue``, ``rig``, ``training``, ``performer_rig``,
``performance_rider``, ``performance_crew``).
"""

from __future__ import annotations

import json
from dataclasses import replace
from datetime import date, datetime, timezone
from functools import lru_cache
from typing import Any, Callable, Iterable, Sequence

import sqlite_utils

from showops.care.model import (EVENT_KINDS, PART_KINDS, AreaRelease, Briefing, ChecklistItem, Due, Inspection,
                                Objection, Part, Participant, Person, PreshowAnswer, Rehearsal, RigEvent, Rule,
                                RuleSet)
from showops.care.parts import FIGURES, part_figures, people_factor_of
from showops.care.preshow import checklist_items, validate_observation
from showops.care.rules import CueReadiness, cue_readiness, due_list, participants_of, summary_line
from showops.care.schedules import DEFAULT_RULE_SET, DEFAULT_RULE_SETS, edited_rule, new_rule
from showops.errors import NotFound, PermissionDenied, ShowopsError, ValidationError
from showops.store.db import transaction
from showops.verdict import Reason

#: Roles that may release the stage for a performance (DGUV Vorschrift 17 §15: the
#: supervising person; the stage manager, or the venue's designated supervisor).
RELEASE_ROLES = ("stage manager", "supervisor")


# --------------------------------------------------------------------------- small helpers

def _now() -> datetime:
    return datetime.now(timezone.utc).replace(microsecond=0)


def _iso(moment: datetime) -> str:
    return moment.astimezone(timezone.utc).isoformat(timespec="seconds")


def _as_utc(value: str) -> datetime:
    moment = datetime.fromisoformat(value.replace("Z", "+00:00"))
    return moment if moment.tzinfo else moment.replace(tzinfo=timezone.utc)


def parse_day(value: Any, field: str) -> date:
    """Read a date (a :class:`date` or ``YYYY-MM-DD``).

    :raises ValidationError: naming ``field`` for anything else.
    """
    if isinstance(value, datetime):
        return value.date()
    if isinstance(value, date):
        return value
    try:
        return date.fromisoformat(str(value).strip())
    except ValueError:
        raise ValidationError(field, f"{value!r} is not a date (write YYYY-MM-DD, e.g. 2026-11-20)") from None


def _past_day(value: Any, field: str, today: date | None) -> date:
    day = parse_day(value, field)
    today = today or date.today()
    if day > today:
        raise ValidationError(field, f"{day.isoformat()} is in the future (today is {today.isoformat()}); "
                                     "record what has happened")
    return day


def _text(value: Any, field: str, what: str) -> str:
    text = " ".join(str(value or "").split())
    if not text:
        raise ValidationError(field, f"empty ({what})")
    return text


def _moment(value: Any, field: str) -> datetime:
    """A recorded time: now when None; never in the future (a minute's clock skew allowed)."""
    if value is None:
        return _now()
    moment = value if isinstance(value, datetime) else None
    if moment is None:
        try:
            moment = datetime.fromisoformat(str(value).strip().replace("Z", "+00:00"))
        except ValueError:
            raise ValidationError(field, f"{value!r} is not a time (ISO 8601, e.g. 2026-11-20T18:05Z)") from None
    if moment.tzinfo is None:
        moment = moment.replace(tzinfo=timezone.utc)
    if (moment - _now()).total_seconds() > 60:
        raise ValidationError(field, f"{_iso(moment)} is in the future")
    return moment


# --------------------------------------------------------------------------- the show tables

def find_person(db: sqlite_utils.Database, ref: Any, field: str) -> Person:
    """Return the person named by ``ref`` (their id, or their name) from the people list.

    :raises ValidationError: naming ``field`` when nobody on the people list matches.
    """
    text = " ".join(str(ref if ref is not None else "").split())
    if not text:
        raise ValidationError(field, "empty (name a person on the people list)")
    if isinstance(ref, int) or text.isdigit():
        row = db.execute("SELECT id, name FROM person WHERE id = ?", [int(text)]).fetchone()
    else:
        row = db.execute("SELECT id, name FROM person WHERE name = ? COLLATE NOCASE", [text]).fetchone()
    if row is None:
        raise ValidationError(field, f"{text!r} is not on the people list (add them first, or check the spelling)")
    return Person(row[1], row[0])


def require_rig(db: sqlite_utils.Database, rig: Any, field: str = "rig") -> str:
    """Return ``rig`` when it is a known rig slug.

    :raises ValidationError: naming ``field`` and the rigs there are.
    """
    slug = str(rig or "").strip()
    if not db.execute("SELECT 1 FROM rig WHERE slug = ?", [slug]).fetchone():
        known = [r[0] for r in db.execute("SELECT slug FROM rig ORDER BY slug")]
        raise ValidationError(field, f"{slug!r} is not a rig here (rigs: {', '.join(known) or 'none yet'})")
    return slug


def rig_slugs(db: sqlite_utils.Database) -> list[str]:
    return [r[0] for r in db.execute("SELECT slug FROM rig ORDER BY slug")]


def performance_day(db: sqlite_utils.Database, performance_id: Any, field: str = "performance") -> tuple[int, date]:
    """Return (id, day) of a performance.

    :raises NotFound: when it does not exist.
    """
    text = str(performance_id).strip()
    row = db.execute("SELECT id, starts_at FROM performance WHERE id = ?", [int(text)]).fetchone() \
        if text.isdigit() else None
    if row is None:
        raise NotFound(f"{field}: performance {text!r} does not exist")
    return row[0], datetime.fromisoformat(row[1]).date()


def rig_version(db: sqlite_utils.Database, rig: str) -> str | None:
    """Return the rig's current version (SHA-256 of its file), or None."""
    row = db.execute("SELECT sha256 FROM rig_version WHERE rig_slug = ? ORDER BY id DESC LIMIT 1", [rig]).fetchone()
    return row[0] if row else None


def cue_rig(db: sqlite_utils.Database, cue_id: int) -> str | None:
    row = db.execute("SELECT rig_slug FROM cue WHERE id = ?", [cue_id]).fetchone()
    if row is None:
        raise NotFound(f"cue: cue {cue_id} does not exist")
    return row[0]


def cue_team(db: sqlite_utils.Database, performance_id: int, cue_id: int) -> tuple[Participant, ...]:
    """Return the riders (role ``rider``) and crew of one cue of one performance."""
    crew = db.execute("SELECT c.role, p.id, p.name FROM performance_crew c JOIN person p ON p.id = c.person_id "
                      "WHERE c.performance_id = ? AND c.cue_id = ? ORDER BY c.role, p.name",
                      [performance_id, cue_id]).fetchall()
    riders = db.execute("SELECT p.id, p.name FROM performance_rider r JOIN person p ON p.id = r.person_id "
                        "WHERE r.performance_id = ? AND r.cue_id = ? ORDER BY p.name",
                        [performance_id, cue_id]).fetchall()
    return tuple([Participant(name, role, pid) for role, pid, name in crew]
                 + [Participant(name, "rider", pid) for pid, name in riders])


def rig_team(db: sqlite_utils.Database, performance_id: int, rig: str) -> tuple[Participant, ...]:
    """Return everyone on any cue of ``rig`` in this performance (each person once)."""
    seen: dict[int, Participant] = {}
    for (cue_id,) in db.execute("SELECT DISTINCT c.id FROM cue c JOIN performance p ON p.production_id = "
                                "c.production_id WHERE p.id = ? AND c.rig_slug = ? ORDER BY c.position",
                                [performance_id, rig]).fetchall():
        for member in cue_team(db, performance_id, cue_id):
            seen.setdefault(member.person_id, member)
    return tuple(seen.values())


def _qualified(db: sqlite_utils.Database, person: Person, role: str, rig: str, on: date) -> bool:
    """A rider must be cleared for the rig; anyone else trained on it, not expired on ``on``."""
    if role == "rider":
        return db.execute("SELECT 1 FROM performer_rig WHERE person_id = ? AND rig_slug = ?",
                          [person.person_id, rig]).fetchone() is not None
    row = db.execute("SELECT trained_on, expires_on FROM training WHERE person_id = ? AND rig_slug = ?",
                     [person.person_id, rig]).fetchone()
    return row is not None and date.fromisoformat(row[0]) <= on <= date.fromisoformat(row[1])


# --------------------------------------------------------------------------- the show log

def _event(db: sqlite_utils.Database, event: str, *, person: Person | None = None, role: str | None = None,
           performance_id: int | None = None, cue_id: int | None = None, rig: str | None = None,
           device: str | None = None, detail: dict | None = None) -> dict:
    """Build one care row of the show log (the ``step_log`` columns in DEVELOPERS.md)."""
    return {
        "event": event,
        "person_id": person.person_id if person else None,
        "person_name": person.name if person else None,
        "role": role,
        "device": device,
        "performance_id": performance_id,
        "cue_id": cue_id,
        "rig_version": rig_version(db, rig) if rig else None,
        "detail": {"rig": rig, **(detail or {})},
    }


def _append_events():
    try:
        from showops.store.log import append_events
    except ImportError:  # pragma: no cover - the log ships with showops
        raise ShowopsError("the show log (showops.store.log) is not installed; care records are not written "
                           "without their log row") from None
    return append_events


def _write(db: sqlite_utils.Database, log: dict, write: Callable[[Any, int], int]) -> int:
    """Append the record's log row and write the record, in one transaction; return the record's id.

    ``write(conn, log_id)`` inserts the record; the record keeps ``log_id``, the line of
    the hash chain that vouches for it. Either both are written or neither.
    """
    append_events = _append_events()
    with transaction(db) as conn:
        (row,) = append_events(db, [_event(db, **log)])
        return write(conn, row["id"])


def _insert(db: sqlite_utils.Database, table: str, row: dict, log: dict) -> int:
    """Write one record (with its ``log_id``) and its log row; return the record's id."""
    def write(conn, log_id: int) -> int:
        cols = list(row) + ["log_id"]
        cur = conn.execute(f"INSERT INTO {table} ({', '.join(cols)}) VALUES ({', '.join('?' * len(cols))})",
                           [*row.values(), log_id])
        return cur.lastrowid
    return _write(db, log, write)


def _insert_plain(db: sqlite_utils.Database, table: str, row: dict, log: dict) -> int:
    """Write a register row that has no ``log_id`` column, with its log row."""
    def write(conn, log_id: int) -> int:
        cur = conn.execute(f"INSERT INTO {table} ({', '.join(row)}) VALUES ({', '.join('?' * len(row))})",
                           list(row.values()))
        return cur.lastrowid
    return _write(db, log, write)


# --------------------------------------------------------------------------- rule sets

def rule_set_for(db: sqlite_utils.Database, rig: str) -> RuleSet:
    """Return the rule set ``rig`` follows (the venue's latest choice, with its edits)."""
    row = db.execute("SELECT rule_set FROM care_rule_choice WHERE rig = ? ORDER BY id DESC LIMIT 1", [rig]).fetchone()
    return rule_set(db, row[0] if row else DEFAULT_RULE_SET)


def rule_set(db: sqlite_utils.Database, name: str) -> RuleSet:
    """Return the rule set ``name``: a default one with the venue's edits, or the venue's own.

    :raises ValidationError: (field ``rule_set``) when there is no such set.
    """
    base = DEFAULT_RULE_SETS.get(name)
    rules: dict[str, Rule | None] = {r.key: r for r in base.rules} if base else {}
    edited = False
    for key, kind, title, source, months, events, examiner, removed in db.execute(
            "SELECT key, kind, title, source, months, events, examiner, removed FROM care_rule "
            "WHERE rule_set = ? ORDER BY id", [name]):
        edited = True
        rules[key] = None if removed else Rule(key, kind, title, source, months, tuple(json.loads(events)), examiner)
    if base is None and not edited:
        raise ValidationError("rule_set", f"{name!r} is not a rule set (sets: "
                                          f"{', '.join(rule_set_names(db))})")
    title = base.title if base else f"{name} (the venue's own)"
    if base and edited:
        title += ", with the venue's changes"
    return RuleSet(name, title, tuple(r for r in rules.values() if r is not None), base.note if base else "")


def rule_set_names(db: sqlite_utils.Database) -> list[str]:
    own = [r[0] for r in db.execute("SELECT DISTINCT rule_set FROM care_rule ORDER BY rule_set")]
    return list(dict.fromkeys([*DEFAULT_RULE_SETS, *own]))


def choose_rule_set(db: sqlite_utils.Database, rig: str, name: str, chosen_by: Any) -> RuleSet:
    """Make ``rig`` follow rule set ``name`` from now on.

    :raises ValidationError: for an unknown rig, set or person.
    """
    rig = require_rig(db, rig)
    chosen = rule_set(db, name)
    person = find_person(db, chosen_by, "chosen_by")
    _insert_plain(db, "care_rule_choice", {"rig": rig, "rule_set": name, "chosen_by": person.name,
                                           "chosen_at": _iso(_now())},
                  {"event": "rule_set_chosen", "person": person, "rig": rig, "detail": {"rule_set": name}})
    return chosen


def write_rule(db: sqlite_utils.Database, set_name: str, key: str, *, written_by: Any, kind: str | None = None,
               title: str | None = None, source: str | None = None, months: int | None = None,
               events: Sequence[str] | None = None, remove: bool = False) -> Rule | None:
    """Add, change or remove one rule of a rule set (a new row; earlier rows are kept).

    :raises ValidationError: naming the field that is wrong.
    """
    person = find_person(db, written_by, "written_by")
    if not set_name or not set_name.replace("-", "").isalnum():
        raise ValidationError("rule_set", f"expected letters, digits and dashes, got {set_name!r}")
    current = None
    try:
        current = rule_set(db, set_name).rule(key)
    except ValidationError:
        pass
    if remove:
        if current is None:
            raise ValidationError("key", f"rule set {set_name!r} has no rule {key!r}")
        rule = current
    elif current is None:
        rule = new_rule(key, kind or "", title or "", source or "", months, tuple(events or ()))
    else:
        rule = edited_rule(current, months=months, source=source, title=title,
                           events=tuple(events) if events is not None else None)
    _insert_plain(db, "care_rule", {"rule_set": set_name, "key": rule.key, "kind": rule.kind, "title": rule.title,
                                    "source": rule.source, "months": rule.months,
                                    "events": json.dumps(list(rule.events)), "examiner": rule.examiner,
                                    "removed": int(remove), "written_by": person.name, "written_at": _iso(_now())},
                  {"event": "rule_written", "person": person,
                   "detail": {"rule_set": set_name, "key": key, "removed": remove, "months": rule.months,
                              "source": rule.source}})
    return None if remove else rule


# --------------------------------------------------------------------------- equipment register

def add_part(db: sqlite_utils.Database, rig: str, name: str, kind: str, *, carries_people: bool,
             rating_n: float | None = None, design_factor: float | None = None, sees: str | None = None,
             share: float = 1.0, note: str = "", fitted_on: Any = None, today: date | None = None) -> int:
    """Add a part to a rig's equipment register; return its id.

    :raises ValidationError: for an unknown rig or kind, a rating that is not a positive
        force, a people-carrying part without its design factor, a part that carries a
        figure but has no rating, or a share outside (0, 1].
    """
    rig = require_rig(db, rig)
    name = _text(name, "name", "name the part, e.g. 'rear bar brake'")
    if kind not in PART_KINDS:
        raise ValidationError("kind", f"{kind!r} is not a part kind ({', '.join(PART_KINDS)})")
    for field, value in (("rating_n", rating_n), ("design_factor", design_factor)):
        if value is not None and (isinstance(value, bool) or not isinstance(value, (int, float))
                                  or not value > 0 or value != value or value == float("inf")):
            raise ValidationError(field, f"expected a positive number, got {value!r}")
    if design_factor is not None and design_factor < 1:
        raise ValidationError("design_factor", f"{design_factor:g} is below 1 (breaking force / working load limit)")
    if sees is not None and sees not in FIGURES:
        raise ValidationError("sees", f"{sees!r} is not a figure the rig's solver gives ({', '.join(FIGURES)})")
    if sees is not None and rating_n is None:
        raise ValidationError("rating_n", f"a part that carries {sees} needs its rating (working load limit, N)")
    if carries_people and rating_n is not None and design_factor is None:
        raise ValidationError("design_factor", "a part that carries people needs the design factor its rating "
                                               "was given at (e.g. 7 for a webbing sling to EN 1492-1)")
    if not 0 < share <= 1:
        raise ValidationError("share", f"expected a fraction above 0 and up to 1, got {share!r}")
    fitted = _past_day(fitted_on, "fitted_on", today) if fitted_on is not None else None
    row = {"rig": rig, "name": name, "kind": kind, "carries_people": int(bool(carries_people)),
           "rating_n": rating_n, "design_factor": design_factor, "sees": sees, "share": share, "note": note or "",
           "fitted_on": fitted.isoformat() if fitted else None, "recorded_at": _iso(_now())}
    return _insert_plain(db, "care_part", row, {"event": "part_registered", "rig": rig,
                                                "detail": {k: v for k, v in row.items() if k != "recorded_at"}})


def retire_part(db: sqlite_utils.Database, part_id: int, on: Any, reason: str, *, today: date | None = None) -> None:
    """Record that a part was taken off the rig (the register keeps its row).

    :raises NotFound: for an unknown part; :raises ValidationError: for a bad date or no reason.
    """
    row = db.execute("SELECT rig FROM care_part WHERE id = ?", [part_id]).fetchone()
    if row is None:
        raise NotFound(f"part: part {part_id} does not exist")
    if db.execute("SELECT 1 FROM care_part_retired WHERE part_id = ?", [part_id]).fetchone():
        raise ValidationError("part", f"part {part_id} is already retired")
    day = _past_day(on, "on", today)
    reason = _text(reason, "reason", "say why it came off")
    _insert_plain(db, "care_part_retired", {"part_id": part_id, "on_date": day.isoformat(), "reason": reason,
                                            "recorded_at": _iso(_now())},
                  {"event": "part_retired", "rig": row[0], "detail": {"part_id": part_id, "reason": reason}})


def parts(db: sqlite_utils.Database, rig: str | None = None, *, fitted_only: bool = True) -> list[Part]:
    """Return the register's parts (of one rig), the retired ones left out unless asked."""
    sql = ("SELECT p.id, p.rig, p.name, p.kind, p.carries_people, p.rating_n, p.design_factor, p.sees, p.share, "
           "p.note, p.fitted_on, r.on_date FROM care_part p LEFT JOIN care_part_retired r ON r.part_id = p.id")
    params: list = []
    if rig is not None:
        sql += " WHERE p.rig = ?"
        params.append(rig)
    out = [Part(i, rg, n, k, bool(cp), rn, df, s, sh, note, date.fromisoformat(f) if f else None,
                date.fromisoformat(ret) if ret else None)
           for i, rg, n, k, cp, rn, df, s, sh, note, f, ret in db.execute(sql + " ORDER BY p.rig, p.id", params)]
    return [p for p in out if p.retired_on is None] if fitted_only else out


# --------------------------------------------------------------------------- inspections and events

def record_inspection(db: sqlite_utils.Database, rig: str, on: Any, *, scope: str, examiner: Any, findings: str,
                      objection_to_use: bool, follow_up: str = "", covers: Sequence[str] = (),
                      today: date | None = None) -> int:
    """Record an inspection of ``rig``; return its id.

    :param covers: the rule keys it meets (empty: every interval rule of the rig's set).
    :raises ValidationError: for an unknown rig, a date in the future, an examiner who
        is not on the people list, no scope or findings, an objection to use with no
        follow-up, or a rule key the rig's set does not have.
    """
    rig = require_rig(db, rig)
    day = _past_day(on, "on", today)
    person = find_person(db, examiner, "examiner")
    scope = _text(scope, "scope", "what was examined, e.g. 'thorough examination, whole rig'")
    findings = _text(findings, "findings", "what was found, e.g. 'brake pads 4 mm, straps intact'")
    follow_up = " ".join(str(follow_up or "").split())
    if objection_to_use and not follow_up:
        raise ValidationError("follow_up", "an objection to use needs the follow-up required to clear it")
    rules = rule_set_for(db, rig)
    unknown = [k for k in covers if rules.rule(k) is None]
    if unknown:
        raise ValidationError("covers", f"{', '.join(unknown)}: not rules of {rules.name} "
                                        f"({', '.join(r.key for r in rules.rules)})")
    row = {"rig": rig, "on_date": day.isoformat(), "scope": scope, "examiner_id": person.person_id,
           "examiner_name": person.name, "findings": findings, "objection_to_use": int(bool(objection_to_use)),
           "follow_up": follow_up, "covers": json.dumps(list(covers)), "rig_version": rig_version(db, rig),
           "recorded_at": _iso(_now())}
    return _insert(db, "care_inspection", row, {
        "event": "inspection_recorded", "person": person, "role": "examiner", "rig": rig,
        "detail": {"on": day.isoformat(), "scope": scope, "findings": findings,
                   "objection_to_use": bool(objection_to_use), "follow_up": follow_up, "covers": list(covers)}})


def acknowledge_remedy(db: sqlite_utils.Database, inspection_id: int, on: Any, *, person: Any, remedy: str,
                       today: date | None = None) -> int:
    """Acknowledge that an inspection's follow-up was done; return the acknowledgement's id.

    :raises NotFound: for an unknown inspection; :raises ValidationError: for an
        inspection with no follow-up, one already acknowledged, a date before the
        inspection or in the future, or no remedy text.
    """
    row = db.execute("SELECT rig, on_date, follow_up FROM care_inspection WHERE id = ?", [inspection_id]).fetchone()
    if row is None:
        raise NotFound(f"inspection: inspection {inspection_id} does not exist")
    rig, insp_on, follow_up = row
    if not follow_up:
        raise ValidationError("inspection", f"inspection {inspection_id} asked for no follow-up")
    if db.execute("SELECT 1 FROM care_remedy WHERE inspection_id = ?", [inspection_id]).fetchone():
        raise ValidationError("inspection", f"the follow-up of inspection {inspection_id} is already acknowledged")
    day = _past_day(on, "on", today)
    if day < date.fromisoformat(insp_on):
        raise ValidationError("on", f"{day.isoformat()} is before the inspection ({insp_on})")
    who = find_person(db, person, "person")
    remedy = _text(remedy, "remedy", "what was done, e.g. 'brake pads replaced, holding tested at 1.2 kN'")
    return _insert(db, "care_remedy", {"inspection_id": inspection_id, "on_date": day.isoformat(),
                                       "person_id": who.person_id, "person_name": who.name, "remedy": remedy,
                                       "recorded_at": _iso(_now())},
                   {"event": "remedy_acknowledged", "person": who, "rig": rig,
                    "detail": {"inspection_id": inspection_id, "remedy": remedy}})


def record_rig_event(db: sqlite_utils.Database, rig: str, kind: str, on: Any, description: str, *,
                     reported_by: Any = None, today: date | None = None) -> int:
    """Record an incident, an overload or a modification of ``rig`` (calls for an extraordinary examination).

    :raises ValidationError: for an unknown rig or kind, a date in the future, no description.
    """
    rig = require_rig(db, rig)
    if kind not in EVENT_KINDS:
        raise ValidationError("kind", f"{kind!r} is not one of {', '.join(EVENT_KINDS)}")
    day = _past_day(on, "on", today)
    description = _text(description, "description", "what happened to the rig")
    who = find_person(db, reported_by, "reported_by") if reported_by is not None else None
    return _insert(db, "care_event", {"rig": rig, "kind": kind, "on_date": day.isoformat(),
                                      "description": description, "person_id": who.person_id if who else None,
                                      "person_name": who.name if who else None, "recorded_at": _iso(_now())},
                   {"event": "rig_event_recorded", "person": who, "rig": rig,
                    "detail": {"kind": kind, "on": day.isoformat(), "description": description}})


def inspections(db: sqlite_utils.Database, rig: str | None = None) -> list[Inspection]:
    """Return the inspection records (of one rig), oldest first, with their remedies."""
    sql = ("SELECT i.id, i.rig, i.on_date, i.scope, i.examiner_id, i.examiner_name, i.findings, i.objection_to_use, "
           "i.follow_up, i.covers, r.on_date, r.person_id, r.person_name, r.remedy FROM care_inspection i "
           "LEFT JOIN care_remedy r ON r.inspection_id = i.id")
    params = []
    if rig is not None:
        sql += " WHERE i.rig = ?"
        params.append(rig)
    return [Inspection(i, rg, date.fromisoformat(on), scope, Person(en, eid), findings, bool(obj), fu,
                       tuple(json.loads(cov)), date.fromisoformat(ron) if ron else None,
                       Person(rn, rid) if rn else None, rem or "")
            for i, rg, on, scope, eid, en, findings, obj, fu, cov, ron, rid, rn, rem
            in db.execute(sql + " ORDER BY i.on_date, i.id", params)]


def rig_events(db: sqlite_utils.Database, rig: str | None = None) -> list[RigEvent]:
    sql = "SELECT id, rig, kind, on_date, description, person_id, person_name FROM care_event"
    params = []
    if rig is not None:
        sql += " WHERE rig = ?"
        params.append(rig)
    return [RigEvent(i, rg, k, date.fromisoformat(on), d, Person(pn, pid) if pn else None)
            for i, rg, k, on, d, pid, pn in db.execute(sql + " ORDER BY on_date, id", params)]


def due(db: sqlite_utils.Database, today: date | None = None, days: int = 14) -> list[Due]:
    """Return what falls due (or is overdue) on every rig within ``days`` of ``today``."""
    today = today or date.today()
    if isinstance(days, bool) or not isinstance(days, int) or days < 0:
        raise ValidationError("days", f"expected a whole number of days, 0 or more, got {days!r}")
    out: list[Due] = []
    for rig in rig_slugs(db):
        out += due_list(rig, rule_set_for(db, rig), inspections(db, rig), rig_events(db, rig), today, days)
    order = {"overdue": 0, "never examined": 1, "extraordinary": 2, "due soon": 3}
    return sorted(out, key=lambda d: (order[d.status], d.due_on or date.min, d.rig))


# --------------------------------------------------------------------------- the pre-show check

def load_checklist(db: sqlite_utils.Database, rig: str, text: str, source: str = "<checklist>") -> str:
    """Store a rig's pre-show checklist (procedure file format); return its version.

    :raises ValidationError: (field ``checklist``) when the file cannot be parsed, names
        another rig, has no items or no load trial in motion.
    """
    rig = require_rig(db, rig)
    procedure = parse_checklist(text, source)
    if procedure.rig and procedure.rig != rig:
        raise ValidationError("checklist", f"{source}: written for rig {procedure.rig!r}, not {rig!r}")
    checklist_items(procedure)  # refuses a list with no items or no load trial
    version = procedure.version
    if not db.execute("SELECT 1 FROM care_checklist WHERE rig = ? AND version = ?", [rig, version]).fetchone():
        _insert_plain(db, "care_checklist", {"rig": rig, "text": text, "version": version, "source": source,
                                             "loaded_at": _iso(_now())},
                      {"event": "checklist_loaded", "rig": rig, "detail": {"version": version, "source": source}})
    return version


def parse_checklist(text: str, source: str):
    """Parse a checklist with the procedure parser (``showops.procedure.parse_procedure``).

    :raises ValidationError: (field ``checklist``) when it cannot be read.
    """
    try:
        from showops.procedure import parse_procedure
    except ImportError:
        raise ShowopsError("the procedure parser (showops.procedure) is not installed") from None
    try:
        return parse_procedure(text, source)
    except ShowopsError as exc:
        raise ValidationError("checklist", str(exc)) from None


def checklist(db: sqlite_utils.Database, rig: str) -> tuple[tuple[ChecklistItem, ...], str] | None:
    """Return (items, version) of the rig's current checklist, or None when none is loaded."""
    row = db.execute("SELECT text, version, source FROM care_checklist WHERE rig = ? ORDER BY id DESC LIMIT 1",
                     [rig]).fetchone()
    if row is None:
        return None
    return checklist_items(parse_checklist(row[0], row[2])), row[1]


def answer_preshow(db: sqlite_utils.Database, performance_id: Any, rig: str, item: str, observation: str, *,
                   person: Any, result: str = "pass", at: Any = None, device: str | None = None) -> int:
    """Record what ``person`` observed for one item of tonight's pre-show check; return its id.

    :param item: the item's key (``phase/title``), its title, or its number from 1.
    :raises ValidationError: for an unknown item, an answer that does not say what was
        observed ("OK", "checked"), a load trial that names no test load, a person not
        on the people list, a result other than pass/fault, a time in the future.
    """
    perf, _ = performance_day(db, performance_id)
    rig = require_rig(db, rig)
    loaded = checklist(db, rig)
    if loaded is None:
        raise ValidationError("rig", f"no pre-show checklist is loaded for {rig} (showops care checklist {rig} FILE)")
    items, version = loaded
    found = _find_item(items, item)
    observation = validate_observation(observation, found)
    if result not in ("pass", "fault"):
        raise ValidationError("result", f"expected pass or fault, got {result!r}")
    who = find_person(db, person, "person")
    moment = _moment(at, "at")
    return _insert(db, "care_preshow_answer", {
        "performance_id": perf, "rig": rig, "checklist_version": version, "item_key": found.key,
        "observation": observation, "result": result, "person_id": who.person_id, "person_name": who.name,
        "at_utc": _iso(moment)}, {
        "event": "preshow_answered", "person": who, "role": found.role, "performance_id": perf, "rig": rig,
        "device": device, "detail": {"item": found.key, "observation": observation, "result": result,
                                     "load_trial": found.load_trial, "checklist_version": version}})


def _find_item(items: Sequence[ChecklistItem], ref: Any) -> ChecklistItem:
    text = str(ref or "").strip()
    if text.isdigit() and 1 <= int(text) <= len(items):
        return items[int(text) - 1]
    for item in items:
        if text == item.key or text.casefold() == item.title.casefold():
            return item
    raise ValidationError("item", f"{text!r} is not an item of the checklist (items: "
                                  + "; ".join(f"{n}. {i.title}" for n, i in enumerate(items, 1)) + ")")


def preshow_answers(db: sqlite_utils.Database, performance_id: int, rig: str | None = None) -> list[PreshowAnswer]:
    sql = ("SELECT id, performance_id, rig, item_key, observation, result, person_id, person_name, at_utc "
           "FROM care_preshow_answer WHERE performance_id = ?")
    params: list = [performance_id]
    if rig is not None:
        sql += " AND rig = ?"
        params.append(rig)
    return [PreshowAnswer(i, p, r, k, o, res, Person(pn, pid), _as_utc(at))
            for i, p, r, k, o, res, pid, pn, at in db.execute(sql + " ORDER BY at_utc, id", params)]


# --------------------------------------------------------------------------- briefing

def give_briefing(db: sqlite_utils.Database, performance_id: Any, rig: str, *, given_by: Any, note: str = "",
                  at: Any = None) -> int:
    """Record that ``given_by`` gave tonight's briefing for ``rig``; return its id.

    The attendees then confirm on their own screens (:func:`confirm_briefing`).
    """
    perf, _ = performance_day(db, performance_id)
    rig = require_rig(db, rig)
    who = find_person(db, given_by, "given_by")
    moment = _moment(at, "at")
    return _insert(db, "care_briefing", {"performance_id": perf, "rig": rig, "given_by_id": who.person_id,
                                         "given_by_name": who.name, "at_utc": _iso(moment), "note": note or ""},
                   {"event": "briefing_given", "person": who, "performance_id": perf, "rig": rig,
                    "detail": {"note": note or ""}})


def confirm_briefing(db: sqlite_utils.Database, briefing_id: int, person: Any, *, device: str | None = None,
                     at: Any = None) -> int:
    """``person`` confirms, on their own screen, that they attended briefing ``briefing_id``.

    :raises NotFound: for an unknown briefing; :raises ValidationError: for a person not
        on the people list or not on any cue of the rig that night, or one who already confirmed.
    """
    row = db.execute("SELECT performance_id, rig FROM care_briefing WHERE id = ?", [briefing_id]).fetchone()
    if row is None:
        raise NotFound(f"briefing: briefing {briefing_id} does not exist")
    perf, rig = row
    who = find_person(db, person, "person")
    team = rig_team(db, perf, rig)
    if team and not any(p.person.same_as(who) for p in team):
        raise ValidationError("person", f"{who.name} is on no {rig} cue in this performance")
    if db.execute("SELECT 1 FROM care_briefing_attendance WHERE briefing_id = ? AND person_name = ?",
                  [briefing_id, who.name]).fetchone():
        raise ValidationError("person", f"{who.name} already confirmed this briefing")
    moment = _moment(at, "at")
    return _insert(db, "care_briefing_attendance", {"briefing_id": briefing_id, "person_id": who.person_id,
                                                    "person_name": who.name, "confirmed_at": _iso(moment),
                                                    "device": device},
                   {"event": "briefing_confirmed", "person": who, "performance_id": perf, "rig": rig,
                    "device": device, "detail": {"briefing_id": briefing_id}})


def briefing_for(db: sqlite_utils.Database, performance_id: int, rig: str) -> Briefing | None:
    """Return the latest briefing of ``rig`` for this performance, with who confirmed it."""
    row = db.execute("SELECT id, given_by_id, given_by_name, at_utc FROM care_briefing WHERE performance_id = ? "
                     "AND rig = ? ORDER BY id DESC LIMIT 1", [performance_id, rig]).fetchone()
    if row is None:
        return None
    attendees = tuple(Person(n, i) for i, n in db.execute(
        "SELECT person_id, person_name FROM care_briefing_attendance WHERE briefing_id = ? ORDER BY id", [row[0]]))
    return Briefing(row[0], performance_id, rig, Person(row[2], row[1]), _as_utc(row[3]), attendees)


# --------------------------------------------------------------------------- rehearsal

def record_rehearsal(db: sqlite_utils.Database, rig: str, on: Any, team: Sequence[tuple[Any, str]], *,
                     cue_id: int | None = None, note: str = "", today: date | None = None) -> int:
    """Record a rehearsal of ``rig`` (or of one cue on it) by ``team``, (person, role) pairs.

    The rig's current version is recorded as the configuration rehearsed.

    :raises ValidationError: for an unknown rig, a date in the future, an empty team, a
        person not on the people list, a rider not cleared for the rig, or a crew member
        not trained on it (or whose training had expired) on that date.
    """
    rig = require_rig(db, rig)
    day = _past_day(on, "on", today)
    if cue_id is not None and cue_rig(db, cue_id) != rig:
        raise ValidationError("cue", f"cue {cue_id} does not use {rig}")
    if not team:
        raise ValidationError("team", "empty (name who rehearsed, each with their role)")
    members: list[Participant] = []
    for ref, role in team:
        role = _text(role, "role", "the role they rehearsed, e.g. brake, lifters, rider")
        who = find_person(db, ref, "team")
        if not _qualified(db, who, role, rig, day):
            what = "cleared to ride" if role == "rider" else "trained on"
            raise ValidationError("team", f"{who.name} is not {what} {rig} (on {day.isoformat()}); record their "
                                          "training first")
        members.append(Participant(who.name, role, who.person_id))
    config = rig_version(db, rig) or ""

    def write(conn, log_id: int) -> int:
        rid = conn.execute("INSERT INTO care_rehearsal (rig, cue_id, on_date, configuration, note, log_id, "
                           "recorded_at) VALUES (?, ?, ?, ?, ?, ?, ?)",
                           [rig, cue_id, day.isoformat(), config, note or "", log_id, _iso(_now())]).lastrowid
        for m in dict.fromkeys(members):
            conn.execute("INSERT OR IGNORE INTO care_rehearsal_member (rehearsal_id, person_id, person_name, role) "
                         "VALUES (?, ?, ?, ?)", [rid, m.person_id, m.name, m.role])
        return rid
    return _write(db, {"event": "rehearsal_recorded", "rig": rig, "cue_id": cue_id, "detail": {
        "on": day.isoformat(), "team": [{"person_id": m.person_id, "name": m.name, "role": m.role} for m in members],
        "configuration": config, "note": note or ""}}, write)


def rehearsals(db: sqlite_utils.Database, rig: str | None = None) -> list[Rehearsal]:
    sql = "SELECT id, rig, on_date, cue_id, configuration, note FROM care_rehearsal"
    params: list = []
    if rig is not None:
        sql += " WHERE rig = ?"
        params.append(rig)
    members: dict[int, list[Participant]] = {}
    for rid, pid, name, role in db.execute("SELECT rehearsal_id, person_id, person_name, role FROM "
                                           "care_rehearsal_member ORDER BY rehearsal_id, role, person_name"):
        members.setdefault(rid, []).append(Participant(name, role, pid))
    return [Rehearsal(i, rg, date.fromisoformat(on), tuple(members.get(i, ())), cue, cfg, note)
            for i, rg, on, cue, cfg, note in db.execute(sql + " ORDER BY on_date, id", params)]


# --------------------------------------------------------------------------- area release

def release_area(db: sqlite_utils.Database, performance_id: Any, *, person: Any, role: str = "stage manager",
                 note: str = "", at: Any = None) -> int:
    """The supervising person releases the stage for the performance (DGUV Vorschrift 17 §15).

    :raises ValidationError: for a role other than stage manager or supervisor, a person
        not on the people list, or a stage manager who is not this performance's.
    """
    perf, _ = performance_day(db, performance_id)
    role = " ".join(str(role or "").lower().split())
    if role not in RELEASE_ROLES:
        raise ValidationError("role", f"{role!r} may not release the stage ({' or '.join(RELEASE_ROLES)})")
    who = find_person(db, person, "person")
    sm = db.execute("SELECT stage_manager_id FROM performance WHERE id = ?", [perf]).fetchone()[0]
    if role == "stage manager" and sm is not None and sm != who.person_id:
        raise ValidationError("person", f"{who.name} is not this performance's stage manager (release as the "
                                        "designated supervisor instead)")
    moment = _moment(at, "at")
    return _insert(db, "care_area_release", {"performance_id": perf, "person_id": who.person_id,
                                             "person_name": who.name, "role": role, "at_utc": _iso(moment),
                                             "note": note or ""},
                   {"event": "area_released", "person": who, "role": role, "performance_id": perf,
                    "detail": {"note": note or ""}})


def area_releases(db: sqlite_utils.Database, performance_id: int) -> list[AreaRelease]:
    return [AreaRelease(i, p, Person(n, pid), role, _as_utc(at), note) for i, p, pid, n, role, at, note in db.execute(
        "SELECT id, performance_id, person_id, person_name, role, at_utc, note FROM care_area_release "
        "WHERE performance_id = ? ORDER BY id", [performance_id])]


# --------------------------------------------------------------------------- safety objection

def raise_objection(db: sqlite_utils.Database, *, person: Any, role: str, reason: str, responsible: Any,
                    rig: str | None = None, cue_id: int | None = None, performance_id: Any = None,
                    at: Any = None, device: str | None = None) -> int:
    """Raise a safety objection against a rig or a cue; return its id. It blocks until resolved.

    :raises ValidationError: for no reason, no rig and no cue, an unknown rig or cue, a
        person or responsible person not on the people list, or no stage role.
    """
    reason = _text(reason, "reason", "say what is unsafe, e.g. 'handrail clamp slips under hand pressure'")
    role = _text(role, "role", "the stage role you hold, e.g. spotter, lifters, stage manager")
    if rig is None and cue_id is None:
        raise ValidationError("rig", "name the rig or the cue the objection is against")
    if rig is not None:
        rig = require_rig(db, rig)
    if cue_id is not None:
        cue_rig(db, int(cue_id))
    perf = performance_day(db, performance_id)[0] if performance_id is not None else None
    who = find_person(db, person, "person")
    owner = find_person(db, responsible, "responsible")
    moment = _moment(at, "at")
    return _insert(db, "care_objection", {
        "raised_by_id": who.person_id, "raised_by_name": who.name, "role": role, "at_utc": _iso(moment),
        "reason": reason, "responsible_id": owner.person_id, "responsible_name": owner.name, "rig": rig,
        "cue_id": cue_id, "performance_id": perf}, {
        "event": "objection_raised", "person": who, "role": role, "performance_id": perf, "cue_id": cue_id,
        "rig": rig, "device": device, "detail": {"reason": reason, "responsible": owner.name}})


def resolve_objection(db: sqlite_utils.Database, objection_id: int, *, person: Any, reason: str,
                      at: Any = None) -> int:
    """The named responsible person resolves an objection with a written reason.

    :raises NotFound: for an unknown objection; :raises PermissionDenied: when ``person``
        is not the responsible person; :raises ValidationError: for no reason or one
        already resolved.
    """
    row = db.execute("SELECT responsible_id, responsible_name, rig, cue_id, performance_id FROM care_objection "
                     "WHERE id = ?", [objection_id]).fetchone()
    if row is None:
        raise NotFound(f"objection: objection {objection_id} does not exist")
    if db.execute("SELECT 1 FROM care_resolution WHERE objection_id = ?", [objection_id]).fetchone():
        raise ValidationError("objection", f"objection {objection_id} is already resolved")
    reason = _text(reason, "reason", "write why the objection is resolved, e.g. 'clamp replaced and load-tested'")
    who = find_person(db, person, "person")
    if not who.same_as(Person(row[1], row[0])):
        raise PermissionDenied(f"person: only {row[1]}, the named responsible person, may resolve objection "
                               f"{objection_id}")
    moment = _moment(at, "at")
    return _insert(db, "care_resolution", {"objection_id": objection_id, "person_id": who.person_id,
                                           "person_name": who.name, "at_utc": _iso(moment), "reason": reason},
                   {"event": "objection_resolved", "person": who, "performance_id": row[4], "cue_id": row[3],
                    "rig": row[2], "detail": {"objection_id": objection_id, "reason": reason}})


def objections(db: sqlite_utils.Database, *, open_only: bool = False) -> list[Objection]:
    rows = db.execute(
        "SELECT o.id, o.raised_by_id, o.raised_by_name, o.role, o.at_utc, o.reason, o.responsible_id, "
        "o.responsible_name, o.rig, o.cue_id, o.performance_id, r.person_id, r.person_name, r.at_utc, r.reason "
        "FROM care_objection o LEFT JOIN care_resolution r ON r.objection_id = o.id ORDER BY o.id")
    out = [Objection(i, Person(rn, rid), role, _as_utc(at), reason, Person(resp_n, resp_id), rig, cue, perf,
                     Person(sn, sid) if sn else None, _as_utc(sat) if sat else None, sreason or "")
           for i, rid, rn, role, at, reason, resp_id, resp_n, rig, cue, perf, sid, sn, sat, sreason in rows]
    return [o for o in out if o.open] if open_only else out


# --------------------------------------------------------------------------- readiness

def readiness_reasons(db: sqlite_utils.Database, performance_id: int, cue: Any, *,
                      as_of: date | None = None) -> list[Reason]:
    """Return every readiness reason for one cue of one performance (the show's verdicts call this).

    :param cue: a :class:`showops.show.model.CueNight` (``cue_id``, ``rig`` and, when
        given, ``load`` are read; the riders and crew come from the casting tables), or
        a cue id.
    :param as_of: the day it is now (default: the machine's local date, the venue's);
        records made on the night block from the performance's day on.
    :returns: reasons with ``limit`` one of ``inspection``, ``preshow``, ``briefing``,
        ``rehearsal``, ``area_release``, ``objection``, ``equipment``; none for a cue
        that uses no rig.
    :raises NotFound: for a performance or cue that does not exist.
    """
    snap = _snapshot(db)
    cue_id = cue if isinstance(cue, int) else getattr(cue, "cue_id", None)
    rig = None if isinstance(cue, int) else getattr(cue, "rig", None)
    if rig is None and cue_id is not None:
        if cue_id not in snap.cue_rigs:
            raise NotFound(f"cue: cue {cue_id} does not exist")
        rig = snap.cue_rigs[cue_id]
    if not rig:
        return []
    if performance_id not in snap.perf_days:
        raise NotFound(f"performance: performance {performance_id} does not exist")
    as_of = as_of or date.today()
    team = snap.teams.get((performance_id, cue_id), ())
    key = ("cue", performance_id, cue_id, rig, as_of)
    if team and key in snap.memo:  # the same cue asked again (the sheet's cover, then its page)
        return list(snap.memo[key])
    if not team and not isinstance(cue, int):
        team = participants_of(cue)
    reasons = cue_readiness(snap.context(performance_id, rig, cue_id, team, as_of, getattr(cue, "load", None)),
                            snap.memo)
    if snap.teams.get((performance_id, cue_id)):
        snap.memo[key] = tuple(reasons)
    return reasons


class _Snapshot:
    """Every care record and the casting, read once per state of the database.

    A season's verdicts ask for hundreds of cues; reading the records once and
    parsing each rig and checklist text once keeps that to milliseconds.
    """

    def __init__(self, db: sqlite_utils.Database):
        q = db.execute
        self.db = db
        self.perf_days = {i: datetime.fromisoformat(s).date() for i, s in q("SELECT id, starts_at FROM performance")}
        self.cue_rigs = dict(q("SELECT id, rig_slug FROM cue"))
        self.rig_cues_of: dict[int, list[int]] = {}
        for perf, cue_id in q("SELECT p.id, c.id FROM performance p JOIN cue c ON c.production_id = p.production_id "
                              "WHERE c.rig_slug IS NOT NULL ORDER BY p.id, c.position, c.id"):
            self.rig_cues_of.setdefault(perf, []).append(cue_id)
        teams: dict[tuple[int, int], list[Participant]] = {}
        for perf, cue_id, role, pid, name in q(
                "SELECT c.performance_id, c.cue_id, c.role, p.id, p.name FROM performance_crew c "
                "JOIN person p ON p.id = c.person_id ORDER BY c.role, p.name"):
            teams.setdefault((perf, cue_id), []).append(Participant(name, role, pid))
        for perf, cue_id, pid, name in q("SELECT r.performance_id, r.cue_id, p.id, p.name FROM performance_rider r "
                                         "JOIN person p ON p.id = r.person_id ORDER BY p.name"):
            teams.setdefault((perf, cue_id), []).append(Participant(name, "rider", pid))
        self.teams = {k: tuple(v) for k, v in teams.items()}
        self.masses = dict(q("SELECT person_id, mass_kg FROM performer"))
        self.rig_texts = {slug: (sha, text) for slug, sha, text in q(
            "SELECT rig_slug, sha256, text FROM rig_version WHERE id IN (SELECT MAX(id) FROM rig_version "
            "GROUP BY rig_slug)")}
        self.inspections = _group(inspections(db), lambda i: i.rig)
        self.events = _group(rig_events(db), lambda e: e.rig)
        self.rehearsals = _group(rehearsals(db), lambda r: r.rig)
        self.parts = _group(parts(db), lambda p: p.rig)
        self.objections = tuple(objections(db, open_only=True))
        self.checklists = {rig: (text, version, source) for rig, text, version, source in q(
            "SELECT rig, text, version, source FROM care_checklist WHERE id IN (SELECT MAX(id) FROM care_checklist "
            "GROUP BY rig)")}
        self.answers = _group(
            (PreshowAnswer(i, p, r, k, o, res, Person(pn, pid), _as_utc(at)) for i, p, r, k, o, res, pid, pn, at in q(
                "SELECT id, performance_id, rig, item_key, observation, result, person_id, person_name, at_utc "
                "FROM care_preshow_answer ORDER BY at_utc, id")), lambda a: (a.performance_id, a.rig))
        attendance = _group(q("SELECT briefing_id, person_id, person_name FROM care_briefing_attendance ORDER BY id"),
                            lambda row: row[0])
        self.briefings = {}
        for bid, perf, rig, gid, gname, at in q("SELECT id, performance_id, rig, given_by_id, given_by_name, at_utc "
                                                "FROM care_briefing ORDER BY id"):
            self.briefings[(perf, rig)] = Briefing(bid, perf, rig, Person(gname, gid), _as_utc(at),
                                                   tuple(Person(n, i) for _, i, n in attendance.get(bid, ())))
        self.releases = _group((AreaRelease(i, p, Person(n, pid), role, _as_utc(at), note)
                                for i, p, pid, n, role, at, note in q(
                                    "SELECT id, performance_id, person_id, person_name, role, at_utc, note "
                                    "FROM care_area_release ORDER BY id")), lambda r: r.performance_id)
        self.rule_sets: dict[str, RuleSet] = {}
        self.solves: dict[tuple, dict | None] = {}
        self.memo: dict = {}

    def rule_set(self, rig: str) -> RuleSet:
        if rig not in self.rule_sets:
            self.rule_sets[rig] = rule_set_for(self.db, rig)
        return self.rule_sets[rig]

    def model(self, rig: str):
        found = self.rig_texts.get(rig)
        return _parsed_rig(found[1], rig) if found else None

    def context(self, perf: int, rig: str, cue_id: int | None, team, as_of: date, load=None) -> CueReadiness:
        model = self.model(rig)
        if load is None and model is not None:
            masses = tuple(sorted(self.masses[p.person_id] for p in team
                                  if p.role == "rider" and p.person_id in self.masses))
            if (rig, masses) not in self.solves:
                self.solves[(rig, masses)] = _solve(model, masses)
            load = self.solves[(rig, masses)]
        figures = part_figures(load, model) if load is not None else {}
        limits = getattr(model, "limits", None)
        found = self.checklists.get(rig)
        items = _parsed_checklist(found[0], found[2]) if found else None
        return CueReadiness(
            rig=rig, cue_id=cue_id, performance_id=perf, performance_day=self.perf_days[perf], as_of=as_of,
            rule_set=self.rule_set(rig), team=tuple(team),
            configuration=self.rig_texts[rig][0] if rig in self.rig_texts else None,
            inspections=tuple(self.inspections.get(rig, ())), events=tuple(self.events.get(rig, ())),
            checklist=items, answers=tuple(self.answers.get((perf, rig), ())),
            briefing=self.briefings.get((perf, rig)), rehearsals=tuple(self.rehearsals.get(rig, ())),
            releases=tuple(self.releases.get(perf, ())), objections=self.objections,
            parts=tuple(self.parts.get(rig, ())), figures=figures,
            caution_at=float(getattr(limits, "caution_at", 0.8) or 0.8), people_factor=people_factor_of(model))


def _group(items: Iterable, key) -> dict:
    out: dict = {}
    for item in items:
        out.setdefault(key(item), []).append(item)
    return out


_SNAPSHOTS: dict[int, tuple[tuple[int, int], _Snapshot]] = {}


def _snapshot(db: sqlite_utils.Database) -> _Snapshot:
    """Return the records as they are now, re-read only when the database has changed.

    ``PRAGMA data_version`` changes when another connection commits; the connection's
    ``total_changes`` when this one writes. Together they say whether anything changed.
    """
    conn = db.conn
    state = (conn.execute("PRAGMA data_version").fetchone()[0], conn.total_changes)
    cached = _SNAPSHOTS.get(id(conn))
    if cached is not None and cached[0] == state and cached[1].db is db:
        return cached[1]
    snap = _Snapshot(db)
    if len(_SNAPSHOTS) > 32:
        _SNAPSHOTS.clear()
    _SNAPSHOTS[id(conn)] = (state, snap)
    return snap


@lru_cache(maxsize=64)
def _parsed_rig(text: str, slug: str):
    from showops.rig import parse_rig

    try:
        return parse_rig(text, source=f"{slug} (stored)")
    except ShowopsError:
        return None


@lru_cache(maxsize=64)
def _parsed_checklist(text: str, source: str) -> tuple[ChecklistItem, ...] | None:
    try:
        return checklist_items(parse_checklist(text, source))
    except ShowopsError:
        return None


def _solve(model, masses) -> dict | None:
    from showops.rig import solve_rig

    try:
        return solve_rig(model, list(masses)).to_dict()
    except ShowopsError:
        return None


def rig_status(db: sqlite_utils.Database, performance_id: int, rig: str, *, as_of: date | None = None) -> dict:
    """Return the readiness of one rig for one performance, for a sheet's cover.

    Keys: ``rig``, ``rule_set``, ``last_examined`` and ``next_due`` (ISO dates or None),
    ``preshow`` (``"complete"``, ``"fault"``, or ``"N of M items"``), ``briefing``
    (``"not given"`` or ``"N of M confirmed"``), ``rehearsal`` (names not current, or
    ``"current"``), ``open_objections`` (count), ``area_released`` (bool), ``reasons``
    (every reason of every cue on the rig, once each), ``line`` (one line).
    """
    perf, day = performance_day(db, performance_id)
    as_of = as_of or date.today()
    rules = rule_set_for(db, rig)
    insp = [i for i in inspections(db, rig) if i.passed and i.on <= day]
    last = insp[-1].on if insp else None
    from showops.care.schedules import add_months

    dues = [add_months(max((i.on for i in insp if not i.covers or r.key in i.covers), default=None), r.months or 0)
            for r in rules.of_kind("interval") if any(not i.covers or r.key in i.covers for i in insp)]
    loaded = checklist(db, rig)
    answers = preshow_answers(db, perf, rig)
    latest = {a.item_key: a for a in answers}
    if loaded is None:
        preshow = "no checklist"
    elif any(a.result == "fault" for a in latest.values()):
        preshow = "fault found"
    else:
        done = sum(1 for i in loaded[0] if i.key in latest)
        preshow = "complete" if done == len(loaded[0]) else f"{done} of {len(loaded[0])} items"
    team = rig_team(db, perf, rig)
    briefing = briefing_for(db, perf, rig)
    if briefing is None:
        brief = "not given"
    else:
        present = (briefing.given_by, *briefing.attendees)
        brief = f"{sum(1 for p in team if any(a.same_as(p.person) for a in present))} of {len(team)} confirmed"
    reasons: list[Reason] = []
    for (cue_id,) in db.execute("SELECT c.id FROM cue c JOIN performance p ON p.production_id = c.production_id "
                                "WHERE p.id = ? AND c.rig_slug = ? ORDER BY c.position", [perf, rig]).fetchall():
        for reason in readiness_reasons(db, perf, cue_id, as_of=as_of):
            if reason not in reasons:
                reasons.append(reason)
    open_obj = [o for o in objections(db, open_only=True) if o.rig == rig]
    return {
        "rig": rig, "rule_set": rules.name, "last_examined": last.isoformat() if last else None,
        "next_due": min(dues).isoformat() if dues else None, "preshow": preshow, "briefing": brief,
        "rehearsal": "current" if not any(r.limit == "rehearsal" for r in reasons) else "; ".join(
            r.text for r in reasons if r.limit == "rehearsal"),
        "open_objections": len(open_obj), "area_released": bool(area_releases(db, perf)),
        "reasons": [r.to_dict() for r in reasons], "line": summary_line(rig, reasons),
    }


# --------------------------------------------------------------------------- the demo

def checks_dir() -> "Path":
    """Return the folder of the shipped pre-show checklists (``procedures/checks``)."""
    from pathlib import Path

    return Path(__file__).resolve().parents[2] / "procedures" / "checks"


def _ensure_person(db: sqlite_utils.Database, name: str) -> Person:
    """Return the person ``name``, adding them to the people list (no performer or crew role) if new."""
    row = db.execute("SELECT id, name FROM person WHERE name = ? COLLATE NOCASE", [name]).fetchone()
    if row is None:
        with transaction(db) as conn:
            pid = conn.execute("INSERT INTO person (name) VALUES (?)", [name]).lastrowid
        return Person(name, pid)
    return Person(row[1], row[0])


def seed_demo_care(db: sqlite_utils.Database, demo_ids: Any, today: date, *, folder: Any = None) -> list[str]:
    """Add the demo's care records to what ``install_demo`` made (invented data).

    What it shows:

    * ``bough-lever``'s six-monthly thorough examination falls due a week from today,
      between the fourth and fifth performances: the later performances' bough cues
      are blocked until an examination is recorded;
    * the past performance has a complete pre-show check of each rig (with its load
      trial), a briefing everyone confirmed and the area release;
    * the next performance's orchard-lift briefing has one absentee (the rider of
      "Windfall"), so that cue is blocked that night until they confirm;
    * the understudy rehearsed another cue but never the duet with tonight's team, so
      the heavy night's duet is also blocked for rehearsal until one is recorded;
    * a safety objection against the orchard lift's handrail, raised and resolved.

    :param demo_ids: the :class:`showops.show.demo_data.DemoIds` ``install_demo`` returned.
    :param folder: where the checklists are (default ``procedures/checks``).
    :returns: one line per thing made or skipped, for ``showops demo`` to print.
    """
    from datetime import timedelta
    from pathlib import Path

    from showops.care.schedules import add_months
    from showops.show import demo_data as d

    notes: list[str] = []
    rigs = set(demo_ids.rigs)
    people = demo_ids.people
    cues = demo_ids.cues
    examiner = _ensure_person(db, "Lise Armitage")
    head = d.STAGE_MANAGER
    folder = Path(folder) if folder is not None else checks_dir()

    def moment(day: date, hhmm: str) -> datetime:
        hour, minute = map(int, hhmm.split(":"))
        return datetime(day.year, day.month, day.day, hour, minute, tzinfo=timezone.utc)

    # Checklists.
    loaded = []
    for rig in sorted(rigs):
        path = folder / f"{rig}-preshow.md"
        if not path.exists():
            notes.append(f"care: no pre-show checklist {path}")
            continue
        try:
            load_checklist(db, rig, path.read_text(encoding="utf-8"), str(path))
            loaded.append(rig)
        except ShowopsError as exc:
            notes.append(f"care: checklist {path} not loaded: {exc}")

    # Equipment register (orchard lift; ratings invented, factors as their sources say).
    if "orchard-lift" in rigs:
        for name, kind, rating, factor, sees, share, people_, note in (
                ("rear bar disc brake", "brake", 2400, 2, "brake_n", 1, True, "maker's rated holding force"),
                ("rider lap strap", "strap", 10000, 7, "riders_n", 0.5, True, "webbing to EN 1492-1, 7:1"),
                ("pivot pins (each)", "axle-pin", 8000, 4, "pivot_n", 1, True, ""),
                ("casters (each)", "caster", 5000, 2, "caster_line_n", 0.5, True, "two per caster line"),
                ("counterweight cage bolts", "counterweight-fixing", 8000, 4, "counterweight_n", 0.5, False,
                 "two M10 bolts"),
                ("platform bracket bolts", "platform-fixing", 6000, 5, "platform_n", 0.25, True, "four bolts")):
            add_part(db, "orchard-lift", name, kind, carries_people=people_, rating_n=rating, design_factor=factor,
                     sees=sees, share=share, note=note, fitted_on=today - timedelta(days=200), today=today)
        notes.append("care: orchard-lift equipment register, 6 parts with their ratings")
    if "bough-lever" in rigs:
        add_part(db, "bough-lever", "brake band", "brake", carries_people=True, note="rating not yet on file",
                 fitted_on=today - timedelta(days=200), today=today)

    # Inspections: the orchard lift examined two months ago (a follow-up, remedied);
    # the bough lever's six-monthly examination falls due a week from today.
    if "orchard-lift" in rigs:
        first = record_inspection(db, "orchard-lift", today - timedelta(days=60), scope="thorough examination, whole rig",
                                  examiner=examiner.name, findings="brake pads 5 mm, strap and pins sound; two caster "
                                  "bolts below torque", objection_to_use=False,
                                  follow_up="re-torque the caster bolts to 45 N·m", today=today)
        acknowledge_remedy(db, first, today - timedelta(days=59), person=head,
                           remedy="four caster bolts re-torqued to 45 N·m, marked", today=today)
    if "bough-lever" in rigs:
        last = add_months(today + timedelta(days=7), -6)
        record_inspection(db, "bough-lever", last, scope="thorough examination, whole rig", examiner=examiner.name,
                          findings="band lining 3 mm, pivot bearing sound, welds without cracks",
                          objection_to_use=False, today=today)
        notes.append(f"care: bough-lever's thorough examination falls due {add_months(last, 6).isoformat()} "
                     "(between the fourth and fifth performances)")

    # Rehearsals: each rig with its first casts and crew; the understudy only on another cue.
    rehearsal_day = today - timedelta(days=10)
    for rig in sorted(rigs):
        team = [(name, role) for role, names in d.CREW_BY_RIG.get(rig, {}).items() for name in names]
        riders = sorted({n for cue in d.CUES if cue.rig == rig for n in cue.casts.get("first", ())})
        team += [(n, "rider") for n in riders]
        record_rehearsal(db, rig, rehearsal_day, team, note="full run of every cue, first casts", today=today)
    if "orchard-lift" in rigs and "11" in cues:
        crew = [(name, role) for role, names in d.CREW_BY_RIG["orchard-lift"].items() for name in names]
        record_rehearsal(db, "orchard-lift", today - timedelta(days=40), crew + [(d.UNDERSTUDY, "rider")],
                         cue_id=cues["11"], note="understudy walked through Harvest lowering", today=today)
        notes.append(f"care: {d.UNDERSTUDY} has not rehearsed cue 5 with its team (blocked until recorded)")

    # The past performance: pre-show check, briefing and area release all done.
    past = demo_ids.past_performance
    past_day = performance_day(db, past)[1]
    for rig in loaded:
        crew = d.CREW_BY_RIG.get(rig, {})
        items, _ = checklist(db, rig)
        for n, item in enumerate(items):
            who = (crew.get(item.role or "") or (head,))[0]
            text = item.expect or item.title
            if item.load_trial:
                text += ", with the test load of 80 kg" if rig == "orchard-lift" else ", with the test load of 60 kg"
            answer_preshow(db, past, rig, item.key, text, person=who, at=moment(past_day, f"17:{n + 10:02d}"))
    for rig in sorted(rigs):
        bid = give_briefing(db, past, rig, given_by=head, note="cues, signals, stop procedure",
                            at=moment(past_day, "18:30"))
        for member in rig_team(db, past, rig):
            if member.name != head:
                confirm_briefing(db, bid, member.person_id, device="demo", at=moment(past_day, "18:40"))
    release_area(db, past, person=head, note="stage clear, traps closed, gauze flown out",
                 at=moment(past_day, "19:20"))
    notes.append("care: past performance checked, briefed and released")

    # The next performance's orchard-lift briefing, with one absentee.
    if "orchard-lift" in rigs and len(demo_ids.performances) > 1:
        nxt = demo_ids.performances[1]
        # the absentee: a rider on exactly one orchard-lift cue that night, so one cue is blocked
        per_cue = [cue_team(db, nxt, cue_id) for cue_id in
                   (cid for num, cid in sorted(cues.items()) if cue_rig(db, cid) == "orchard-lift")]
        counts: dict[str, int] = {}
        for team in per_cue:
            for m in team:
                if m.role == "rider":
                    counts[m.name] = counts.get(m.name, 0) + 1
        absent = min((n for n, c in counts.items() if c == 1), default=None)
        bid = give_briefing(db, nxt, "orchard-lift", given_by=head, note="new gauze position for Windfall")
        for member in rig_team(db, nxt, "orchard-lift"):
            if member.name not in (head, absent):
                confirm_briefing(db, bid, member.person_id, device="demo")
        notes.append(f"care: {absent} missed the orchard-lift briefing for the next performance (their cue is "
                     "blocked until they confirm)")

    # A safety objection, raised and resolved.
    if "orchard-lift" in rigs:
        spotter = d.CREW_BY_RIG["orchard-lift"]["spotter"][0]
        oid = raise_objection(db, person=spotter, role="spotter", rig="orchard-lift", responsible=head,
                              reason="handrail clamp slips under a hard push",
                              at=moment(today - timedelta(days=5), "15:10"))
        resolve_objection(db, oid, person=head, at=moment(today - timedelta(days=4), "11:00"),
                          reason="clamp replaced by a bolted bracket; handrail held a 100 kg push")
        notes.append("care: one safety objection raised and resolved")
    return notes


def performance_readiness(db: sqlite_utils.Database, performance_id: int, *,
                          as_of: date | None = None) -> list[Reason]:
    """Return the readiness reasons of every rig cue of a performance, each once, blocked
    first: the lines a crew sheet's cover lists under "Rig readiness".

    :raises NotFound: for a performance that does not exist.
    """
    snap = _snapshot(db)
    if performance_id not in snap.perf_days:
        raise NotFound(f"performance: performance {performance_id} does not exist")
    out: list[Reason] = []
    for cue_id in snap.rig_cues_of.get(performance_id, ()):
        for reason in readiness_reasons(db, performance_id, cue_id, as_of=as_of):
            if reason not in out:
                out.append(reason)
    return sorted(out, key=lambda r: r.level != "blocked")
