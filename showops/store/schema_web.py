"""Migrations 150-199: the web application's users and its sign-in attempts.

A user is a sign-in for one person and one role: ``admin`` (the technical director:
rigs, limits, people), ``stage_manager`` (performances, casting, running the show),
``crew`` (their own steps) or ``viewer`` (read-only). ``person_id`` links a user to
the person of the cast-and-crew tables (``person.id``, migrations 1-99), so the live
runner knows which steps are theirs. Passwords and PINs are stored only as
``werkzeug.security`` hashes. ``login_attempt`` keeps every sign-in attempt so they
can be rate-limited and reviewed.

``person_id`` has no SQL foreign key: with foreign keys on, SQLite refuses every
insert (even a NULL key) into a table whose key names a missing table, so this area's
schema does not lean on another area's; ``store.users`` checks that the person exists.
"""

from showops.store.db import Migration

MIGRATIONS = [
    Migration(150, "web users and sign-in attempts", """
CREATE TABLE web_user (
    id INTEGER PRIMARY KEY,
    username TEXT NOT NULL UNIQUE COLLATE NOCASE,
    display_name TEXT NOT NULL,
    role TEXT NOT NULL CHECK (role IN ('admin', 'stage_manager', 'crew', 'viewer')),
    person_id INTEGER,
    password_hash TEXT,
    pin_hash TEXT,
    active INTEGER NOT NULL DEFAULT 1 CHECK (active IN (0, 1)),
    created_at TEXT NOT NULL,
    changed_at TEXT NOT NULL
);
CREATE UNIQUE INDEX web_user_person ON web_user(person_id) WHERE person_id IS NOT NULL;
CREATE TABLE login_attempt (
    id INTEGER PRIMARY KEY,
    at_utc TEXT NOT NULL,
    username TEXT NOT NULL COLLATE NOCASE,
    address TEXT NOT NULL,
    method TEXT NOT NULL CHECK (method IN ('password', 'pin')),
    ok INTEGER NOT NULL CHECK (ok IN (0, 1))
);
CREATE INDEX login_attempt_user ON login_attempt(username, at_utc);
CREATE INDEX login_attempt_address ON login_attempt(address, at_utc);
"""),
]
