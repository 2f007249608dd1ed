"""Schema of productions, people, rigs, procedures, performances, cues and casting.

Migrations 1-99 (see DEVELOPERS.md). A migration is never edited once it has landed:
add a new one. Every person has one stable integer id in ``person``; being a performer
(``performer``) or a crew member (``crew_role``, ``training``) hangs off that id, and
the web engineer's users (migrations 150-199) link to it too.

A performer's mass is personal data: it lives in ``performer.mass_kg`` and nowhere
else (the night's plan carries only the riders' total).
"""

from __future__ import annotations

from showops.store.db import Migration

_CORE = """
CREATE TABLE production (
    id INTEGER PRIMARY KEY,
    name TEXT NOT NULL,
    company TEXT NOT NULL,
    UNIQUE (name, company)
);
CREATE TABLE venue (
    id INTEGER PRIMARY KEY,
    name TEXT NOT NULL,
    town TEXT NOT NULL DEFAULT '',
    UNIQUE (name, town)
);
CREATE TABLE rig (
    slug TEXT PRIMARY KEY,
    name TEXT NOT NULL,
    kind TEXT NOT NULL
);
CREATE TABLE rig_version (
    id INTEGER PRIMARY KEY,
    rig_slug TEXT NOT NULL REFERENCES rig(slug),
    sha256 TEXT NOT NULL,
    text TEXT NOT NULL,
    added_at TEXT NOT NULL,
    UNIQUE (rig_slug, sha256)
);
CREATE TABLE procedure (
    slug TEXT PRIMARY KEY,
    rig_slug TEXT REFERENCES rig(slug),
    title TEXT NOT NULL DEFAULT ''
);
CREATE TABLE procedure_version (
    id INTEGER PRIMARY KEY,
    procedure_slug TEXT NOT NULL REFERENCES procedure(slug),
    sha256 TEXT NOT NULL,
    text TEXT NOT NULL,
    added_at TEXT NOT NULL,
    UNIQUE (procedure_slug, sha256)
);
CREATE TABLE person (
    id INTEGER PRIMARY KEY,
    name TEXT NOT NULL UNIQUE
);
CREATE TABLE performer (
    person_id INTEGER PRIMARY KEY REFERENCES person(id),
    mass_kg REAL NOT NULL CHECK (mass_kg > 0)
);
CREATE TABLE performer_rig (
    person_id INTEGER NOT NULL REFERENCES performer(person_id),
    rig_slug TEXT NOT NULL REFERENCES rig(slug),
    PRIMARY KEY (person_id, rig_slug)
);
CREATE TABLE crew_role (
    person_id INTEGER NOT NULL REFERENCES person(id),
    role TEXT NOT NULL,
    PRIMARY KEY (person_id, role)
);
CREATE TABLE training (
    person_id INTEGER NOT NULL REFERENCES person(id),
    rig_slug TEXT NOT NULL REFERENCES rig(slug),
    trained_on TEXT NOT NULL,
    trained_by TEXT NOT NULL,
    expires_on TEXT NOT NULL,
    PRIMARY KEY (person_id, rig_slug)
);
CREATE TABLE performance (
    id INTEGER PRIMARY KEY,
    production_id INTEGER NOT NULL REFERENCES production(id),
    venue_id INTEGER NOT NULL REFERENCES venue(id),
    starts_at TEXT NOT NULL,
    stage_manager_id INTEGER REFERENCES person(id),
    UNIQUE (production_id, starts_at)
);
CREATE TABLE cue (
    id INTEGER PRIMARY KEY,
    production_id INTEGER NOT NULL REFERENCES production(id),
    position INTEGER NOT NULL,
    number TEXT NOT NULL,
    name TEXT NOT NULL,
    rig_slug TEXT REFERENCES rig(slug),
    procedure_slug TEXT REFERENCES procedure(slug),
    UNIQUE (production_id, number)
);
CREATE TABLE cue_cast (
    cue_id INTEGER NOT NULL REFERENCES cue(id),
    cast_name TEXT NOT NULL,
    person_id INTEGER NOT NULL REFERENCES performer(person_id),
    PRIMARY KEY (cue_id, cast_name, person_id)
);
CREATE TABLE performance_rider (
    performance_id INTEGER NOT NULL REFERENCES performance(id),
    cue_id INTEGER NOT NULL REFERENCES cue(id),
    person_id INTEGER NOT NULL REFERENCES performer(person_id),
    PRIMARY KEY (performance_id, cue_id, person_id)
);
CREATE TABLE performance_crew (
    performance_id INTEGER NOT NULL REFERENCES performance(id),
    cue_id INTEGER NOT NULL REFERENCES cue(id),
    role TEXT NOT NULL,
    person_id INTEGER NOT NULL REFERENCES person(id),
    PRIMARY KEY (performance_id, cue_id, role, person_id)
);
CREATE INDEX performance_starts ON performance(starts_at);
CREATE INDEX rider_by_cue ON performance_rider(cue_id);
CREATE INDEX crew_by_cue ON performance_crew(cue_id);
"""

MIGRATIONS = [
    Migration(1, "productions, people, rigs, procedures, performances, cues, casting", _CORE),
    # A rehearsal record belongs to rig care; this only marks which data a demo made,
    # so `showops demo` can tell an instance that holds real data from its own.
    Migration(2, "instance metadata", "CREATE TABLE instance_meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);"),
]
