"""Queries for productions, people, rigs, procedures, performances, cues and casting.

Every write that must be all-or-nothing runs in :func:`showops.store.transaction`.
Bad input raises :class:`~showops.errors.ValidationError` naming the field (and row, for
an import) or :class:`~showops.errors.NotFound`.

A performer's mass is read here only to build the verdicts' inputs; nothing returned
to a caller outside :mod:`showops.show.verdicts` carries one person's mass.
"""

from __future__ import annotations

import functools
import hashlib
import importlib
import math
import re
from dataclasses import dataclass
from datetime import date, datetime, timezone
from typing import Any, Iterable, Sequence

import sqlite_utils

from showops.errors import NotFound, RigFileError, ShowopsError, ValidationError
from showops.show.model import Assignment, CueNight, NightPlan
from showops.show.verdicts import (CrewMember, CueInput, PerformanceInput, Rehearsal, Rider, RigSolver,
                                   Training, night_plan)
from showops.store.db import transaction

#: Largest mass accepted for a person, kg: anything above is a typo (grams, or pounds).
MAX_PERSON_MASS_KG = 300.0
_SLUG = re.compile(r"^[a-z0-9][a-z0-9-]{0,63}$")


def _now() -> str:
    return datetime.now(timezone.utc).isoformat(timespec="seconds")


# --------------------------------------------------------------------------- parsing input


def parse_starts_at(text: str, field: str = "starts_at") -> datetime:
    """Read a performance time, ``YYYY-MM-DD HH:MM`` or ``YYYY-MM-DDTHH:MM`` (ISO 8601, venue time).

    :raises ValidationError: naming ``field`` when the text is not that format.
    """
    value = str(text).strip()
    if not re.fullmatch(r"\d{4}-\d{2}-\d{2}[T ]\d{2}:\d{2}(:\d{2})?", value):
        raise ValidationError(field, f"{value!r} is not an ISO 8601 date and time "
                                     "(write YYYY-MM-DD HH:MM, e.g. 2026-12-12 19:30)")
    try:
        return datetime.fromisoformat(value.replace(" ", "T")).replace(second=0)
    except ValueError:
        raise ValidationError(field, f"{value!r} is not a real date and time "
                                     "(write YYYY-MM-DD HH:MM, e.g. 2026-12-12 19:30)") from None


def parse_date(text: str, field: str) -> date:
    """Read an ISO 8601 date ``YYYY-MM-DD``.

    :raises ValidationError: naming ``field`` for anything else.
    """
    value = str(text).strip()
    if not re.fullmatch(r"\d{4}-\d{2}-\d{2}", value):
        raise ValidationError(field, f"{value!r} is not an ISO 8601 date (write YYYY-MM-DD, e.g. 2026-11-03)")
    try:
        return date.fromisoformat(value)
    except ValueError:
        raise ValidationError(field, f"{value!r} is not a real date (write YYYY-MM-DD, e.g. 2026-11-03)") from None


def parse_mass(value: Any, field: str = "mass_kg") -> float:
    """Read a person's mass in kg: a number greater than 0 and at most 300.

    :raises ValidationError: naming ``field``, for text, a negative or absurd number.
    """
    text = str(value).strip()
    try:
        mass = float(text)
    except ValueError:
        raise ValidationError(field, f"{text!r} is not a number (give the mass in kg as digits, e.g. 62)") from None
    if not math.isfinite(mass) or mass <= 0:
        raise ValidationError(field, f"{text} is not a mass (give a number of kg greater than 0)")
    if mass > MAX_PERSON_MASS_KG:
        raise ValidationError(field, f"{text} kg is not a person's mass (give kg, at most {MAX_PERSON_MASS_KG:g})")
    return mass


def _name(value: Any, field: str = "name") -> str:
    name = " ".join(str(value or "").split())
    if not name:
        raise ValidationError(field, "empty (give the person's name)")
    if len(name) > 120:
        raise ValidationError(field, f"{len(name)} characters; a name is at most 120")
    return name


def _list(value: Any) -> list[str]:
    """Split ``"brake; spotter"`` (or commas) into words."""
    return [part.strip() for part in re.split(r"[;,]", str(value or "")) if part.strip()]


# --------------------------------------------------------------------------- productions, venues, rigs, procedures


def add_production(db: sqlite_utils.Database, name: str, company: str) -> int:
    """Add a production and return its id."""
    return db["production"].insert({"name": _name(name, "production"), "company": _name(company, "company")}).last_pk


def add_venue(db: sqlite_utils.Database, name: str, town: str = "") -> int:
    """Add a venue and return its id."""
    return db["venue"].insert({"name": _name(name, "venue"), "town": str(town).strip()}).last_pk


def add_rig(db: sqlite_utils.Database, slug: str, text: str, *, source: str | None = None) -> str:
    """Store a rig file's text under ``slug``; a changed text is a new version.

    :returns: the version (SHA-256 of the text).
    :raises RigFileError: when the text is not a valid rig file.
    :raises ValidationError: for a bad slug.
    """
    from showops.rig import parse_rig

    if not _SLUG.match(slug or ""):
        raise ValidationError("rig", f"{slug!r} is not a rig slug (lower-case letters, digits and dashes)")
    model = parse_rig(text, source=source or slug)
    sha = hashlib.sha256(text.encode("utf-8")).hexdigest()
    db["rig"].upsert({"slug": slug, "name": model.name, "kind": model.kind}, pk="slug")
    if not db.execute("SELECT 1 FROM rig_version WHERE rig_slug = ? AND sha256 = ?", [slug, sha]).fetchone():
        db["rig_version"].insert({"rig_slug": slug, "sha256": sha, "text": text, "added_at": _now()})
    return sha


def add_procedure(db: sqlite_utils.Database, slug: str, text: str, *, rig: str | None = None) -> str:
    """Store a procedure's text under ``slug``; a changed text is a new version.

    :returns: the version (SHA-256 of the text).
    :raises ValidationError: for a bad slug or an unknown rig.
    """
    if not _SLUG.match(slug or ""):
        raise ValidationError("procedure", f"{slug!r} is not a procedure slug (lower-case letters, digits and dashes)")
    if rig is not None:
        _require_rig(db, rig, "rig")
    title = _header(text, "Title") or slug
    sha = hashlib.sha256(text.encode("utf-8")).hexdigest()
    db["procedure"].upsert({"slug": slug, "rig_slug": rig, "title": title}, pk="slug")
    if not db.execute("SELECT 1 FROM procedure_version WHERE procedure_slug = ? AND sha256 = ?",
                      [slug, sha]).fetchone():
        db["procedure_version"].insert({"procedure_slug": slug, "sha256": sha, "text": text, "added_at": _now()})
    return sha


