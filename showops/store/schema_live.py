"""Migrations 100-149: the show log (``step_log``) and its head.

``step_log`` is append-only: triggers refuse UPDATE and DELETE, so a slip in code
or at the SQLite prompt cannot change it, and the hash chain (``live.chain``) shows
any change made by someone who drops the triggers first. ``step_log_head`` holds
the last id and hash the writer committed, in the same transaction as the rows, so
removing rows from the end of the log is found too. The live state of a cue is not
stored apart: it is replayed from the cue's rows (one truth, nothing to drift).
"""

from showops.store.db import Migration

MIGRATIONS = [
    Migration(100, "step_log", """
CREATE TABLE step_log (
    id INTEGER PRIMARY KEY,
    at_utc TEXT NOT NULL,
    device_at TEXT,
    event TEXT NOT NULL,
    person_id INTEGER,
    person_name TEXT,
    role TEXT,
    device TEXT,
    performance_id INTEGER,
    cue_id INTEGER,
    step_key TEXT,
    step_number INTEGER,
    procedure_version TEXT,
    rig_version TEXT,
    client_id TEXT UNIQUE,
    detail TEXT,
    prev_hash TEXT NOT NULL,
    hash TEXT NOT NULL
);
CREATE INDEX step_log_cue ON step_log (performance_id, cue_id, id);
CREATE INDEX step_log_event ON step_log (event, id);
CREATE TRIGGER step_log_no_update BEFORE UPDATE ON step_log
BEGIN SELECT RAISE(ABORT, 'step_log is append-only: rows cannot be changed'); END;
CREATE TRIGGER step_log_no_delete BEFORE DELETE ON step_log
BEGIN SELECT RAISE(ABORT, 'step_log is append-only: rows cannot be removed'); END;
CREATE TABLE step_log_head (
    one INTEGER PRIMARY KEY CHECK (one = 1),
    last_id INTEGER NOT NULL,
    last_hash TEXT NOT NULL
);
INSERT INTO step_log_head (one, last_id, last_hash)
VALUES (1, 0, '0000000000000000000000000000000000000000000000000000000000000000');
"""),
]
