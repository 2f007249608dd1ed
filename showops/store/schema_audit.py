"""Migrations 300-399: incident records, corrective actions, attachments, the stage
manager's notes on a night (300); each performance's stored deviation scan (301).

Records are never deleted (triggers refuse DELETE); every change is an amendment,
and each amendment is also a row of the hash-chained ``step_log``
(``incident_reported``, ``incident_amended`` ...). Ids of other areas' rows
(performance, cue, step_log) carry no SQL foreign key: with foreign keys on, SQLite
refuses inserts into a table whose key names a table another area has not created
yet; ``store.audit`` checks them instead.

Fields follow HSE HSG245, ISO 45001:2018 §3.35 and §10.2 and OSHA 29 CFR 1904
Form 301; the risk columns ICAO Doc 9859 (see ``showops.audit.records`` and
``showops.audit.risk``).
"""

from showops.store.db import Migration

_SCHEMA = """
CREATE TABLE audit_record (
    id INTEGER PRIMARY KEY,
    kind TEXT NOT NULL CHECK (kind IN ('incident', 'near_miss', 'unsafe_condition')),
    status TEXT NOT NULL DEFAULT 'reported' CHECK (status IN ('reported', 'classified', 'closed')),
    occurred_at TEXT NOT NULL,
    reported_at TEXT NOT NULL,
    reported_by TEXT NOT NULL,
    reporter_role TEXT NOT NULL,
    reporter_user_id INTEGER,
    narrative TEXT NOT NULL,
    doing TEXT NOT NULL DEFAULT '',
    object_involved TEXT NOT NULL DEFAULT '',
    people TEXT NOT NULL DEFAULT '[]',
    injured INTEGER NOT NULL DEFAULT 0 CHECK (injured IN (0, 1)),
    injury TEXT NOT NULL DEFAULT '',
    treatment TEXT NOT NULL DEFAULT 'none',
    immediate_action TEXT NOT NULL DEFAULT '',
    performance_id INTEGER,
    cue_id INTEGER,
    step_key TEXT,
    step_log_id INTEGER,
    deviation_key TEXT UNIQUE,
    likelihood INTEGER CHECK (likelihood BETWEEN 1 AND 5),
    severity_actual TEXT CHECK (severity_actual IN ('A', 'B', 'C', 'D', 'E')),
    severity_potential TEXT CHECK (severity_potential IN ('A', 'B', 'C', 'D', 'E')),
    risk_cell TEXT,
    risk_region TEXT CHECK (risk_region IN ('intolerable', 'tolerable', 'acceptable')),
    matrix_edition TEXT,
    classified_by TEXT,
    classified_at TEXT,
    immediate_causes TEXT NOT NULL DEFAULT '',
    underlying_causes TEXT NOT NULL DEFAULT '',
    root_causes TEXT NOT NULL DEFAULT '',
    contributing_factors TEXT NOT NULL DEFAULT '',
    similar_events TEXT NOT NULL DEFAULT '',
    risk_review TEXT NOT NULL DEFAULT '',
    closed_by TEXT,
    closed_at TEXT,
    retain_until TEXT NOT NULL,
    changed_at TEXT NOT NULL
);
CREATE INDEX audit_record_performance ON audit_record (performance_id);
CREATE INDEX audit_record_occurred ON audit_record (occurred_at);
CREATE TRIGGER audit_record_no_delete BEFORE DELETE ON audit_record
BEGIN SELECT RAISE(ABORT, 'audit records are never deleted, only amended'); END;

CREATE TABLE audit_action (
    id INTEGER PRIMARY KEY,
    record_id INTEGER NOT NULL REFERENCES audit_record(id),
    description TEXT NOT NULL,
    control TEXT NOT NULL,
    owner TEXT NOT NULL,
    due TEXT NOT NULL,
    state TEXT NOT NULL DEFAULT 'open' CHECK (state IN ('open', 'done', 'verified')),
    created_at TEXT NOT NULL,
    created_by TEXT NOT NULL,
    done_at TEXT,
    done_by TEXT,
    verified_at TEXT,
    verified_by TEXT,
    note TEXT NOT NULL DEFAULT ''
);
CREATE INDEX audit_action_record ON audit_action (record_id);
CREATE TRIGGER audit_action_no_delete BEFORE DELETE ON audit_action
BEGIN SELECT RAISE(ABORT, 'corrective actions are never deleted, only amended'); END;

CREATE TABLE audit_attachment (
    id INTEGER PRIMARY KEY,
    record_id INTEGER NOT NULL REFERENCES audit_record(id),
    filename TEXT NOT NULL,
    media_type TEXT NOT NULL,
    size_bytes INTEGER NOT NULL,
    sha256 TEXT NOT NULL,
    stored_as TEXT NOT NULL UNIQUE,
    added_at TEXT NOT NULL,
    added_by TEXT NOT NULL
);
CREATE TRIGGER audit_attachment_no_delete BEFORE DELETE ON audit_attachment
BEGIN SELECT RAISE(ABORT, 'attachments are never deleted'); END;

CREATE TABLE audit_note (
    id INTEGER PRIMARY KEY,
    performance_id INTEGER NOT NULL,
    written_at TEXT NOT NULL,
    written_by TEXT NOT NULL,
    text TEXT NOT NULL
);
CREATE INDEX audit_note_performance ON audit_note (performance_id);
CREATE TRIGGER audit_note_no_delete BEFORE DELETE ON audit_note
BEGIN SELECT RAISE(ABORT, 'notes are never deleted'); END;
"""

#: Each performance's deviation scan, kept so that only performances whose log rows
#: changed are scanned again (``store.audit.find_deviations``). A row is a cache, not a
#: record: it is replaced when stale and may be dropped at any time. It is used only
#: while the performance's last ``step_log`` id, the scan's version (the deviation rules
#: and the procedure reader), whether the night is over, and (for a scan that met a
#: procedure version not on record) the last ``procedure_version`` id are all the same.
_SCAN = """
CREATE TABLE audit_scan (
    performance_id INTEGER PRIMARY KEY,
    last_row_id INTEGER NOT NULL,
    scan_version TEXT NOT NULL,
    finished INTEGER NOT NULL CHECK (finished IN (0, 1)),
    procedures_seen INTEGER,
    deviations TEXT NOT NULL,
    scanned_at TEXT NOT NULL
);
"""

MIGRATIONS = [
    Migration(300, "incident records, corrective actions, attachments, show notes", _SCHEMA),
    Migration(301, "each performance's stored deviation scan", _SCAN),
]