def link_procedure(db: sqlite_utils.Database, slug: str, rig: str) -> int:
    """Give every cue on ``rig`` that has no procedure this one; return how many cues changed."""
    cursor = db.execute("UPDATE cue SET procedure_slug = ? WHERE rig_slug = ? AND procedure_slug IS NULL", [slug, rig])
    return cursor.rowcount


def _header(text: str, key: str) -> str | None:
    for line in text.splitlines():
        if line.startswith("#"):
            break
        if line.lower().startswith(key.lower() + ":"):
            return line.split(":", 1)[1].strip()
    return None


def _require_rig(db, slug: str, field: str) -> None:
    if not db.execute("SELECT 1 FROM rig WHERE slug = ?", [slug]).fetchone():
        known = [r[0] for r in db.execute("SELECT slug FROM rig ORDER BY slug")]
        raise ValidationError(field, f"unknown rig {slug!r} (known: {', '.join(known) or 'none yet'})")


def rig_slugs(db: sqlite_utils.Database) -> list[str]:
    """Return the slugs of every rig on record."""
    return [r[0] for r in db.execute("SELECT slug FROM rig ORDER BY slug")]


# --------------------------------------------------------------------------- people


def _person_id(db, name: str) -> int | None:
    row = db.execute("SELECT id FROM person WHERE name = ? COLLATE NOCASE", [name]).fetchone()
    return row[0] if row else None


def add_performer(db: sqlite_utils.Database, name: str, mass_kg: Any, rigs: Iterable[str] = ()) -> int:
    """Add a performer (mass in kg, the rigs they are cleared to ride); return the person id.

    :raises ValidationError: for an empty name, a bad mass, an unknown rig, or a name
        already on the performers' list.
    """
    name = _name(name)
    mass = parse_mass(mass_kg)
    rigs = list(rigs)
    for rig in rigs:
        _require_rig(db, rig, "rigs")
    pid = _person_id(db, name)
    if pid is not None and db.execute("SELECT 1 FROM performer WHERE person_id = ?", [pid]).fetchone():
        raise ValidationError("name", f"{name!r} is already on the performers' list (duplicate performer)")
    if pid is None:
        pid = db["person"].insert({"name": name}).last_pk
    db["performer"].insert({"person_id": pid, "mass_kg": mass})
    for rig in dict.fromkeys(rigs):
        db["performer_rig"].insert({"person_id": pid, "rig_slug": rig})
    return pid


def add_crew_member(db: sqlite_utils.Database, name: str, roles: Iterable[str],
                    trainings: Iterable[tuple[str, Any, str, Any]] = (), *, today: date | None = None) -> int:
    """Add a crew member with the roles they may take and their training per rig.

    :param trainings: (rig slug, trained on, trained by, expires on) with ISO dates.
    :raises ValidationError: for an empty name or role list, an unknown rig, a training
        date after today or an expiry before the training, or a name already on the crew list.
    """
    name = _name(name)
    roles = [r.lower() for r in roles]
    if not roles:
        raise ValidationError("roles", "empty (give the roles this person may take, e.g. brake; lifters)")
    for role in roles:
        if not re.fullmatch(r"[a-z][a-z -]{0,39}", role):
            raise ValidationError("roles", f"{role!r} is not a role name (letters, e.g. brake, lifters, spotter)")
    pid = _person_id(db, name)
    if pid is not None and db.execute("SELECT 1 FROM crew_role WHERE person_id = ?", [pid]).fetchone():
        raise ValidationError("name", f"{name!r} is already on the crew list (duplicate crew member)")
    checked = [_training(db, t, today or date.today()) for t in trainings]
    if pid is None:
        pid = db["person"].insert({"name": name}).last_pk
    for role in dict.fromkeys(roles):
        db["crew_role"].insert({"person_id": pid, "role": role})
    for rig, trained_on, by, expires_on in checked:
        db["training"].upsert({"person_id": pid, "rig_slug": rig, "trained_on": trained_on.isoformat(),
                               "trained_by": by, "expires_on": expires_on.isoformat()},
                              pk=("person_id", "rig_slug"))
    return pid


def _training(db, training, today: date):
    rig, trained_on, by, expires_on = training
    _require_rig(db, rig, "rig")
    trained_on = trained_on if isinstance(trained_on, date) else parse_date(trained_on, "trained_on")
    expires_on = expires_on if isinstance(expires_on, date) else parse_date(expires_on, "expires_on")
    if trained_on > today:
        raise ValidationError("trained_on", f"{trained_on.isoformat()} is in the future (today is {today.isoformat()})")
    if expires_on <= trained_on:
        raise ValidationError("expires_on", f"{expires_on.isoformat()} is not after trained_on {trained_on.isoformat()}")
    by = " ".join(str(by or "").split())
    if not by:
        raise ValidationError("trained_by", "empty (name who trained this person)")
    return rig, trained_on, by, expires_on


def people(db: sqlite_utils.Database) -> list[dict]:
    """Return every person: ``id``, ``name``, ``performer`` (bool), ``roles`` (list). No masses."""
    roles: dict[int, list[str]] = {}
    for pid, role in db.execute("SELECT person_id, role FROM crew_role ORDER BY role"):
        roles.setdefault(pid, []).append(role)
    performers = {r[0] for r in db.execute("SELECT person_id FROM performer")}
    return [{"id": pid, "name": name, "performer": pid in performers, "roles": roles.get(pid, [])}
            for pid, name in db.execute("SELECT id, name FROM person ORDER BY name")]


# --------------------------------------------------------------------------- performances, cues, casting


