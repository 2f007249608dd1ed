"""Queries of the audit: records, actions, attachments, notes, deviations, reports.

Every write checks who may make it (anyone signed in reports; only an admin or a
stage manager classifies, investigates, sets actions and closes), validates with
``showops.audit`` and is logged as a row of the hash-chained ``step_log`` through
``store.log.append_events``. Nothing here deletes.
"""

from __future__ import annotations

import csv
import hashlib
import json
import secrets
import sqlite3
import threading
from dataclasses import dataclass
from datetime import date, datetime, timezone
from pathlib import Path
from typing import Any, BinaryIO, Iterable

import sqlite_utils

from showops.audit import records as rec
from showops.audit.deviations import (COLUMNS, CUE_EVENTS, DETAIL_EVENTS, RULE_SET_VERSION, Deviation,
                                      ProcedureFacts, deviation_order, scan, scan_rows)
from showops.audit.report import Note, ShowReport, running_order, signoff_name
from showops.audit.risk import assess
from showops.audit.season import (ActionRef, CueRef, PerformanceRef, RecordRef, SeasonAudit, build_season,
                                  margins_from_loads)
from showops.errors import NotFound, PermissionDenied, Refused, ShowopsError, ValidationError
from showops.store.db import transaction

#: Roles that may classify, investigate, set and move actions, and close.
MANAGERS = ("admin", "stage_manager")
ROLES = ("admin", "stage_manager", "crew", "viewer")
ATTACHMENT_DIR = "attachments"

_RECORD_TEXT_FIELDS = ("narrative", "doing", "object_involved", "injury", "treatment", "immediate_action",
                       "immediate_causes", "underlying_causes", "root_causes", "contributing_factors",
                       "similar_events", "risk_review")
#: Fields the reporter may still amend on their own record before it is classified.
_REPORTER_FIELDS = ("narrative", "doing", "object_involved", "immediate_action", "people")
#: Investigation fields (HSE HSG245 causes; ISO 45001 §10.2 b) 3) and c)).
INVESTIGATION_FIELDS = ("immediate_causes", "underlying_causes", "root_causes", "contributing_factors",
                        "similar_events", "risk_review")


@dataclass(frozen=True)
class Actor:
    """Who is acting: a signed-in user (web) or the person at the console (CLI)."""

    name: str
    role: str
    user_id: int | None = None
    person_id: int | None = None


def _now(now: datetime | None = None) -> datetime:
    return (now or datetime.now(timezone.utc)).astimezone(timezone.utc)


def _iso(t: datetime) -> str:
    return t.astimezone(timezone.utc).isoformat(timespec="seconds")


def _require_manager(actor: Actor, what: str) -> None:
    if actor.role not in MANAGERS:
        raise PermissionDenied(f"only an admin or a stage manager may {what} (you are signed in as {actor.role})")


def _require_signed_in(actor: Actor | None) -> None:
    if actor is None or actor.role not in ROLES or not actor.name:
        raise PermissionDenied("sign in to report")


def _log(db: sqlite_utils.Database, event: str, actor: Actor, record: dict, detail: dict, now: datetime) -> None:
    """Append one audit event to the hash-chained log."""
    from showops.store.log import append_events

    append_events(db, [{
        "event": event, "at_utc": _iso(now), "person_id": actor.person_id, "person_name": actor.name,
        "role": actor.role, "device": "audit", "performance_id": record.get("performance_id"),
        "cue_id": record.get("cue_id"), "step_key": record.get("step_key"),
        "detail": json.loads(json.dumps({"record": record.get("id"), **detail}, default=str)),
    }])


# -- reading ------------------------------------------------------------------------

def _record_row(db, record_id: int) -> dict:
    row = db.execute("SELECT * FROM audit_record WHERE id = ?", [record_id]).fetchone()
    if row is None:
        raise NotFound(f"record {record_id} does not exist")
    cols = [d[0] for d in db.execute("SELECT * FROM audit_record LIMIT 0").description]
    return dict(zip(cols, row))


def get_record(db: sqlite_utils.Database, record_id: int) -> dict:
    """Return a record with its ``people`` (list), ``actions`` and ``attachments``.

    :raises NotFound: for an unknown id.
    """
    out = _record_row(db, int(record_id))
    out["people"] = json.loads(out["people"] or "[]")
    out["actions"] = list(db.query("SELECT * FROM audit_action WHERE record_id = ? ORDER BY id", [out["id"]]))
    out["attachments"] = list(db.query("SELECT id, filename, media_type, size_bytes, added_at, added_by "
                                       "FROM audit_attachment WHERE record_id = ? ORDER BY id", [out["id"]]))
    return out


def list_records(db: sqlite_utils.Database, *, performance_id: int | None = None,
                 date_from: date | None = None, date_to: date | None = None) -> list[dict]:
    """Return records (newest first), for one performance or occurred within the dates."""
    sql, args = "SELECT * FROM audit_record WHERE 1 = 1", []
    if performance_id is not None:
        sql += " AND performance_id = ?"
        args.append(performance_id)
    if date_from is not None:
        sql += " AND substr(occurred_at, 1, 10) >= ?"
        args.append(date_from.isoformat())
    if date_to is not None:
        sql += " AND substr(occurred_at, 1, 10) <= ?"
        args.append(date_to.isoformat())
    return list(db.query(sql + " ORDER BY occurred_at DESC, id DESC", args))


def _record_ref(row: dict) -> RecordRef:
    return RecordRef(row["id"], row["kind"], row["performance_id"], row["cue_id"], row["step_key"],
                     row["occurred_at"], row["risk_cell"], row["status"], row["narrative"][:80])


# -- writing ------------------------------------------------------------------------

