"""Open the SQLite database and bring its schema up to date.

Schema changes are numbered migrations, each applied in its own transaction and
recorded in ``_migrations`` so an older database upgrades in place. Every module
``showops/store/schema_*.py`` contributes a ``MIGRATIONS`` list; numbers are global
and each area has its own range (see DEVELOPERS.md), so two areas never collide.
"""

from __future__ import annotations

import importlib
import pkgutil
import sqlite3
from dataclasses import dataclass
from datetime import datetime, timezone
from pathlib import Path
from typing import Callable, Union

import sqlite_utils

from showops.errors import ShowopsError

DB_FILENAME = "showops.db"


@dataclass(frozen=True)
class Migration:
    """One schema change: ``apply`` is SQL text (a script) or a function of the db."""

    number: int
    name: str
    apply: Union[str, Callable[[sqlite_utils.Database], None]]


def all_migrations() -> list[Migration]:
    """Return every migration of every ``schema_*`` module, in number order.

    :raises ShowopsError: when two migrations share a number (a programming error).
    """
    import showops.store as package

    found: dict[int, Migration] = {}
    for info in pkgutil.iter_modules(package.__path__):
        if not info.name.startswith("schema_"):
            continue
        module = importlib.import_module(f"showops.store.{info.name}")
        for migration in module.MIGRATIONS:
            if migration.number in found:
                raise ShowopsError(f"migration {migration.number} defined twice "
                                   f"({found[migration.number].name}, {migration.name})")
            found[migration.number] = migration
    return [found[n] for n in sorted(found)]


def migrate(db: sqlite_utils.Database) -> list[int]:
    """Apply the migrations not yet recorded; return the numbers applied."""
    conn = db.conn
    conn.execute("CREATE TABLE IF NOT EXISTS _migrations (number INTEGER PRIMARY KEY, "
                 "name TEXT NOT NULL, applied_at TEXT NOT NULL)")
    done = {row[0] for row in conn.execute("SELECT number FROM _migrations")}
    applied = []
    for migration in all_migrations():
        if migration.number in done:
            continue
        conn.execute("BEGIN IMMEDIATE")  # one transaction per migration, DDL included
        try:
            if isinstance(migration.apply, str):
                for statement in _statements(migration.apply):
                    conn.execute(statement)
            else:
                migration.apply(db)
            conn.execute("INSERT INTO _migrations (number, name, applied_at) VALUES (?, ?, ?)",
                         (migration.number, migration.name, datetime.now(timezone.utc).isoformat()))
        except BaseException:
            conn.execute("ROLLBACK")
            raise
        conn.execute("COMMIT")
        applied.append(migration.number)
    return applied


def _statements(script: str) -> list[str]:
    # executescript() would COMMIT on its own; split so the migration stays one transaction.
    statements, buffer = [], ""
    for line in script.splitlines(keepends=True):
        buffer += line
        if sqlite3.complete_statement(buffer):
            if buffer.strip():
                statements.append(buffer.strip())
            buffer = ""
    if buffer.strip():
        statements.append(buffer.strip())
    return statements


def open_db(instance: str | Path, *, create: bool = True, synchronous: str = "NORMAL") -> sqlite_utils.Database:
    """Open ``instance/showops.db`` and migrate it.

    :param create: when false, raise instead of creating a missing database.
    :param synchronous: ``NORMAL`` for most work; the live log's writer uses ``FULL``
        so an acknowledged confirmation is on disk.
    :raises ShowopsError: when ``create`` is false and there is no database yet.
    """
    folder = Path(instance)
    path = folder / DB_FILENAME
    if not path.exists():
        if not create:
            raise ShowopsError(f"no showops database in {folder}/ (run `showops demo` or pass --instance)")
        folder.mkdir(parents=True, exist_ok=True)
    # Autocommit mode: every transaction is opened explicitly (BEGIN ... COMMIT), so
    # DDL in a migration and a batch of log rows are each exactly one transaction.
    conn = sqlite3.connect(str(path), check_same_thread=False, isolation_level=None)
    conn.execute("PRAGMA journal_mode=WAL")
    conn.execute("PRAGMA foreign_keys=ON")
    conn.execute(f"PRAGMA synchronous={synchronous}")
    conn.execute("PRAGMA busy_timeout=5000")
    db = sqlite_utils.Database(conn)
    migrate(db)
    return db


class transaction:
    """``with transaction(db): ...``: one explicit transaction, rolled back on error.

    Use it for every write that must be all-or-nothing (an import, a casting change,
    a batch of log rows).
    """

    def __init__(self, db: sqlite_utils.Database):
        self.conn = db.conn

    def __enter__(self):
        self.conn.execute("BEGIN IMMEDIATE")
        return self.conn

    def __exit__(self, exc_type, exc, tb):
        self.conn.execute("ROLLBACK" if exc_type else "COMMIT")
        return False