def add_performance(db: sqlite_utils.Database, production_id: int, venue_id: int, starts_at: Any, *,
                    stage_manager_id: int | None = None, now: datetime | None = None,
                    allow_past: bool = False) -> int:
    """Add a performance (``starts_at`` ISO 8601, venue time) and return its id.

    :param allow_past: let the demo or an archive import record a past performance.
    :raises ValidationError: for a time not in ISO 8601, or in the past.
    """
    when = starts_at if isinstance(starts_at, datetime) else parse_starts_at(starts_at)
    now = now or datetime.now()
    if not allow_past and when < now:
        raise ValidationError("starts_at", f"{when:%Y-%m-%d %H:%M} is in the past (now is {now:%Y-%m-%d %H:%M})")
    if not db.execute("SELECT 1 FROM production WHERE id = ?", [production_id]).fetchone():
        raise NotFound(f"production {production_id} does not exist")
    if not db.execute("SELECT 1 FROM venue WHERE id = ?", [venue_id]).fetchone():
        raise NotFound(f"venue {venue_id} does not exist")
    stamp = when.strftime("%Y-%m-%dT%H:%M")
    if db.execute("SELECT 1 FROM performance WHERE production_id = ? AND starts_at = ?",
                  [production_id, stamp]).fetchone():
        raise ValidationError("starts_at", f"a performance at {when:%Y-%m-%d %H:%M} already exists")
    return db["performance"].insert({"production_id": production_id, "venue_id": venue_id, "starts_at": stamp,
                                     "stage_manager_id": stage_manager_id}).last_pk


def add_cue(db: sqlite_utils.Database, production_id: int, number: str, name: str, *,
            rig: str | None = None, procedure: str | None = None, position: int | None = None) -> int:
    """Add a cue to a production's cue list and return its id.

    :raises ValidationError: for an unknown rig or procedure, or a number already used.
    """
    number = str(number).strip()
    if not number:
        raise ValidationError("number", "empty (give the cue number, e.g. 12 or 12a)")
    if rig:
        _require_rig(db, rig, "rig")
    if procedure and not db.execute("SELECT 1 FROM procedure WHERE slug = ?", [procedure]).fetchone():
        raise ValidationError("procedure", f"unknown procedure {procedure!r}")
    if db.execute("SELECT 1 FROM cue WHERE production_id = ? AND number = ?", [production_id, number]).fetchone():
        raise ValidationError("number", f"cue {number} already exists in this production")
    if position is None:
        position = (db.execute("SELECT MAX(position) FROM cue WHERE production_id = ?",
                               [production_id]).fetchone()[0] or 0) + 10
    return db["cue"].insert({"production_id": production_id, "position": position, "number": number,
                             "name": _name(name, "cue name"), "rig_slug": rig or None,
                             "procedure_slug": procedure or None}).last_pk


def set_cue_cast(db: sqlite_utils.Database, cue_id: int, cast_name: str, person_ids: Sequence[int]) -> None:
    """Record one of a cue's planned casts ("first", "second"); replaces that cast."""
    db.execute("DELETE FROM cue_cast WHERE cue_id = ? AND cast_name = ?", [cue_id, cast_name])
    for pid in person_ids:
        db["cue_cast"].insert({"cue_id": cue_id, "cast_name": cast_name, "person_id": pid})


def cast_riders(db: sqlite_utils.Database, performance_id: int, cue_id: int, person_ids: Sequence[int]) -> None:
    """Set who rides ``cue_id`` at ``performance_id`` (replaces the cue's riders that night)."""
    db.execute("DELETE FROM performance_rider WHERE performance_id = ? AND cue_id = ?", [performance_id, cue_id])
    for pid in dict.fromkeys(person_ids):
        db["performance_rider"].insert({"performance_id": performance_id, "cue_id": cue_id, "person_id": pid})


def assign_crew(db: sqlite_utils.Database, performance_id: int, cue_id: int, role: str,
                person_ids: Sequence[int]) -> None:
    """Set who takes ``role`` on ``cue_id`` at ``performance_id`` (replaces that role)."""
    db.execute("DELETE FROM performance_crew WHERE performance_id = ? AND cue_id = ? AND role = ?",
               [performance_id, cue_id, role])
    for pid in dict.fromkeys(person_ids):
        db["performance_crew"].insert({"performance_id": performance_id, "cue_id": cue_id, "role": role,
                                       "person_id": pid})


def find_performance(db: sqlite_utils.Database, ref: Any) -> int:
    """Return the id of the performance named by ``ref``: its id, or ``YYYY-MM-DD HH:MM``
    (or ``YYYY-MM-DDTHH:MM``).

    :raises NotFound: when there is no such performance (the message lists the ones there are).
    :raises ValidationError: when ``ref`` is neither an id nor an ISO 8601 date and time.
    """
    text = str(ref).strip()
    if text.isdigit():
        row = db.execute("SELECT id FROM performance WHERE id = ?", [int(text)]).fetchone()
    else:
        when = parse_starts_at(text, "performance")
        row = db.execute("SELECT id FROM performance WHERE starts_at = ?", [when.strftime("%Y-%m-%dT%H:%M")]).fetchone()
    if row:
        return row[0]
    known = [f"{i} ({s.replace('T', ' ')})" for i, s in
             db.execute("SELECT id, starts_at FROM performance ORDER BY starts_at LIMIT 8")]
    raise NotFound(f"performance {text!r} does not exist"
                   + (f"; there are: {', '.join(known)}" if known else "; there are none yet (run `showops demo`)"))


def list_performances(db: sqlite_utils.Database) -> list[dict]:
    """Return every performance (``id``, ``starts_at`` ISO 8601, ``production``, ``venue``) in date order."""
    rows = db.execute(
        "SELECT p.id, p.starts_at, pr.name, v.name, v.town FROM performance p "
        "JOIN production pr ON pr.id = p.production_id JOIN venue v ON v.id = p.venue_id ORDER BY p.starts_at, p.id")
    return [{"id": i, "starts_at": s, "production": pn, "venue": vn + (f", {vt}" if vt else "")}
            for i, s, pn, vn, vt in rows]


def cue_list(db: sqlite_utils.Database, production_id: int | None = None) -> list[dict]:
    """Return the cue list(s) in running order: ``id``, ``production``, ``number``, ``name``, ``rig``, ``procedure``."""
    sql = ("SELECT c.id, pr.name, c.number, c.name, c.rig_slug, c.procedure_slug FROM cue c "
           "JOIN production pr ON pr.id = c.production_id")
    args: list = []
    if production_id is not None:
        sql += " WHERE c.production_id = ?"
        args.append(production_id)
    sql += " ORDER BY c.production_id, c.position, c.id"
    return [{"id": i, "production": p, "number": n, "name": name, "rig": rig, "procedure": proc}
            for i, p, n, name, rig, proc in db.execute(sql, args)]


