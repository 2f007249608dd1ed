"""The only writer of ``step_log``, its checker, and the group-commit writer thread.

Every record that must be kept and trusted (a confirmation, a refusal, a HOLD, an
inspection, an incident) is one row appended by :func:`append_events`. It computes
the hash chain (:mod:`showops.live.chain`), keeps ``client_id`` idempotent (a retried
confirmation returns the row written the first time) and commits with
``PRAGMA synchronous=FULL``: when it returns, the rows are on disk.

The web app appends through a :class:`LogWriter`: one thread with its own connection
that runs everything waiting in one transaction and one disk sync (group commit),
then answers each caller. One fsync per batch instead of one per confirmation is how
a durable log keeps up with a crowd of phones.
"""

from __future__ import annotations

import queue
import threading
from concurrent.futures import Future, TimeoutError as FutureTimeout
from datetime import datetime, timezone
from pathlib import Path
from typing import Any, Callable, Iterable, Iterator, Mapping, TypeVar

import sqlite3

import sqlite_utils

from showops.errors import ShowopsError, ValidationError
from showops.live.chain import CHAIN_FIELDS, GENESIS, Problem, canonical_detail, link_hash, verify_chain

#: The columns an event may set (``id``, ``prev_hash`` and ``hash`` are the writer's).
EVENT_FIELDS: tuple[str, ...] = tuple(f for f in CHAIN_FIELDS if f != "id")
COLUMNS: tuple[str, ...] = CHAIN_FIELDS + ("prev_hash", "hash")
_SELECT = "SELECT " + ", ".join(COLUMNS) + " FROM step_log"
_INSERT = ("INSERT INTO step_log (" + ", ".join(COLUMNS) + ") VALUES ("
           + ", ".join("?" for _ in COLUMNS) + ")")

T = TypeVar("T")


def utc_now() -> str:
    """Return the server's time as ISO 8601 UTC with milliseconds (``...+00:00``)."""
    return datetime.now(timezone.utc).isoformat(timespec="milliseconds")


def _row(values: tuple) -> dict[str, Any]:
    return dict(zip(COLUMNS, values))


def _clean(event: Mapping[str, Any]) -> dict[str, Any]:
    unknown = set(event) - set(EVENT_FIELDS)
    if unknown:
        raise ValidationError("event", f"unknown step_log field(s) {sorted(unknown)}; "
                                       f"allowed: {', '.join(EVENT_FIELDS)}")
    name = event.get("event")
    if not isinstance(name, str) or not name.strip():
        raise ValidationError("event", f"every log row needs an event name, got {name!r}")
    row = {f: event.get(f) for f in EVENT_FIELDS}
    row["detail"] = canonical_detail(row["detail"])
    if row["at_utc"] is None:
        row["at_utc"] = utc_now()
    for f, value in row.items():
        if value is not None and (isinstance(value, bool) or not isinstance(value, (str, int))):
            raise ValidationError(f, f"must be text, an integer or empty, not {value!r}")
    return row


def append_in_transaction(conn: sqlite3.Connection, events: Iterable[Mapping[str, Any]]) -> list[dict[str, Any]]:
    """Append ``events`` inside the transaction already open on ``conn``.

    The caller commits (and so decides durability). Use :func:`append_events` unless
    you are the :class:`LogWriter` or already hold a write transaction.

    :returns: one row per event, in order; for an event whose ``client_id`` is
        already in the log, the row written the first time.
    :raises ValidationError: for an unknown field or a value of the wrong type.
    """
    if not conn.in_transaction:
        raise ShowopsError("append_in_transaction needs an open write transaction")
    last_id, last_hash = conn.execute("SELECT last_id, last_hash FROM step_log_head WHERE one = 1").fetchone()
    out: list[dict[str, Any]] = []
    for event in events:
        row = _clean(event)
        if row["client_id"] is not None:
            found = conn.execute(_SELECT + " WHERE client_id = ?", (row["client_id"],)).fetchone()
            if found is not None:
                out.append(_row(found))
                continue
        row["id"] = last_id + 1
        row["prev_hash"] = last_hash
        row["hash"] = link_hash(last_hash, row)
        conn.execute(_INSERT, tuple(row[c] for c in COLUMNS))
        last_id, last_hash = row["id"], row["hash"]
        out.append({c: row[c] for c in COLUMNS})
    conn.execute("UPDATE step_log_head SET last_id = ?, last_hash = ? WHERE one = 1", (last_id, last_hash))
    return out