def _log_row(db, step_log_id: int) -> dict:
    cur = db.execute("SELECT * FROM step_log WHERE id = ?", [step_log_id])
    row = cur.fetchone()
    if row is None:
        raise ValidationError("step_log_id", f"log row {step_log_id} does not exist; pick a row from the log")
    return dict(zip([d[0] for d in cur.description], row))


def _performance_exists(db, performance_id: int) -> bool:
    return db.execute("SELECT 1 FROM performance WHERE id = ?", [performance_id]).fetchone() is not None


def report(db: sqlite_utils.Database, actor: Actor, data: dict, *, step_log_id: int | None = None,
           performance_id: int | None = None, deviation_key: str | None = None,
           now: datetime | None = None) -> tuple[int, tuple[str, ...]]:
    """Store a new report (anyone signed in); return its id and any warnings.

    :param step_log_id: the log row it is about (picked from the log): the cue and
        step come from that row, so the record points at real rows.
    :param performance_id: the performance; must match the row's when both are given.
    :raises PermissionDenied: when nobody is signed in.
    :raises ValidationError: for bad fields, an unknown row or performance, or a row
        of another performance. Nothing is stored then.
    :raises Refused: when the deviation was already promoted.
    """
    _require_signed_in(actor)
    now = _now(now)
    value = rec.validate_report(data, now=now)
    cue_id = step_key = None
    if step_log_id is not None:
        row = _log_row(db, int(step_log_id))
        if performance_id is not None and row["performance_id"] != int(performance_id):
            raise ValidationError("step_log_id", f"log row {step_log_id} belongs to performance "
                                  f"{row['performance_id']}, not {performance_id}; pick a row of this performance")
        performance_id, cue_id, step_key = row["performance_id"], row["cue_id"], row["step_key"]
    if performance_id is not None and not _performance_exists(db, int(performance_id)):
        raise ValidationError("performance_id", f"performance {performance_id} does not exist")
    if deviation_key and db.execute("SELECT id FROM audit_record WHERE deviation_key = ?",
                                    [deviation_key]).fetchone():
        raise Refused(f"deviation {deviation_key} is already a record")
    people = [{"name": p.name, "role": p.role} for p in value.people]
    stamp = _iso(now)
    row = {"kind": value.kind, "status": "reported", "occurred_at": _iso(value.occurred_at), "reported_at": stamp,
           "reported_by": actor.name, "reporter_role": actor.role, "reporter_user_id": actor.user_id,
           "narrative": value.narrative, "doing": value.doing, "object_involved": value.object_involved,
           "people": json.dumps(people), "injured": int(value.injured), "injury": value.injury,
           "treatment": value.treatment, "immediate_action": value.immediate_action,
           "performance_id": performance_id, "cue_id": cue_id, "step_key": step_key, "step_log_id": step_log_id,
           "deviation_key": deviation_key,
           "retain_until": f"{now.year + rec.RETENTION_YEARS + 1}-01-01", "changed_at": stamp}
    with transaction(db) as conn:
        cols = ", ".join(row)
        cur = conn.execute(f"INSERT INTO audit_record ({cols}) VALUES ({', '.join('?' * len(row))})",
                           list(row.values()))
        row["id"] = record_id = cur.lastrowid
        _log(db, "incident_reported", actor, row, {"kind": value.kind, "step_log_id": step_log_id,
                                                   "deviation": deviation_key}, now)
    return record_id, value.warnings


def promote(db: sqlite_utils.Database, actor: Actor, deviation: Deviation, *, now: datetime | None = None,
            narrative: str | None = None) -> int:
    """Make a deviation a near miss in one action; return the record's id.

    The record points at the deviation's last row, carries its text as the narrative
    and its key, so the same deviation is never promoted twice.

    :raises Refused: when it was promoted already.
    """
    data = {"kind": "near_miss", "occurred_at": deviation.at_utc,
            "narrative": narrative or f"{deviation.title}: {deviation.text} (found in the log, rows "
                                      f"{', '.join(map(str, deviation.row_ids))})"}
    # the last row is the one that shows the deviation (the late confirmation, the
    # self-check, the brake going back on); the first is where it began
    record_id, _ = report(db, actor, data, step_log_id=deviation.row_ids[-1] if deviation.row_ids else None,
                          performance_id=deviation.performance_id, deviation_key=deviation.key, now=now)
    return record_id


def _update(db, actor: Actor, record: dict, changes: dict, event: str, now: datetime, extra: dict | None = None):
    """Apply changes to a record and log each field's old and new value."""
    diff = {k: [record.get(k), v] for k, v in changes.items() if record.get(k) != v}
    if not diff and not extra:
        return
    stamp = _iso(now)
    with transaction(db) as conn:
        sets = ", ".join(f"{k} = ?" for k in list(changes) + ["changed_at"])
        conn.execute(f"UPDATE audit_record SET {sets} WHERE id = ?", list(changes.values()) + [stamp, record["id"]])
        _log(db, event, actor, record, {"changes": diff, **(extra or {})}, now)