# --------------------------------------------------------------------------- the night's plan


class _Season:
    """Everything the verdicts need, read once (a season is a few thousand rows)."""

    def __init__(self, db: sqlite_utils.Database, solver: RigSolver | None = None, only: int | None = None):
        self.db = db
        self.solver = solver or RigSolver()
        q = db.execute
        self.rigs: dict[str, Any] = {}
        self.rig_errors: dict[str, str] = {}
        for slug, text in q("SELECT rig_slug, text FROM rig_version WHERE id IN "
                            "(SELECT MAX(id) FROM rig_version GROUP BY rig_slug)"):
            try:
                self.rigs[slug] = parse_stored_rig(text, slug)
            except (RigFileError, ShowopsError) as exc:  # e.g. a kind this build does not know
                self.rig_errors[slug] = str(exc)
        self.procedures: dict[str, Any] = {}
        for slug, text in q("SELECT procedure_slug, text FROM procedure_version WHERE id IN "
                            "(SELECT MAX(id) FROM procedure_version GROUP BY procedure_slug)"):
            self.procedures[slug] = _read_procedure_cached(text, f"procedures/{slug}.md")
        self.names = dict(q("SELECT id, name FROM person"))
        cleared: dict[int, set[str]] = {}
        for pid, rig in q("SELECT person_id, rig_slug FROM performer_rig"):
            cleared.setdefault(pid, set()).add(rig)
        self.riders = {pid: Rider(pid, self.names[pid], mass, frozenset(cleared.get(pid, ())))
                       for pid, mass in q("SELECT person_id, mass_kg FROM performer")}
        roles: dict[int, set[str]] = {}
        for pid, role in q("SELECT person_id, role FROM crew_role"):
            roles.setdefault(pid, set()).add(role)
        trainings: dict[int, dict[str, Training]] = {}
        for pid, rig, on, by, until in q("SELECT person_id, rig_slug, trained_on, trained_by, expires_on FROM training"):
            trainings.setdefault(pid, {})[rig] = Training(rig, date.fromisoformat(on), by, date.fromisoformat(until))
        everyone = set(roles) | set(trainings)
        self.crew = {pid: CrewMember(pid, self.names[pid], frozenset(roles.get(pid, ())), trainings.get(pid, {}))
                     for pid in everyone}
        self.productions = {i: (n, c) for i, n, c in q("SELECT id, name, company FROM production")}
        self.venues = {i: n + (f", {t}" if t else "") for i, n, t in q("SELECT id, name, town FROM venue")}
        self.cues: dict[int, list[tuple]] = {}
        for row in q("SELECT id, production_id, number, name, rig_slug, procedure_slug FROM cue "
                     "ORDER BY production_id, position, id"):
            self.cues.setdefault(row[1], []).append(row)
        self.casts: dict[int, dict[str, list[int]]] = {}
        for cue_id, name, pid in q("SELECT cue_id, cast_name, person_id FROM cue_cast ORDER BY cast_name, person_id"):
            self.casts.setdefault(cue_id, {}).setdefault(name, []).append(pid)
        self.performances = {row[0]: row for row in q(
            "SELECT id, production_id, venue_id, starts_at, stage_manager_id FROM performance ORDER BY starts_at, id")}
        self.night_riders: dict[tuple[int, int], list[int]] = {}
        for perf, cue, pid in q("SELECT performance_id, cue_id, person_id FROM performance_rider ORDER BY person_id"):
            self.night_riders.setdefault((perf, cue), []).append(pid)
        self.night_crew: dict[tuple[int, int], list[tuple[str, int]]] = {}
        crew_sql = "SELECT performance_id, cue_id, role, person_id FROM performance_crew"
        crew_args: list = []
        if only is not None:
            crew_sql += " WHERE performance_id = ?"
            crew_args.append(only)
        for perf, cue, role, pid in q(crew_sql + " ORDER BY role, person_id", crew_args):
            self.night_crew.setdefault((perf, cue), []).append((role, pid))
        self._since: dict[tuple[int, int], datetime | None] | None = None
        self.readiness = _care_hook(db, "readiness_reasons")
        rehearsal_records = _care_hook(db, "rehearsal_records")
        self.rehearsals = None
        if rehearsal_records is not None:
            self.rehearsals = [Rehearsal(int(p), str(r), _as_datetime(at)) for p, r, at in rehearsal_records(db)]

    def cast_since(self, perf_id: int, cue_id: int) -> datetime | None:
        """Start of the last earlier performance whose riders on this cue differ from tonight's."""
        if self._since is None:
            self._since = {}
            last: dict[tuple[int, int], tuple[tuple, datetime | None, datetime]] = {}
            for pid, (_, production, _, starts_at, _) in self.performances.items():  # in date order
                when = datetime.fromisoformat(starts_at)
                for row in self.cues.get(production, []):
                    cue = row[0]
                    cast = tuple(self.night_riders.get((pid, cue), ()))
                    previous = last.get((production, cue))
                    if previous is None:
                        since = None
                    elif previous[0] != cast:
                        since = previous[2]
                    else:
                        since = previous[1]
                    last[(production, cue)] = (cast, since, when)
                    self._since[(pid, cue)] = since
        return self._since.get((perf_id, cue_id))

    def performance_input(self, perf_id: int) -> PerformanceInput:
        _, production_id, venue_id, starts_at, sm = self.performances[perf_id]
        production, company = self.productions[production_id]
        cues = []
        for cue_id, _, number, name, rig, proc in self.cues.get(production_id, []):
            riders = tuple(self.riders[p] for p in self.night_riders.get((perf_id, cue_id), []) if p in self.riders)
            crew = tuple((role, self.crew.get(p) or CrewMember(p, self.names[p]))
                         for role, p in self.night_crew.get((perf_id, cue_id), []))
            casts = {n: tuple(self.riders[p] for p in ids if p in self.riders)
                     for n, ids in self.casts.get(cue_id, {}).items()}
            readiness: tuple = ()
            rig_model = self.rigs.get(rig) if rig else None
            extra = []
            if rig and rig in self.rig_errors:
                extra.append(self.rig_errors[rig])
            if rig and self.readiness is not None:
                load = None
                if rig_model is not None:  # the same cached solve the verdicts use
                    load = self.solver.as_dict(self.solver(rig_model, [r.mass_kg for r in riders]))
                readiness = tuple(self.readiness(self.db, perf_id, CueNight(
                    cue_id=cue_id, number=number, name=name, rig=rig, riders=tuple(r.name for r in riders),
                    crew=tuple(Assignment(role, p.person_id, p.name) for role, p in crew), load=load)))
            cue = CueInput(cue_id=cue_id, number=number, name=name, rig=rig, rig_model=rig_model,
                           procedure=self.procedures.get(proc) if proc else None, procedure_slug=proc,
                           riders=riders, crew=crew, casts=casts,
                           cast_since=self.cast_since(perf_id, cue_id) if rig else None,
                           readiness=readiness)
            cues.append(cue)
        pool = tuple(sorted(self.crew.values(), key=lambda c: c.name))
        # Rig care's lines for the sheet's cover (each rig's reasons once), when installed.
        cover = _care_hook(self.db, "performance_readiness") if self.readiness is not None else None
        return PerformanceInput(performance_id=perf_id, production=production, company=company,
                                venue=self.venues[venue_id], starts_at=datetime.fromisoformat(starts_at),
                                stage_manager=self.names.get(sm) if sm else None, cues=tuple(cues),
                                crew_pool=pool, readiness=tuple(cover(self.db, perf_id)) if cover else ())