def append_events(db: sqlite_utils.Database, events: Iterable[Mapping[str, Any]]) -> list[dict[str, Any]]:
    """Append ``events`` to the log in one transaction, durably, and return their rows.

    Each event is a mapping of :data:`EVENT_FIELDS` (``event`` required; ``at_utc``
    defaults to the server's time now; ``detail`` may be a dict, stored as canonical
    JSON). When ``db`` is already inside a transaction the rows join it and the
    caller's COMMIT makes them durable; otherwise this commits with
    ``synchronous=FULL`` before it returns.

    :returns: one row dict per event (every column, ``hash`` included); a
        ``client_id`` seen before returns the original row and writes nothing.
    :raises ValidationError: for an unknown field or a value of the wrong type
        (nothing is written).
    """
    events = list(events)
    return durably(db, lambda wdb: append_in_transaction(wdb.conn, events))


def durably(db: sqlite_utils.Database, work: Callable[[sqlite_utils.Database], T]) -> T:
    """Run ``work(db)`` in one ``BEGIN IMMEDIATE`` transaction committed with
    ``synchronous=FULL`` (rolled back if it raises), or inside the transaction the
    caller already holds, whose COMMIT then decides durability.
    """
    conn = db.conn
    if conn.in_transaction:
        return work(db)
    before = conn.execute("PRAGMA synchronous").fetchone()[0]
    if before != 2:
        conn.execute("PRAGMA synchronous=FULL")
    try:
        conn.execute("BEGIN IMMEDIATE")
        try:
            result = work(db)
        except BaseException:
            conn.execute("ROLLBACK")
            raise
        conn.execute("COMMIT")
    finally:
        if before != 2:
            conn.execute(f"PRAGMA synchronous={before}")
    return result


def log_head(db: sqlite_utils.Database) -> tuple[int, str]:
    """Return the last row id and hash the writer committed (``(0, GENESIS)`` when empty)."""
    row = db.conn.execute("SELECT last_id, last_hash FROM step_log_head WHERE one = 1").fetchone()
    return (row[0], row[1]) if row else (0, GENESIS)


def iter_log(db: sqlite_utils.Database, *, performance_id: int | None = None, cue_id: int | None = None,
             after_id: int = 0, events: Iterable[str] | None = None) -> Iterator[dict[str, Any]]:
    """Yield log rows in id order, optionally for one performance/cue or after an id."""
    where, params = ["id > ?"], [after_id]
    if performance_id is not None:
        where.append("performance_id = ?")
        params.append(performance_id)
    if cue_id is not None:
        where.append("cue_id = ?")
        params.append(cue_id)
    if events is not None:
        names = list(events)
        where.append("event IN (" + ", ".join("?" for _ in names) + ")")
        params.extend(names)
    for values in db.conn.execute(_SELECT + " WHERE " + " AND ".join(where) + " ORDER BY id", params):
        yield _row(values)


def find_by_client_id(db: sqlite_utils.Database, client_id: str) -> dict[str, Any] | None:
    """Return the row written with ``client_id``, or ``None``."""
    found = db.conn.execute(_SELECT + " WHERE client_id = ?", (client_id,)).fetchone()
    return _row(found) if found else None


def verify_log(db: sqlite_utils.Database) -> Problem | None:
    """Check the whole log against its hash chain and its head, in one snapshot.

    :returns: the first :class:`~showops.live.chain.Problem` (naming the row that was
        changed, inserted or removed), or ``None`` when every row is intact.
    """
    conn = db.conn
    own_txn = not conn.in_transaction
    if own_txn:
        conn.execute("BEGIN")  # a read snapshot: head and rows from the same moment
    try:
        head = conn.execute("SELECT last_id, last_hash FROM step_log_head WHERE one = 1").fetchone()
        head_id, head_hash = head if head else (0, GENESIS)
        rows = (_row(v) for v in conn.execute(_SELECT + " ORDER BY id"))
        return verify_chain(rows, head_id=head_id, head_hash=head_hash)
    finally:
        if own_txn:
            conn.execute("COMMIT")


class LogBusy(ShowopsError):
    """The log writer did not answer in time (the disk is stalled or the queue is long)."""

    status = 503


class WriterClosed(ShowopsError):
    """The log writer has stopped; nothing more can be recorded through it."""

    status = 503