def amend(db: sqlite_utils.Database, actor: Actor, record_id: int, changes: dict, *,
          now: datetime | None = None) -> None:
    """Amend a record's text fields (never delete). Logged with old and new values.

    The reporter may amend what they wrote until the record is classified; an admin
    or a stage manager may amend any text field until it is closed.

    :raises PermissionDenied: for anyone else. :raises Refused: on a closed record.
    :raises ValidationError: for an unknown field or an over-long value.
    """
    _require_signed_in(actor)
    now = _now(now)
    record = _record_row(db, int(record_id))
    if record["status"] == "closed":
        raise Refused(f"record {record_id} is closed; open a new record that refers to it")
    manager = actor.role in MANAGERS
    own = record["reported_by"] == actor.name and record["status"] == "reported"
    allowed = set(_RECORD_TEXT_FIELDS + ("people",)) if manager else set(_REPORTER_FIELDS) if own else set()
    if not allowed:
        raise PermissionDenied(f"only the reporter (before classification), an admin or a stage manager may "
                               f"amend record {record_id}")
    clean = {}
    for key, value in changes.items():
        if key not in allowed:
            raise ValidationError(key, f"cannot be amended here (allowed: {', '.join(sorted(allowed))})")
        if key == "people":
            clean[key] = json.dumps([{"name": p.name, "role": p.role} for p in rec.parse_people(value)])
        elif key == "treatment":
            if value not in rec.TREATMENTS:
                raise ValidationError(key, f"{value!r} is not a treatment (give one of {', '.join(rec.TREATMENTS)})")
            clean[key] = value
        else:
            text = str(value or "").strip()
            if key == "narrative" and not text:
                raise ValidationError(key, "is required")
            if len(text) > rec.NARRATIVE_MAX:
                raise ValidationError(key, f"is {len(text)} characters; keep it under {rec.NARRATIVE_MAX}")
            clean[key] = text
    _update(db, actor, record, clean, "incident_amended", now)


def classify(db: sqlite_utils.Database, actor: Actor, record_id: int, *, kind: str, likelihood, severity_actual,
             severity_potential, now: datetime | None = None) -> dict:
    """Classify a record and place it on the risk matrix (admin or stage manager).

    :returns: the assessment's ``to_dict()`` (cell, region, edition).
    :raises PermissionDenied, ValidationError, Refused: see :func:`amend`.
    """
    _require_manager(actor, "classify a record")
    now = _now(now)
    record = _record_row(db, int(record_id))
    if record["status"] == "closed":
        raise Refused(f"record {record_id} is closed")
    if kind not in rec.KINDS:
        raise ValidationError("kind", f"{kind!r} is not a kind (give one of {', '.join(rec.KINDS)})")
    if record["injured"] and kind != "incident":
        raise ValidationError("kind", "someone was injured, so this is an incident")
    a = assess(likelihood, severity_actual, severity_potential, kind=kind)
    _update(db, actor, record, {"kind": kind, "likelihood": a.likelihood, "severity_actual": a.severity_actual,
                                "severity_potential": a.severity_potential, "risk_cell": a.cell,
                                "risk_region": a.region, "matrix_edition": a.edition, "status": "classified",
                                "classified_by": actor.name, "classified_at": _iso(now)},
            "incident_amended", now, {"step": "classify"})
    return a.to_dict()


def investigate(db: sqlite_utils.Database, actor: Actor, record_id: int, findings: dict, *,
                now: datetime | None = None) -> None:
    """Record the investigation (HSG245 causes; ISO 45001 §10.2 b-c): admin or stage manager."""
    _require_manager(actor, "record an investigation")
    unknown = set(findings) - set(INVESTIGATION_FIELDS)
    if unknown:
        raise ValidationError(sorted(unknown)[0], f"is not an investigation field "
                              f"(give {', '.join(INVESTIGATION_FIELDS)})")
    amend(db, actor, record_id, findings, now=now)


def add_action(db: sqlite_utils.Database, actor: Actor, record_id: int, data: dict, *,
               now: datetime | None = None) -> int:
    """Add a corrective action with owner, due date and control level (admin or stage manager).

    :raises ValidationError: e.g. a due date before the occurrence; nothing is stored.
    """
    _require_manager(actor, "set a corrective action")
    now = _now(now)
    record = _record_row(db, int(record_id))
    if record["status"] == "closed":
        raise Refused(f"record {record_id} is closed")
    value = rec.validate_action(data, occurred_at=datetime.fromisoformat(record["occurred_at"]))
    with transaction(db) as conn:
        action_id = conn.execute(
            "INSERT INTO audit_action (record_id, description, control, owner, due, state, created_at, created_by)"
            " VALUES (?, ?, ?, ?, ?, 'open', ?, ?)",
            [record["id"], value.description, value.control, value.owner, value.due.isoformat(), _iso(now),
             actor.name]).lastrowid
        _log(db, "incident_amended", actor, record, {"step": "action", "action": action_id,
                                                     "description": value.description, "owner": value.owner,
                                                     "due": value.due.isoformat(), "control": value.control}, now)
    return action_id


def move_action(db: sqlite_utils.Database, actor: Actor, action_id: int, state: str, *, note: str = "",
                now: datetime | None = None) -> None:
    """Move an action open -> done -> verified (or done -> open when the check fails)."""
    _require_manager(actor, "change a corrective action")
    now = _now(now)
    row = db.execute("SELECT record_id, state FROM audit_action WHERE id = ?", [action_id]).fetchone()
    if row is None:
        raise NotFound(f"action {action_id} does not exist")
    record = _record_row(db, row[0])
    rec.check_action_move(row[1], state)
    stamp = _iso(now)
    sets = {"state": state, "note": note.strip()[:rec.SHORT_MAX]}
    if state == "done":
        sets.update(done_at=stamp, done_by=actor.name)
    elif state == "verified":
        sets.update(verified_at=stamp, verified_by=actor.name)
    with transaction(db) as conn:
        conn.execute(f"UPDATE audit_action SET {', '.join(f'{k} = ?' for k in sets)} WHERE id = ?",
                     list(sets.values()) + [action_id])
        _log(db, "incident_amended", actor, record, {"step": "action_state", "action": action_id,
                                                     "from": row[1], "to": state, "note": sets["note"]}, now)