@functools.lru_cache(maxsize=32)
def _parse_rig_cached(text: str, source: str):
    """Parse a stored rig text once per process (rig models are frozen; a new text is a new key)."""
    from showops.rig import parse_rig

    return parse_rig(text, source=source)


def parse_stored_rig(text: str, slug: str):
    """Return the rig model of a stored rig version's text, parsed once per process.

    Parsing reads every quantity through the unit library (tens of ms); a season's
    verdicts ask for the same few texts thousands of times.

    :raises RigFileError: when the stored text is not a valid rig file (for this build).
    """
    return _parse_rig_cached(text, f"{slug} (stored)")


@functools.lru_cache(maxsize=32)
def _read_procedure_cached(text: str, source: str):
    return read_procedure(text, source)


def _as_datetime(value) -> datetime:
    if isinstance(value, datetime):
        return value.replace(tzinfo=None)
    if isinstance(value, date):
        return datetime(value.year, value.month, value.day)
    return datetime.fromisoformat(str(value).replace("Z", "+00:00")).replace(tzinfo=None)


def _care_hook(db, name: str):
    """Return ``showops.store.care.<name>`` when rig care is installed, else None."""
    try:
        module = importlib.import_module("showops.store.care")
    except ImportError:
        return None
    return getattr(module, name, None)


def read_procedure(text: str, source: str):
    """Parse a stored procedure with ``showops.procedure.parse_procedure`` when installed;
    otherwise read only its header lines (title, rig, roles, signal), enough for the
    staffing rules, with no steps.
    """
    try:
        module = importlib.import_module("showops.procedure")
        parse = getattr(module, "parse_procedure")
    except (ImportError, AttributeError):
        parse = None
    if parse is not None:
        return parse(text, source=source)
    from showops.procedure.model import REST_STATE, Procedure

    roles = tuple(r.strip() for r in (_header(text, "Roles") or "").split(",") if r.strip())
    return Procedure(title=_header(text, "Title") or source, rig=_header(text, "Rig") or "", roles=roles,
                     signal=_header(text, "Signal"), start=dict(REST_STATE), phases=(), text=text, source=source)


def load_night_plan(db: sqlite_utils.Database, performance_ref: Any, *, solver: RigSolver | None = None) -> NightPlan:
    """Return the :class:`NightPlan` of one performance with every cue's verdict.

    :param performance_ref: the performance's id, or ``YYYY-MM-DD HH:MM`` / ``YYYY-MM-DDTHH:MM``.
    :raises NotFound: when there is no such performance.
    """
    perf_id = find_performance(db, performance_ref)
    season = _Season(db, solver, only=perf_id)
    return night_plan(season.performance_input(perf_id), rehearsals=season.rehearsals, solver=season.solver)


def night_plans(db: sqlite_utils.Database, *, solver: RigSolver | None = None) -> list[NightPlan]:
    """Return every performance's :class:`NightPlan`, in date order (solves shared across the season)."""
    season = _Season(db, solver)
    return [night_plan(season.performance_input(pid), rehearsals=season.rehearsals, solver=season.solver)
            for pid in season.performances]


def night_loads(db: sqlite_utils.Database, performance_ids: Iterable[int] | None = None, *,
                solver: RigSolver | None = None, memo: dict | None = None) -> list[tuple[int, str, str, str, dict]]:
    """Each rig cue's load on each performance, without the rest of the night's plan.

    Returns ``(performance id, cue number, cue name, rig slug, load)`` in date order and
    each production's cue order, where ``load`` is the rig solver's ``to_dict()`` for
    that night's riders on the cue: the ``load`` :func:`night_plans` puts in each
    :class:`CueNight` (the rig's latest stored version, the performance's riders who are
    on the performers' list), read and solved without the plan's other rules (crew,
    training, readiness, rehearsal), which a season's load margins do not need. A cue
    whose rig has no readable file gives no row. One solve per rig version and riders'
    masses (``solver``); equal solves give the same dict. No one person's mass is in it.

    :param performance_ids: the performances wanted (default every one).
    :param memo: the solves' dicts (``id(result) -> (result, dict)``); a caller that
        keeps it, with the same ``solver``, gets the same dict for the same solve on
        every call.
    """
    solver = solver or RigSolver()
    q = db.execute
    rigs: dict[str, Any] = {}
    for slug, text in q("SELECT rig_slug, text FROM rig_version WHERE id IN "
                        "(SELECT MAX(id) FROM rig_version GROUP BY rig_slug)"):
        try:
            rigs[slug] = parse_stored_rig(text, slug)
        except (RigFileError, ShowopsError):  # the plan says why; there is no load to show
            continue
    cues: dict[int, list[tuple]] = {}
    for cue_id, production, number, name, rig in q("SELECT id, production_id, number, name, rig_slug FROM cue "
                                                   "ORDER BY production_id, position, id"):
        if rig and rig in rigs:
            cues.setdefault(production, []).append((cue_id, number, name, rig))
    masses = dict(q("SELECT person_id, mass_kg FROM performer"))
    riders: dict[tuple[int, int], list[float]] = {}
    for perf, cue, pid in q("SELECT performance_id, cue_id, person_id FROM performance_rider ORDER BY person_id"):
        if pid in masses:
            riders.setdefault((perf, cue), []).append(masses[pid])
    wanted = None if performance_ids is None else set(performance_ids)
    loads: dict[int, tuple[Any, dict]] = {} if memo is None else memo
    out = []
    for perf, production in q("SELECT id, production_id FROM performance ORDER BY starts_at, id"):
        if wanted is not None and perf not in wanted:
            continue
        for cue_id, number, name, rig in cues.get(production, ()):
            result = solver(rigs[rig], riders.get((perf, cue_id), ()))
            found = loads.get(id(result))
            if found is None or found[0] is not result:
                found = loads[id(result)] = (result, solver.as_dict(result))
            out.append((perf, number, name, rig, found[1]))
    return out


