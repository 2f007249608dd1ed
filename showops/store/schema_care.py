"""Migrations 200-299: rig care and readiness records.

Every record table is append-only: triggers refuse UPDATE and DELETE, so an
objection, an inspection or an answer is never changed or removed; a correction is
a later record (a remedy, a resolution, a new answer, a retirement). People,
performances and cues are referenced by the show tables' integer ids (``person``,
``performance``, ``cue``) with the person's name kept beside the id, so a record
stays readable; rigs by their slug.
"""

from __future__ import annotations

from showops.store.db import Migration

#: Tables whose rows are never changed or deleted.
APPEND_ONLY = (
    "care_rule_choice", "care_rule", "care_part", "care_part_retired", "care_inspection", "care_remedy",
    "care_event", "care_checklist", "care_preshow_answer", "care_briefing", "care_briefing_attendance",
    "care_rehearsal", "care_rehearsal_member", "care_area_release", "care_objection", "care_resolution",
)

_TABLES = """
CREATE TABLE care_rule_choice (
    id INTEGER PRIMARY KEY,
    rig TEXT NOT NULL,
    rule_set TEXT NOT NULL,
    chosen_by TEXT NOT NULL,
    chosen_at TEXT NOT NULL
);
CREATE TABLE care_rule (
    id INTEGER PRIMARY KEY,
    rule_set TEXT NOT NULL,
    key TEXT NOT NULL,
    kind TEXT NOT NULL CHECK (kind IN ('before_each_use', 'interval', 'after_event')),
    title TEXT NOT NULL,
    source TEXT NOT NULL CHECK (length(trim(source)) > 0),
    months INTEGER,
    events TEXT NOT NULL DEFAULT '[]',
    examiner TEXT NOT NULL DEFAULT 'competent person',
    removed INTEGER NOT NULL DEFAULT 0,
    written_by TEXT NOT NULL,
    written_at TEXT NOT NULL
);
CREATE TABLE care_part (
    id INTEGER PRIMARY KEY,
    rig TEXT NOT NULL,
    name TEXT NOT NULL,
    kind TEXT NOT NULL,
    carries_people INTEGER NOT NULL,
    rating_n REAL CHECK (rating_n IS NULL OR rating_n > 0),
    design_factor REAL CHECK (design_factor IS NULL OR design_factor >= 1),
    sees TEXT,
    share REAL NOT NULL DEFAULT 1 CHECK (share > 0 AND share <= 1),
    note TEXT NOT NULL DEFAULT '',
    fitted_on TEXT,
    recorded_at TEXT NOT NULL
);
CREATE TABLE care_part_retired (
    id INTEGER PRIMARY KEY,
    part_id INTEGER NOT NULL UNIQUE REFERENCES care_part(id),
    on_date TEXT NOT NULL,
    reason TEXT NOT NULL,
    recorded_at TEXT NOT NULL
);
CREATE TABLE care_inspection (
    id INTEGER PRIMARY KEY,
    rig TEXT NOT NULL,
    on_date TEXT NOT NULL,
    scope TEXT NOT NULL,
    examiner_id INTEGER,
    examiner_name TEXT NOT NULL,
    findings TEXT NOT NULL,
    objection_to_use INTEGER NOT NULL CHECK (objection_to_use IN (0, 1)),
    follow_up TEXT NOT NULL DEFAULT '',
    covers TEXT NOT NULL DEFAULT '[]',
    rig_version TEXT,
    log_id INTEGER,
    recorded_at TEXT NOT NULL
);
CREATE TABLE care_remedy (
    id INTEGER PRIMARY KEY,
    inspection_id INTEGER NOT NULL UNIQUE REFERENCES care_inspection(id),
    on_date TEXT NOT NULL,
    person_id INTEGER,
    person_name TEXT NOT NULL,
    remedy TEXT NOT NULL,
    log_id INTEGER,
    recorded_at TEXT NOT NULL
);
CREATE TABLE care_event (
    id INTEGER PRIMARY KEY,
    rig TEXT NOT NULL,
    kind TEXT NOT NULL CHECK (kind IN ('incident', 'overload', 'modification')),
    on_date TEXT NOT NULL,
    description TEXT NOT NULL,
    person_id INTEGER,
    person_name TEXT,
    log_id INTEGER,
    recorded_at TEXT NOT NULL
);
CREATE TABLE care_checklist (
    id INTEGER PRIMARY KEY,
    rig TEXT NOT NULL,
    text TEXT NOT NULL,
    version TEXT NOT NULL,
    source TEXT NOT NULL,
    loaded_at TEXT NOT NULL
);
CREATE TABLE care_preshow_answer (
    id INTEGER PRIMARY KEY,
    performance_id INTEGER NOT NULL,
    rig TEXT NOT NULL,
    checklist_version TEXT NOT NULL,
    item_key TEXT NOT NULL,
    observation TEXT NOT NULL,
    result TEXT NOT NULL CHECK (result IN ('pass', 'fault')),
    person_id INTEGER,
    person_name TEXT NOT NULL,
    at_utc TEXT NOT NULL,
    log_id INTEGER
);
CREATE TABLE care_briefing (
    id INTEGER PRIMARY KEY,
    performance_id INTEGER NOT NULL,
    rig TEXT NOT NULL,
    given_by_id INTEGER,
    given_by_name TEXT NOT NULL,
    at_utc TEXT NOT NULL,
    note TEXT NOT NULL DEFAULT '',
    log_id INTEGER
);
CREATE TABLE care_briefing_attendance (
    id INTEGER PRIMARY KEY,
    briefing_id INTEGER NOT NULL REFERENCES care_briefing(id),
    person_id INTEGER,
    person_name TEXT NOT NULL,
    confirmed_at TEXT NOT NULL,
    device TEXT,
    log_id INTEGER,
    UNIQUE (briefing_id, person_name)
);
CREATE TABLE care_rehearsal (
    id INTEGER PRIMARY KEY,
    rig TEXT NOT NULL,
    cue_id INTEGER,
    on_date TEXT NOT NULL,
    configuration TEXT NOT NULL DEFAULT '',
    note TEXT NOT NULL DEFAULT '',
    log_id INTEGER,
    recorded_at TEXT NOT NULL
);
CREATE TABLE care_rehearsal_member (
    rehearsal_id INTEGER NOT NULL REFERENCES care_rehearsal(id),
    person_id INTEGER,
    person_name TEXT NOT NULL,
    role TEXT NOT NULL,
    PRIMARY KEY (rehearsal_id, person_name, role)
);
CREATE TABLE care_area_release (
    id INTEGER PRIMARY KEY,
    performance_id INTEGER NOT NULL,
    person_id INTEGER,
    person_name TEXT NOT NULL,
    role TEXT NOT NULL,
    at_utc TEXT NOT NULL,
    note TEXT NOT NULL DEFAULT '',
    log_id INTEGER
);
CREATE TABLE care_objection (
    id INTEGER PRIMARY KEY,
    raised_by_id INTEGER,
    raised_by_name TEXT NOT NULL,
    role TEXT NOT NULL,
    at_utc TEXT NOT NULL,
    reason TEXT NOT NULL CHECK (length(trim(reason)) > 0),
    responsible_id INTEGER,
    responsible_name TEXT NOT NULL,
    rig TEXT,
    cue_id INTEGER,
    performance_id INTEGER,
    log_id INTEGER,
    CHECK (rig IS NOT NULL OR cue_id IS NOT NULL)
);
CREATE TABLE care_resolution (
    id INTEGER PRIMARY KEY,
    objection_id INTEGER NOT NULL UNIQUE REFERENCES care_objection(id),
    person_id INTEGER,
    person_name TEXT NOT NULL,
    at_utc TEXT NOT NULL,
    reason TEXT NOT NULL CHECK (length(trim(reason)) > 0),
    log_id INTEGER
);
CREATE INDEX care_inspection_rig ON care_inspection (rig, on_date);
CREATE INDEX care_answer_perf ON care_preshow_answer (performance_id, rig);
CREATE INDEX care_briefing_perf ON care_briefing (performance_id, rig);
CREATE INDEX care_rehearsal_rig ON care_rehearsal (rig, on_date);
CREATE INDEX care_release_perf ON care_area_release (performance_id);
"""


def _append_only_triggers() -> str:
    out = []
    for table in APPEND_ONLY:
        out.append(f"CREATE TRIGGER {table}_no_update BEFORE UPDATE ON {table} "
                   f"BEGIN SELECT RAISE(ABORT, '{table} is append-only: records are never changed'); END;")
        out.append(f"CREATE TRIGGER {table}_no_delete BEFORE DELETE ON {table} "
                   f"BEGIN SELECT RAISE(ABORT, '{table} is append-only: records are never deleted'); END;")
    return "\n".join(out)


MIGRATIONS = [
    Migration(200, "rig care and readiness records", _TABLES),
    Migration(201, "care records are append-only", _append_only_triggers()),
]