def close(db: sqlite_utils.Database, actor: Actor, record_id: int, *, now: datetime | None = None) -> None:
    """Close a record: it must be classified and every action verified (ISO 45001 §10.2 f).

    :raises Refused: naming what is still missing.
    """
    _require_manager(actor, "close a record")
    now = _now(now)
    record = _record_row(db, int(record_id))
    if record["status"] == "closed":
        raise Refused(f"record {record_id} is already closed")
    if record["status"] != "classified":
        raise Refused(f"record {record_id} is not classified yet; classify it on the risk matrix first")
    pending = [r[0] for r in db.execute("SELECT id FROM audit_action WHERE record_id = ? AND state != 'verified'",
                                        [record["id"]])]
    if pending:
        raise Refused(f"record {record_id} has actions not yet verified: {', '.join(map(str, pending))}")
    _update(db, actor, record, {"status": "closed", "closed_by": actor.name, "closed_at": _iso(now)},
            "incident_amended", now, {"step": "close"})


def add_attachment(db: sqlite_utils.Database, actor: Actor, instance: str | Path, record_id: int, filename: str,
                   stream: BinaryIO, declared_type: str | None = None, *, now: datetime | None = None) -> int:
    """Check and store a photo or file for a record in ``instance/attachments/``.

    The bytes are read in chunks and refused as soon as they pass the limit, so a
    200 MB upload is never held whole; the type is sniffed from the bytes.

    :raises ValidationError: for a wrong type or size; nothing is stored.
    """
    _require_signed_in(actor)
    now = _now(now)
    record = _record_row(db, int(record_id))
    folder = Path(instance) / ATTACHMENT_DIR
    folder.mkdir(parents=True, exist_ok=True)
    head = stream.read(64)
    rec.check_attachment(filename, head, max(len(head), 1), declared_type)  # type before reading the rest
    stored_as = f"{record['id']}-{secrets.token_hex(8)}.part"
    tmp = folder / stored_as
    digest = hashlib.sha256(head)
    size = len(head)
    try:
        with open(tmp, "wb") as fh:
            fh.write(head)
            while chunk := stream.read(1 << 20):
                size += len(chunk)
                if size > rec.ATTACHMENT_MAX_BYTES:
                    rec.check_attachment(filename, head, size, declared_type)
                digest.update(chunk)
                fh.write(chunk)
        media_type = rec.check_attachment(filename, head, size, declared_type)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    final = tmp.with_suffix(rec.ATTACHMENT_TYPES[media_type][0][0])
    tmp.rename(final)
    with transaction(db) as conn:
        att_id = conn.execute(
            "INSERT INTO audit_attachment (record_id, filename, media_type, size_bytes, sha256, stored_as, "
            "added_at, added_by) VALUES (?, ?, ?, ?, ?, ?, ?, ?)",
            [record["id"], Path(filename).name[:200], media_type, size, digest.hexdigest(), final.name, _iso(now),
             actor.name]).lastrowid
        _log(db, "incident_amended", actor, record, {"step": "attachment", "attachment": att_id,
                                                     "sha256": digest.hexdigest(), "size": size}, now)
    return att_id


def attachment_file(db: sqlite_utils.Database, instance: str | Path, attachment_id: int) -> tuple[Path, str, str]:
    """Return (path, media type, original name) of an attachment (serve only to signed-in users).

    :raises NotFound: for an unknown id or a missing file.
    """
    row = db.execute("SELECT stored_as, media_type, filename FROM audit_attachment WHERE id = ?",
                     [attachment_id]).fetchone()
    if row is None:
        raise NotFound(f"attachment {attachment_id} does not exist")
    path = Path(instance) / ATTACHMENT_DIR / row[0]
    if not path.is_file():
        raise NotFound(f"attachment {attachment_id}'s file is missing from the instance folder")
    return path, row[1], row[2]


def add_note(db: sqlite_utils.Database, actor: Actor, performance_id: int, text: str, *,
             now: datetime | None = None) -> int:
    """Add a stage manager's note to a night's show report (admin or stage manager)."""
    _require_manager(actor, "write the show report's notes")
    now = _now(now)
    text = (text or "").strip()
    if not text:
        raise ValidationError("note", "is empty")
    if len(text) > rec.SHORT_MAX:
        raise ValidationError("note", f"is {len(text)} characters; keep it under {rec.SHORT_MAX}")
    if not _performance_exists(db, int(performance_id)):
        raise NotFound(f"performance {performance_id} does not exist")
    with transaction(db) as conn:
        note_id = conn.execute("INSERT INTO audit_note (performance_id, written_at, written_by, text) "
                               "VALUES (?, ?, ?, ?)", [performance_id, _iso(now), actor.name, text]).lastrowid
        _log(db, "show_note_added", actor, {"performance_id": int(performance_id), "id": None},
             {"note": note_id}, now)
    return note_id


# -- deviations ---------------------------------------------------------------------

_LOG_COLS = ("id", "at_utc", "device_at", "event", "person_id", "person_name", "role", "performance_id", "cue_id",
             "step_key", "step_number", "procedure_version", "detail", "hash")


def log_rows(db: sqlite_utils.Database, performance_ids: Iterable[int] | None = None) -> list[dict]:
    """Return the show log's rows (as dicts, ``id`` order), for some performances or all."""
    sql = f"SELECT {', '.join(_LOG_COLS)} FROM step_log WHERE performance_id IS NOT NULL"
    args: list = []
    if performance_ids is not None:
        ids = sorted(set(int(i) for i in performance_ids))
        if not ids:
            return []
        sql += f" AND performance_id IN ({', '.join('?' * len(ids))})"
        args = ids
    cur = db.execute(sql + " ORDER BY id", args)
    return [dict(zip(_LOG_COLS, row)) for row in cur]