def plan_to_dict(plan: NightPlan) -> dict:
    """Return the ``performances --json`` object of a plan (no one person's mass)."""
    return {
        "id": plan.performance_id,
        "starts_at": plan.starts_at.isoformat(timespec="minutes"),
        "production": plan.production,
        "venue": plan.venue,
        "stage_manager": plan.stage_manager,
        "cues": [{
            "number": c.number, "name": c.name, "rig": c.rig, "verdict": c.verdict,
            "reasons": [r.to_dict() for r in c.reasons], "fixes": list(c.fixes),
            "riders": list(c.riders),
            "rider_total_kg": None if c.rider_total_kg is None else round(c.rider_total_kg, 1),
            "crew": [{"role": a.role, "person_id": a.person_id, "name": a.name} for a in c.crew],
            "rig_version": c.rig_version, "procedure_version": c.procedure_version,
        } for c in plan.cues],
    }


# --------------------------------------------------------------------------- instance state


def holds_data(db: sqlite_utils.Database) -> bool:
    """True when the instance holds any production, person or performance."""
    return any(db.execute(f"SELECT 1 FROM {t} LIMIT 1").fetchone() for t in ("production", "person", "performance"))


def is_demo(db: sqlite_utils.Database) -> bool:
    """True when the data in this instance was made by ``showops demo``."""
    return bool(db.execute("SELECT 1 FROM instance_meta WHERE key = 'demo'").fetchone())


def mark_demo(db: sqlite_utils.Database, made_at: str) -> None:
    db["instance_meta"].upsert({"key": "demo", "value": made_at}, pk="key")


# --------------------------------------------------------------------------- the demo


def repo_procedures_dir():
    """The ``procedures/`` folder that ships with showops (rig files under ``rigs/``)."""
    from pathlib import Path

    import showops

    return Path(showops.__file__).resolve().parent.parent / "procedures"


def install_demo(db: sqlite_utils.Database, today: date, *, procedures_dir=None):
    """Build the invented demo scenario (``showops.show.demo_data``) into ``db``.

    Rigs whose file is missing or of a kind this build cannot read are skipped (their
    cues too) and named in ``DemoIds.skipped``; a rig without its procedure file is
    installed and its cues carry "no procedure on file" until the file is there.
    All in one transaction.

    :param today: the day the demo is built for; performances are placed relative to it.
    :returns: :class:`~showops.show.demo_data.DemoIds`.
    """
    from datetime import timedelta
    from pathlib import Path

    from showops.show import demo_data as d

    folder = Path(procedures_dir) if procedures_dir is not None else repo_procedures_dir()
    with transaction(db):
        skipped: list[str] = []
        rigs: list[str] = []
        procedures: dict[str, str | None] = {}
        for rig, proc in d.RIGS.items():
            path = folder / "rigs" / f"{rig}.toml"
            if not path.exists():
                skipped.append(f"rig {rig}: no file {path}")
                continue
            try:
                add_rig(db, rig, path.read_text(encoding="utf-8"), source=str(path))
            except ShowopsError as exc:
                skipped.append(f"rig {rig}: {exc}")
                continue
            rigs.append(rig)
            proc_path = folder / f"{proc}.md"
            if proc_path.exists():
                add_procedure(db, proc, proc_path.read_text(encoding="utf-8"), rig=rig)
                procedures[rig] = proc
            else:
                skipped.append(f"procedure {proc}: no file {proc_path} (its cues are blocked until it is added)")
                procedures[rig] = None

        production = add_production(db, d.PRODUCTION, d.COMPANY)
        venue = add_venue(db, d.VENUE, d.TOWN)
        ids: dict[str, int] = {}
        for p in d.PERFORMERS:
            ids[p.name] = add_performer(db, p.name, p.mass_kg, [r for r in p.rigs if r in rigs])
        for c in d.CREW:
            trainings = [(rig, today - timedelta(days=ago), by, today + timedelta(days=until))
                         for rig, (ago, by, until) in c.training.items() if rig in rigs]
            ids[c.name] = add_crew_member(db, c.name, c.roles, trainings, today=today)

        cues: dict[str, int] = {}
        for cue in d.CUES:
            if cue.rig and cue.rig not in rigs:
                continue
            cues[cue.number] = add_cue(db, production, cue.number, cue.name, rig=cue.rig,
                                       procedure=procedures.get(cue.rig) if cue.rig else None)
            for cast_name, names in cue.casts.items():
                set_cue_cast(db, cues[cue.number], cast_name, [ids[n] for n in names])

        performances = []
        for index, (offset, hhmm) in enumerate(d.PERFORMANCES):
            day = today + timedelta(days=offset)
            hour, minute = map(int, hhmm.split(":"))
            perf = add_performance(db, production, venue, datetime(day.year, day.month, day.day, hour, minute),
                                   stage_manager_id=ids[d.STAGE_MANAGER], allow_past=True)
            performances.append(perf)
            for cue in d.CUES:
                if cue.number not in cues or not cue.rig:
                    continue
                cast = d.CAST_CHANGES.get(index, {}).get(cue.number, "first")
                cast_riders(db, perf, cues[cue.number], [ids[n] for n in cue.casts[cast]])
                for role, names in d.CREW_BY_RIG[cue.rig].items():
                    names = d.CREW_CHANGES.get(index, {}).get((cue.number, role), names)
                    assign_crew(db, perf, cues[cue.number], role, [ids[n] for n in names])
        mark_demo(db, _now())
    return d.DemoIds(
        production_id=production, venue_id=venue, performances=tuple(performances),
        past_performance=performances[d.PAST_PERFORMANCE], heavy_performance=performances[d.HEAVY_PERFORMANCE],
        expired_training_performance=performances[d.EXPIRED_PERFORMANCE], cues=cues, people=ids,
        stage_manager=ids[d.STAGE_MANAGER], understudy=ids[d.UNDERSTUDY], expired_crew=ids[d.EXPIRED_CREW],
        rigs=tuple(rigs), skipped=tuple(skipped))