class LogWriter:
    """A single writer thread that commits everything waiting in one transaction.

    :meth:`submit` queues a unit of work, a function of the writer's database that
    may read and must write only through :func:`append_in_transaction` or plain
    ``conn.execute``. The thread takes every unit waiting, runs each in its own
    savepoint (a unit that raises is rolled back alone and its caller gets the
    exception), commits the batch with ``synchronous=FULL``, and only then resolves
    the futures: an answered caller's rows are on disk. Units run one at a time in
    queue order, so a unit's decision sees every earlier unit's rows.
    """

    def __init__(self, instance: str | Path, *, max_batch: int = 512):
        from showops.store.db import open_db

        self.instance = Path(instance)
        self.max_batch = max_batch
        self._queue: queue.SimpleQueue = queue.SimpleQueue()
        self._closed = False
        self._ready = threading.Event()
        self._db: sqlite_utils.Database | None = None
        self._error: BaseException | None = None
        self._inflight: list = []
        self._open_db = open_db
        #: batches committed and units run, for the bench
        self.batches = 0
        self.units = 0
        #: ``PRAGMA data_version`` as the writer's connection last saw it: it changes only
        #: when *another* connection commits (SQLite documentation, "PRAGMA data_version"),
        #: never for the log rows the writer appends, so caches of other tables can key on it.
        self.outside_version = 0
        self._thread = threading.Thread(target=self._run, name="showops-log-writer", daemon=True)
        self._thread.start()
        self._ready.wait()
        if self._error is not None:
            raise self._error

    def submit(self, work: Callable[[sqlite_utils.Database], T]) -> Future:
        """Queue ``work``; the future resolves after the batch holding it is committed."""
        if self._closed:
            raise WriterClosed(f"the log writer is closed{f': {self._error}' if self._error else ''}")
        future: Future = Future()
        self._queue.put((work, future))
        return future

    def run(self, work: Callable[[sqlite_utils.Database], T], timeout: float | None = 30) -> T:
        """Submit ``work`` and wait for its committed result (re-raising its exception).

        :raises LogBusy: when no answer came within ``timeout`` seconds (the work may
            still be committed later: retry with the same client id).
        """
        future = self.submit(work)
        try:
            return future.result(timeout)
        except FutureTimeout:
            raise LogBusy(f"the log did not answer within {timeout:g} s; the action may still be recorded: "
                          f"send it again with the same client id") from None

    def append(self, events: Iterable[Mapping[str, Any]]) -> list[dict[str, Any]]:
        """Append ``events`` through the writer (see :func:`append_events`)."""
        events = list(events)
        return self.run(lambda db: append_in_transaction(db.conn, events))

    def close(self, timeout: float = 10) -> None:
        """Finish what is queued, stop the thread and close its connection."""
        if self._closed:
            return
        self._closed = True
        self._queue.put(None)
        self._thread.join(timeout)

    def _run(self) -> None:
        try:
            self._db = self._open_db(self.instance, synchronous="FULL")
        except BaseException as exc:  # reported to the constructor
            self._error = exc
            self._ready.set()
            return
        self._ready.set()
        try:
            self._loop(self._db.conn)
        except BaseException as exc:  # never leave a caller waiting on a dead thread
            self._closed = True
            self._error = exc
            stopped = WriterClosed(f"the log writer stopped: {exc}")
            for _work, future in self._inflight:
                if not future.done():
                    future.set_exception(stopped)
            while True:
                try:
                    item = self._queue.get_nowait()
                except queue.Empty:
                    break
                if item is not None:
                    item[1].set_exception(stopped)
        finally:
            self._db.conn.close()

    def _loop(self, conn: sqlite3.Connection) -> None:
        stop = False
        while not stop:
            try:
                item = self._queue.get(timeout=0.25)
            except queue.Empty:
                self.outside_version = conn.execute("PRAGMA data_version").fetchone()[0]
                continue
            batch = []
            while True:
                if item is None:
                    stop = True
                    break
                batch.append(item)
                if len(batch) >= self.max_batch:
                    break
                try:
                    item = self._queue.get_nowait()
                except queue.Empty:
                    break
            if batch:
                self._inflight = batch
                self._commit(conn, batch)
                self._inflight = []
                self.outside_version = conn.execute("PRAGMA data_version").fetchone()[0]

    def _commit(self, conn: sqlite3.Connection, batch: list) -> None:
        outcomes: list[tuple[bool, Any]] = []
        try:
            conn.execute("BEGIN IMMEDIATE")
            for work, _future in batch:
                conn.execute("SAVEPOINT unit")
                try:
                    result = work(self._db)
                except BaseException as exc:
                    conn.execute("ROLLBACK TO unit")
                    conn.execute("RELEASE unit")
                    outcomes.append((False, exc))
                else:
                    conn.execute("RELEASE unit")
                    outcomes.append((True, result))
            conn.execute("COMMIT")
        except BaseException as exc:
            if conn.in_transaction:
                conn.execute("ROLLBACK")
            for _work, future in batch:
                future.set_exception(exc)
            return
        self.batches += 1
        self.units += len(batch)
        for (ok, value), (_work, future) in zip(outcomes, batch):
            if ok:
                future.set_result(value)
            else:
                future.set_exception(value)