def procedure_facts(db: sqlite_utils.Database, versions: Iterable[str] | None = None) -> dict[str, ProcedureFacts]:
    """Parse stored procedure versions into rule facts: those named (the log's), or every
    one on record when ``versions`` is None. A version's text never changes (it is its
    SHA-256), so each is parsed once per process."""
    from showops.store.show import read_procedure

    if versions is None:
        wanted = [v for (v,) in db.execute("SELECT DISTINCT sha256 FROM procedure_version")]
    else:
        wanted = sorted({v for v in versions if v})
    out = {}
    for version in wanted:
        facts = _FACTS.get(version)
        if facts is None:
            row = db.execute("SELECT procedure_slug, text FROM procedure_version WHERE sha256 = ?",
                             [version]).fetchone()
            if row is None:
                continue
            facts = _FACTS[version] = ProcedureFacts.from_procedure(read_procedure(row[1], f"procedures/{row[0]}.md"))
        out[version] = facts
    return out


#: procedure version (SHA-256 of its text) -> its facts, parsed once per process
_FACTS: dict[str, ProcedureFacts] = {}


def _finished(db, now: datetime) -> set[int]:
    """Performances whose night is over: signed off, or started more than 12 hours ago."""
    cutoff = (now.astimezone(timezone.utc).replace(tzinfo=None)).isoformat(timespec="minutes")
    rows = db.execute("SELECT id, starts_at FROM performance").fetchall()
    done = set(r[0] for r in db.execute("SELECT DISTINCT performance_id FROM step_log WHERE event = 'signoff'"))
    from datetime import timedelta
    for pid, starts in rows:
        if (datetime.fromisoformat(starts[:16]) + timedelta(hours=12)).isoformat(timespec="minutes") <= cutoff:
            done.add(pid)
    return done


def scan_version() -> str:
    """The version a stored scan is made under: the deviation rules'
    (:data:`~showops.audit.deviations.RULE_SET_VERSION`) and the procedure reader's, which
    gives the rules each step's key, ``hold`` and ``sets``. A change to either changes it."""
    global _SCAN_VERSION
    if _SCAN_VERSION is None:
        import inspect

        from showops.procedure import model, parse

        digest = hashlib.sha256(RULE_SET_VERSION.encode())
        for module in (parse, model):
            try:
                digest.update(inspect.getsource(module).encode())
            except (OSError, TypeError):  # no source beside the code
                digest.update(repr(sorted(vars(module))).encode())
        _SCAN_VERSION = f"{RULE_SET_VERSION}-{digest.hexdigest()[:12]}"
    return _SCAN_VERSION


_SCAN_VERSION: str | None = None

#: The rows as the rules take them (``deviations.COLUMNS``); a ``detail`` is read only
#: for the events whose detail the rules use.
_SCAN_SELECT = "SELECT {} FROM step_log".format(", ".join(
    c if c != "detail" else "CASE WHEN event IN ({}) THEN detail END".format(
        ", ".join(f"'{e}'" for e in sorted(DETAIL_EVENTS))) for c in COLUMNS))

#: (database file, performances) -> (stamp, deviations): this process's last answer, reused
#: while no log row of those performances and no procedure version was added, the same
#: nights are over and the scan's version is the same.
_SCAN_CACHE: dict[tuple, tuple] = {}
_SCAN_CACHE_MAX = 16
_SCAN_LOCK = threading.Lock()


def forget_scans_in_memory() -> None:
    """Drop this process's remembered scans (the stored ones stay): what a fresh process sees."""
    _SCAN_CACHE.clear()


def _db_file(db) -> str:
    row = db.execute("PRAGMA database_list").fetchone()
    return row[2] if row else ""


def _touched(db, after: int, upto: int, ids: tuple[int, ...] | None) -> bool:
    """True when a log row after ``after`` (up to ``upto``) belongs to one of the
    performances (any, when ``ids`` is None); reads only those rows."""
    found = {pid for (pid,) in db.execute("SELECT DISTINCT performance_id FROM step_log WHERE id > ? AND id <= ? "
                                          "AND performance_id IS NOT NULL", [after, upto])}
    return bool(found if ids is None else found.intersection(ids))


def _last_rows(db, ids: tuple[int, ...] | None, log_top: int) -> dict[int, int]:
    """Performance -> the id of its last log row up to ``log_top`` (performances with rows
    only): one GROUP BY over the ``step_log_cue`` index."""
    sql = "SELECT performance_id, max(id) FROM step_log WHERE id <= ? AND performance_id "
    if ids is None:
        return dict(db.execute(sql + "IS NOT NULL GROUP BY performance_id", [log_top]))
    if not ids:
        return {}
    return dict(db.execute(sql + f"IN ({', '.join('?' * len(ids))}) GROUP BY performance_id", [log_top, *ids]))


def _stored_scans(db, ids) -> dict[int, tuple]:
    """Performance -> (last_row_id, scan_version, finished, procedures_seen, deviations JSON)."""
    out = {}
    ids = list(ids)
    for i in range(0, len(ids), 500):
        part = ids[i:i + 500]
        for pid, *rest in db.execute("SELECT performance_id, last_row_id, scan_version, finished, procedures_seen, "
                                     f"deviations FROM audit_scan WHERE performance_id IN "
                                     f"({', '.join('?' * len(part))})", part):
            out[pid] = tuple(rest)
    return out


def _deviations_from_json(pid: int, text: str) -> list[Deviation]:
    return [Deviation(rule, pid, cue_id, step_key, tuple(row_ids), at_utc, note, detail)
            for rule, cue_id, step_key, row_ids, at_utc, note, detail in json.loads(text)]