# --------------------------------------------------------------------------- import and export


class ImportRefused(ShowopsError):
    """A CSV import took nothing because some rows are bad; ``problems`` lists each one."""

    def __init__(self, source: str, problems: list[str]):
        self.source = source
        self.problems = problems
        rows = "row" if len(problems) == 1 else "rows"
        super().__init__(f"{source}: nothing imported; {len(problems)} {rows} could not be taken:\n"
                         + "\n".join(f"  {p}" for p in problems))


@dataclass(frozen=True)
class ImportReport:
    """What an import added: ``added`` names each new person (never a mass)."""

    source: str
    rows: int
    added: tuple[str, ...]


CAST_COLUMNS = ("name", "mass_kg")
CAST_OPTIONAL = ("rigs",)
CREW_COLUMNS = ("name", "roles")
CREW_OPTIONAL = ("rig", "trained_on", "trained_by", "expires_on")


def _read_csv(text: str, source: str, required: tuple[str, ...], optional: tuple[str, ...]):
    import csv
    import io

    if text.startswith("\ufeff"):  # a spreadsheet's UTF-8 byte-order mark
        text = text[1:]
    reader = csv.DictReader(io.StringIO(text))
    header = [h.strip().lower() for h in (reader.fieldnames or [])]
    if not header:
        raise ValidationError(source, "empty file (the first line names the columns: "
                                      + ", ".join(required + optional) + ")")
    missing = [c for c in required if c not in header]
    if missing:
        raise ValidationError(source, f"missing column{'s' if len(missing) > 1 else ''} {', '.join(missing)} "
                                      f"(the first line must name: {', '.join(required)}; "
                                      f"optional: {', '.join(optional)})")
    unknown = [h for h in header if h and h not in required + optional]
    if unknown:
        raise ValidationError(source, f"unknown column{'s' if len(unknown) > 1 else ''} {', '.join(unknown)} "
                                      f"(columns are: {', '.join(required + optional)})")
    reader.fieldnames = header
    rows = []
    for number, row in enumerate(reader, start=2):  # row 1 is the header, as a spreadsheet counts
        if None in row:
            rows.append((number, None))  # more cells than columns
            continue
        if not any((v or "").strip() for v in row.values()):
            continue
        rows.append((number, {k: (v or "").strip() for k, v in row.items()}))
    return rows


def import_cast_csv(db: sqlite_utils.Database, text: str, *, source: str = "cast.csv") -> ImportReport:
    """Import performers from CSV (columns ``name``, ``mass_kg``; optional ``rigs``,
    separated by ``;``), all or nothing.

    :raises ValidationError: for a missing or unknown column.
    :raises ImportRefused: listing every row that could not be taken (nothing is written).
    """
    rows = _read_csv(text, source, CAST_COLUMNS, CAST_OPTIONAL)
    problems, seen, good = [], {}, []
    known_rigs = set(rig_slugs(db))
    for number, row in rows:
        if row is None:
            problems.append(f"row {number}: more cells than columns")
            continue
        try:
            name = _name(row["name"])
            mass = parse_mass(row["mass_kg"])
            rigs = _list(row.get("rigs"))
            bad = [r for r in rigs if r not in known_rigs]
            if bad:
                raise ValidationError("rigs", f"unknown rig {bad[0]!r} (known: {', '.join(sorted(known_rigs)) or 'none yet'})")
            key = name.casefold()
            if key in seen:
                raise ValidationError("name", f"{name!r} is also on row {seen[key]} (duplicate performer)")
            seen[key] = number
            pid = _person_id(db, name)
            if pid is not None and db.execute("SELECT 1 FROM performer WHERE person_id = ?", [pid]).fetchone():
                raise ValidationError("name", f"{name!r} is already on the performers' list (duplicate performer)")
            good.append((name, mass, rigs))
        except ValidationError as exc:
            problems.append(f"row {number}, {exc}")
    if problems:
        raise ImportRefused(source, problems)
    with transaction(db):
        for name, mass, rigs in good:
            add_performer(db, name, mass, rigs)
    return ImportReport(source, len(rows), tuple(n for n, _, _ in good))