def _deviations_to_json(devs: Iterable[Deviation]) -> str:
    return json.dumps([[d.rule, d.cue_id, d.step_key, list(d.row_ids), d.at_utc, d.text, d.detail] for d in devs],
                      ensure_ascii=False, separators=(",", ":"))


def _store_scans(db, entries: list[tuple]) -> None:
    """Keep scans for next time. A scan that cannot be kept (the database is busy past
    its timeout, or read-only) is still right, only not kept: the error is not raised."""
    if not entries:
        return
    conn = db.conn
    conn.execute("SAVEPOINT audit_scan")
    try:
        conn.executemany("INSERT OR REPLACE INTO audit_scan (performance_id, last_row_id, scan_version, finished, "
                         "procedures_seen, deviations, scanned_at) VALUES (?, ?, ?, ?, ?, ?, ?)", entries)
    except sqlite3.OperationalError:
        conn.execute("ROLLBACK TO audit_scan")
    conn.execute("RELEASE audit_scan")


class _FactsLookedUp(dict):
    """Procedure facts that remember the versions asked for and not on record."""

    def __init__(self, facts: dict):
        super().__init__(facts)
        self.missing: set[str] = set()

    def get(self, version, default=None):
        found = super().get(version, default)
        if found is None and version:
            self.missing.add(version)
        return found


def _rescan(db, stale: list[int], last: dict[int, int], log_top: int, finished: frozenset, version: str,
            procedures_top: int) -> dict[int, list[Deviation]]:
    """Scan the log rows (up to ``log_top``) of the ``stale`` performances, store each
    one's scan, and return performance -> deviations.

    :param last: performance -> its last row id up to ``log_top`` (at least the stale ones).

    When they are half the performances or more, the whole log is read in one pass (in
    ``id`` order, no sort) and every performance in it is scanned and stored.
    """
    performances = db.execute("SELECT count(*) FROM performance").fetchone()[0]
    if len(stale) * 2 >= performances:
        cur = db.execute(_SCAN_SELECT + " WHERE performance_id IS NOT NULL AND id <= ? ORDER BY id", [log_top])
        if set(last) != set(stale):
            last = _last_rows(db, None, log_top)
        scanned = list(last)
    else:
        cur = db.execute(_SCAN_SELECT + f" WHERE performance_id IN ({', '.join('?' * len(stale))}) AND id <= ? "
                         "ORDER BY id", [*stale, log_top])
        scanned = stale
    facts = _FactsLookedUp(procedure_facts(db))
    found: dict[int, list[Deviation]] = {pid: [] for pid in scanned}
    for d in scan_rows(cur, facts, finished=finished):
        found[d.performance_id].append(d)
    # a scan that met a procedure version not on record holds only until one is added
    seen = procedures_top if facts.missing else None
    stamp = _iso(_now())
    _store_scans(db, [(pid, last[pid], version, int(pid in finished), seen, _deviations_to_json(found[pid]), stamp)
                      for pid in scanned])
    return found


def find_deviations(db: sqlite_utils.Database, performance_ids: Iterable[int] | None = None, *,
                    now: datetime | None = None, rows: list[dict] | None = None) -> list[Deviation]:
    """Scan the log (or the given performances' part of it) with every rule.

    Each performance's scan is stored (``audit_scan``) with the id of its last log row,
    the scan's version (:func:`scan_version`) and whether its night was over; a stored
    scan is used while all of these are unchanged, so only performances with new rows
    (or whose night has just ended) are scanned again, and a fresh process reads the
    rest. Every rule keeps its state per performance, so the merged result is the one a
    scan of the whole log gives. The last answer is also kept in memory until a log row
    of those performances or a procedure version is added (a sign-in keeps it).

    :param rows: scan these rows (mappings) instead, storing nothing.
    """
    finished = frozenset(_finished(db, _now(now)))
    if rows is not None:
        facts = procedure_facts(db, {r["procedure_version"] for r in rows})
        return scan(rows, facts, finished=finished)
    ids = None if performance_ids is None else tuple(sorted(set(int(i) for i in performance_ids)))
    version = scan_version()
    log_top, procedures_top = db.execute("SELECT (SELECT coalesce(max(id), 0) FROM step_log), "
                                         "(SELECT coalesce(max(id), 0) FROM procedure_version)").fetchone()
    key = (_db_file(db), ids)
    stamp = (log_top, procedures_top, version, finished if ids is None else finished.intersection(ids))
    hit = _SCAN_CACHE.get(key)
    if hit is not None and hit[0] == stamp:
        return list(hit[1])
    if hit is not None and hit[0][1:] == stamp[1:] and hit[0][0] < log_top \
            and not _touched(db, hit[0][0], log_top, ids):
        _SCAN_CACHE[key] = (stamp, hit[1])   # the new rows are sign-ins or other nights'
        return list(hit[1])
    # One scan at a time in this process: a page opened while the warm-up scans waits for
    # its stored result instead of scanning the same rows beside it.
    with _SCAN_LOCK:
        hit = _SCAN_CACHE.get(key)
        if hit is not None and hit[0] == stamp:
            return list(hit[1])
        last = _last_rows(db, ids, log_top)
        stored = _stored_scans(db, last)
        found: dict[int, list[Deviation]] = {}
        stale = []
        for pid, last_id in last.items():
            row = stored.get(pid)
            if row is not None and row[0] == last_id and row[1] == version and row[2] == (pid in finished) \
                    and (row[3] is None or row[3] == procedures_top):
                found[pid] = _deviations_from_json(pid, row[4])
            else:
                stale.append(pid)
        if stale:
            found.update(_rescan(db, stale, last, log_top, finished, version, procedures_top))
        out = [d for pid in last for d in found.get(pid, ())]
        out.sort(key=deviation_order)
        if len(_SCAN_CACHE) >= _SCAN_CACHE_MAX:
            _SCAN_CACHE.pop(next(iter(_SCAN_CACHE)))
        _SCAN_CACHE[key] = (stamp, tuple(out))
    return out


def warm_audit(instance: str | Path) -> int | None:
    """Bring every performance's stored deviation scan up to date, and work out the load
    margins of every performance into this process's memory, on a connection of its own.

    ``showops serve`` runs it once in the background as it starts, so that the first
    audit page after a restart, an upgrade or a rule change reads stored scans and
    remembered margins (and finds the rig solver's modules loaded).

    :returns: the number of deviations, or None when the database could not be opened,
        read or written (nothing is lost: the first audit page does the work instead).
    """
    from showops.store.db import open_db

    try:
        db = open_db(instance, create=False)
    except (ShowopsError, sqlite3.Error, OSError):
        return None
    try:
        found = len(find_deviations(db))
        every = [pid for (pid,) in db.execute("SELECT id FROM performance")]
        find_deviations(db, every)      # the season pages' default period: every performance
        _margins(db, every)
        return found
    except (ShowopsError, sqlite3.Error, OSError):
        return None
    finally:
        db.conn.close()


def find_deviation(db: sqlite_utils.Database, key: str, *, now: datetime | None = None) -> Deviation:
    """Return the deviation with this key (``rule:row`` or ``signoff_missing:pN``).

    :raises NotFound: when the scan no longer finds it.
    """
    pid = None
    tail = key.split(":", 1)[-1]
    if tail.startswith("p") and tail[1:].isdigit():
        pid = int(tail[1:])
    elif tail.isdigit():
        row = db.execute("SELECT performance_id FROM step_log WHERE id = ?", [int(tail)]).fetchone()
        pid = row[0] if row else None
    if pid is not None:
        for d in find_deviations(db, [pid], now=now):
            if d.key == key:
                return d
    raise NotFound(f"deviation {key!r} is not found in the log (keys look like hold:123; see `showops audit "
                   "deviations`)")


# -- reports ------------------------------------------------------------------------

def _cues_of_performance(db, performance_id: int) -> list[CueRef]:
    rows = db.execute("SELECT c.id, c.number, c.name, c.rig_slug FROM cue c JOIN performance p "
                      "ON p.production_id = c.production_id WHERE p.id = ? ORDER BY c.position, c.id",
                      [performance_id]).fetchall()
    return [CueRef(*r) for r in rows]


def show_report(db: sqlite_utils.Database, performance_ref: Any, *, now: datetime | None = None) -> ShowReport:
    """Build the night's show report from the log.

    :raises NotFound: for an unknown performance.
    :raises Refused: for a performance that never ran (no cue in the log).
    """
    from showops.store.show import find_performance

    pid = find_performance(db, performance_ref)
    rows = log_rows(db, [pid])
    if not any(r["cue_id"] is not None for r in rows):
        raise Refused(f"performance {pid} never ran: the log holds no cue for it, so there is no show report "
                      "to make (the crew sheet is `showops sheet`)")
    head = db.execute("SELECT p.starts_at, pr.name, pr.company, v.name, v.town, s.name FROM performance p "
                      "JOIN production pr ON pr.id = p.production_id JOIN venue v ON v.id = p.venue_id "
                      "LEFT JOIN person s ON s.id = p.stage_manager_id WHERE p.id = ?", [pid]).fetchone()
    starts, production, company, venue, town, sm = head
    cues = _cues_of_performance(db, pid)
    runs, info = running_order(cues, rows)
    devs = find_deviations(db, [pid], now=now, rows=rows)
    recs = [_record_ref(r) for r in list_records(db, performance_id=pid)][::-1]
    notes = [Note(*r) for r in db.execute("SELECT written_at, written_by, text FROM audit_note "
                                          "WHERE performance_id = ? ORDER BY id", [pid])]
    sign = info["signoff"]
    last_cue_row = max((r["id"] for r in rows if r["cue_id"] is not None and r["event"] in CUE_EVENTS), default=0)
    signed = sign is not None and sign["id"] > last_cue_row
    return ShowReport(pid, production, company, venue + (f", {town}" if town else ""),
                      starts, sm,
                      runs, devs, recs, notes, signoff_name(sign) if signed else None,
                      sign["at_utc"] if signed else None, info["first_row"], info["last_row"], info["last_hash"])


#: Rig solves for the load margins, shared across calls: a solve depends only on the rig
#: version and the riders' masses (``RigSolver`` keys it so), so it never goes stale; with
#: the memo, the same solve gives the same dict on every call.
_MARGIN_SOLVER = None
_MARGIN_MEMO: dict = {}
#: (performance, cue number, name, rig, id of the solve's dict) of every rig cue's night
#: -> the margins: they are a function of exactly that, so an equal key is the same answer.
_MARGIN_CACHE: dict[tuple, list] = {}
_MARGIN_CACHE_MAX = 4


def _margins(db, ids: list[int]):
    """Each rig cue's limit usage per night: the loads of the night plans
    (``store.show.night_loads``), solved once per rig version and riders' masses, and
    collected again only when a night's riders, masses, cues or rig versions changed."""
    global _MARGIN_SOLVER
    from showops.show.verdicts import RigSolver
    from showops.store.show import night_loads

    if _MARGIN_SOLVER is None:
        _MARGIN_SOLVER = RigSolver()
    loads = night_loads(db, ids, solver=_MARGIN_SOLVER, memo=_MARGIN_MEMO)
    key = tuple((pid, number, name, rig, id(load)) for pid, number, name, rig, load in loads)
    found = _MARGIN_CACHE.get(key)
    if found is None:
        found = margins_from_loads((pid, f"{number} {name}".strip(), rig, load)
                                   for pid, number, name, rig, load in loads)
        if len(_MARGIN_CACHE) >= _MARGIN_CACHE_MAX:
            _MARGIN_CACHE.pop(next(iter(_MARGIN_CACHE)))
        _MARGIN_CACHE[key] = found
    return list(found)