def import_crew_csv(db: sqlite_utils.Database, text: str, *, source: str = "crew.csv",
                    today: date | None = None) -> ImportReport:
    """Import crew from CSV, all or nothing: columns ``name``, ``roles`` (separated by
    ``;``); optional ``rig``, ``trained_on``, ``trained_by``, ``expires_on`` (ISO dates).
    A person trained on several rigs has one row per rig, with the same roles.

    :raises ValidationError: for a missing or unknown column.
    :raises ImportRefused: listing every row that could not be taken (nothing is written).
    """
    today = today or date.today()
    rows = _read_csv(text, source, CREW_COLUMNS, CREW_OPTIONAL)
    problems: list[str] = []
    people_rows: dict[str, dict] = {}
    for number, row in rows:
        if row is None:
            problems.append(f"row {number}: more cells than columns")
            continue
        try:
            name = _name(row["name"])
            roles = [r.lower() for r in _list(row["roles"])]
            if not roles:
                raise ValidationError("roles", "empty (give the roles this person may take, e.g. brake; lifters)")
            for role in roles:
                if not re.fullmatch(r"[a-z][a-z -]{0,39}", role):
                    raise ValidationError("roles", f"{role!r} is not a role name (letters, e.g. brake, lifters, spotter)")
            key = name.casefold()
            entry = people_rows.get(key)
            if entry is None:
                pid = _person_id(db, name)
                if pid is not None and db.execute("SELECT 1 FROM crew_role WHERE person_id = ?", [pid]).fetchone():
                    raise ValidationError("name", f"{name!r} is already on the crew list (duplicate crew member)")
                entry = people_rows[key] = {"name": name, "roles": roles, "row": number, "trainings": {}}
            elif set(roles) != set(entry["roles"]):
                raise ValidationError("roles", f"{', '.join(roles)} differs from row {entry['row']} "
                                               f"({', '.join(entry['roles'])}) for {name!r}")
            training_cells = [row.get(c, "") for c in CREW_OPTIONAL]
            if any(training_cells):
                rig = row.get("rig", "")
                if not rig:
                    raise ValidationError("rig", "empty, but training dates are given (name the rig)")
                for column in ("trained_on", "trained_by", "expires_on"):
                    if not row.get(column):
                        raise ValidationError(column, f"empty (training on {rig} needs trained_on, trained_by and expires_on)")
                if rig in entry["trainings"]:
                    raise ValidationError("rig", f"{name!r} already has training on {rig} on row "
                                                 f"{entry['trainings'][rig][0]} (duplicate training)")
                checked = _training(db, (rig, row["trained_on"], row["trained_by"], row["expires_on"]), today)
                entry["trainings"][rig] = (number, checked)
            elif entry["row"] != number:
                raise ValidationError("name", f"{name!r} is also on row {entry['row']} (duplicate crew member)")
        except ValidationError as exc:
            problems.append(f"row {number}, {exc}")
    if problems:
        raise ImportRefused(source, problems)
    with transaction(db):
        for entry in people_rows.values():
            add_crew_member(db, entry["name"], entry["roles"], [t for _, t in entry["trainings"].values()],
                            today=today)
    return ImportReport(source, len(rows), tuple(e["name"] for e in people_rows.values()))


VERDICT_COLUMNS = ("performance_id", "starts_at", "cue", "name", "rig", "verdict", "rider_total_kg",
                   "riders", "reasons", "fixes", "rig_version", "procedure_version")


def verdict_rows(plans: Iterable[NightPlan]) -> list[dict]:
    """One flat row per cue per performance, for CSV (reasons and fixes joined by `` | ``)."""
    out = []
    for plan in plans:
        for c in plan.cues:
            out.append({
                "performance_id": plan.performance_id, "starts_at": plan.starts_at.isoformat(timespec="minutes"),
                "cue": c.number, "name": c.name, "rig": c.rig or "", "verdict": c.verdict,
                "rider_total_kg": "" if c.rider_total_kg is None else f"{c.rider_total_kg:.0f}",
                "riders": "; ".join(c.riders), "reasons": " | ".join(r.text for r in c.reasons),
                "fixes": " | ".join(c.fixes), "rig_version": c.rig_version or "",
                "procedure_version": c.procedure_version or "",
            })
    return out


def to_csv(rows: list[dict], columns: Sequence[str]) -> str:
    """Return ``rows`` as CSV text with a header line."""
    import csv
    import io

    buffer = io.StringIO()
    writer = csv.DictWriter(buffer, fieldnames=list(columns), lineterminator="\n")
    writer.writeheader()
    for row in rows:
        writer.writerow({k: row.get(k, "") if row.get(k) is not None else "" for k in columns})
    return buffer.getvalue()


CUE_COLUMNS = ("number", "name")
CUE_OPTIONAL = ("rig", "procedure")


def import_cues_csv(db: sqlite_utils.Database, text: str, production_id: int, *,
                    source: str = "cues.csv") -> ImportReport:
    """Append cues to a production's cue list from CSV (columns ``number``, ``name``;
    optional ``rig``, ``procedure``), in the file's order, all or nothing.

    :raises ValidationError: for a missing or unknown column.
    :raises NotFound: when the production does not exist.
    :raises ImportRefused: listing every row that could not be taken (nothing is written).
    """
    if not db.execute("SELECT 1 FROM production WHERE id = ?", [production_id]).fetchone():
        raise NotFound(f"production {production_id} does not exist")
    rows = _read_csv(text, source, CUE_COLUMNS, CUE_OPTIONAL)
    known_rigs = set(rig_slugs(db))
    known_procedures = {r[0] for r in db.execute("SELECT slug FROM procedure")}
    taken = {r[0] for r in db.execute("SELECT number FROM cue WHERE production_id = ?", [production_id])}
    problems, seen, good = [], {}, []
    for number, row in rows:
        if row is None:
            problems.append(f"row {number}: more cells than columns")
            continue
        try:
            cue_number = row["number"]
            if not cue_number:
                raise ValidationError("number", "empty (give the cue number, e.g. 12 or 12a)")
            name = _name(row["name"], "name")
            rig = row.get("rig") or None
            procedure = row.get("procedure") or None
            if rig and rig not in known_rigs:
                raise ValidationError("rig", f"unknown rig {rig!r} (known: {', '.join(sorted(known_rigs)) or 'none yet'})")
            if procedure and procedure not in known_procedures:
                raise ValidationError("procedure", f"unknown procedure {procedure!r} "
                                                   f"(known: {', '.join(sorted(known_procedures)) or 'none yet'})")
            if rig and not procedure and rig in known_procedures:
                procedure = rig  # a rig's own procedure carries its slug
            if cue_number in seen:
                raise ValidationError("number", f"cue {cue_number} is also on row {seen[cue_number]}")
            if cue_number in taken:
                raise ValidationError("number", f"cue {cue_number} already exists in this production")
            seen[cue_number] = number
            good.append((cue_number, name, rig, procedure))
        except ValidationError as exc:
            problems.append(f"row {number}, {exc}")
    if problems:
        raise ImportRefused(source, problems)
    with transaction(db):
        for cue_number, name, rig, procedure in good:
            add_cue(db, production_id, cue_number, name, rig=rig, procedure=procedure)
    return ImportReport(source, len(rows), tuple(f"{n} {name}" for n, name, _, _ in good))