def season_audit(db: sqlite_utils.Database, date_from: date, date_to: date, *, today: date | None = None,
                 now: datetime | None = None, with_margins: bool = True) -> SeasonAudit:
    """Count the season from the log and the records.

    :raises ValidationError: when the period ends before it starts.
    """
    if date_to < date_from:
        raise ValidationError("--to", f"{date_to} is before --from {date_from}")
    now = _now(now)
    today = today or now.date()
    perf_rows = db.execute("SELECT id, starts_at FROM performance WHERE substr(starts_at, 1, 10) BETWEEN ? AND ? "
                           "ORDER BY starts_at, id", [date_from.isoformat(), date_to.isoformat()]).fetchall()
    perfs = [PerformanceRef(i, s) for i, s in perf_rows]
    ids = [p.id for p in perfs]
    cues = {r[0]: CueRef(*r) for r in db.execute("SELECT id, number, name, rig_slug FROM cue")}
    devs = find_deviations(db, ids, now=now)
    recs = [_record_ref(r) for r in list_records(db, date_from=date_from, date_to=date_to)][::-1]
    rec_ids = [r.id for r in recs]
    actions = []
    if rec_ids:
        q = f"SELECT id, record_id, description, owner, due, state FROM audit_action WHERE record_id IN " \
            f"({', '.join('?' * len(rec_ids))}) ORDER BY id"
        actions = [ActionRef(i, r, d, o, date.fromisoformat(due), s) for i, r, d, o, due, s in db.execute(q, rec_ids)]
    margins = _margins(db, ids) if with_margins and ids else []
    return build_season(date_from, date_to, perfs, cues, devs, recs, actions, margins, today=today)


def write_csv(season: SeasonAudit, folder: str | Path) -> list[Path]:
    """Write the season's tables as CSV files in ``folder``; return their paths."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    paths = []
    for stem, (header, rows) in season.csv_tables().items():
        path = folder / f"{stem}.csv"
        with open(path, "w", newline="", encoding="utf-8") as fh:
            writer = csv.writer(fh)
            writer.writerow(header)
            writer.writerows(rows)
        paths.append(path)
    return paths


# -- the demo ---------------------------------------------------------------------------

def seed_demo_audit(db: sqlite_utils.Database, demo_ids: Any, *, now: datetime | None = None) -> list[str]:
    """Promote one deviation of the demo's past performance to a near miss, classify
    it, record its investigation and one corrective action, and add a show-report note.

    The deviation is the one the live runner's demo run made on purpose (a step
    confirmed past its ``hold``, else the HOLD, else the first one found).

    :returns: lines for the demo's printout.
    :raises Refused: when the past performance has no deviation to promote.
    """
    from datetime import timedelta

    from showops.show import demo_data

    pid = demo_ids.past_performance
    devs = find_deviations(db, [pid], now=now)
    if not devs:
        raise Refused(f"the demo's past performance {pid} has no deviation to promote")
    rank = {"past_hold_time": 0, "hold": 1, "refused_attempt": 2}
    chosen = min(devs, key=lambda d: (rank.get(d.rule, 9), d.row_ids))
    sm = Actor(demo_data.STAGE_MANAGER, "stage_manager", person_id=getattr(demo_ids, "stage_manager", None))
    record_id = promote(db, sm, chosen, now=now)
    row = _log_row(db, chosen.row_ids[-1])
    amend(db, sm, record_id, {
        "people": [{"name": row["person_name"] or "", "role": row["role"] or ""}] if row["person_name"] else [],
        "doing": "running cue {} '{}', step {}".format(
            *(db.execute("SELECT number, name FROM cue WHERE id = ?", [row["cue_id"]]).fetchone() or ("?", "?")),
            row["step_key"] or "?"),
        "immediate_action": "the caller held the next go until every lifter had called ready"}, now=now)
    classify(db, sm, record_id, kind="near_miss", likelihood=3, severity_actual="E", severity_potential="C",
             now=now)
    investigate(db, sm, record_id, {
        "immediate_causes": "the step ran past the time the procedure allows for it",
        "underlying_causes": "the cue was started before the lifters had both hands on the rear bar",
        "root_causes": "the procedure has no call that confirms the lifters are ready before the go",
        "contributing_factors": "dark wing; a new lifter on the cue that night",
        "similar_events": "none found in the log of earlier nights",
        "risk_review": "the rig's lift procedure risk assessment reviewed; no new hazard",
    }, now=now)
    occurred = datetime.fromisoformat(chosen.at_utc)
    action_id = add_action(db, sm, record_id, {
        "description": "Add a 'lifters ready' reply before the go on the lift procedure and brief the crew",
        "owner": "Head of stage", "due": (occurred + timedelta(days=7)).date().isoformat(),
        "control": "administrative"}, now=now)
    add_note(db, sm, pid, f"{chosen.title}: {chosen.text}. Recorded as near miss #{record_id}.", now=now)
    return [f"promoted the past performance's deviation '{chosen.title}' ({chosen.key}) to near miss "
            f"#{record_id} (3C tolerable), with corrective action {action_id} due "
            f"{(occurred + timedelta(days=7)).date().isoformat()}"]
