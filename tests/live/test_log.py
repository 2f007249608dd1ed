"""store.log: the only writer of step_log, its idempotency and its tamper evidence.

Tampering is done the way someone at the SQLite prompt would: drop the append-only
triggers, then edit, delete or insert one row. Every case must make verify_log name
the row (the rule: common practice for hash-chained logs, no source).
"""

from __future__ import annotations

import sqlite3
import threading

import pytest

from showops.errors import ValidationError
from showops.live.chain import GENESIS, link_hash
from showops.store import open_db
from showops.store.log import (LogWriter, append_events, find_by_client_id, iter_log, log_head,
                               verify_log)

N = 12


def unlock(db):
    db.conn.execute("DROP TRIGGER step_log_no_update")
    db.conn.execute("DROP TRIGGER step_log_no_delete")


def row(db, i):
    return next(iter_log(db, after_id=i - 1))


def test_rows_chain_from_genesis_and_verify(filled):
    rows = list(iter_log(filled))
    assert [r["id"] for r in rows] == list(range(1, N + 1))
    assert rows[0]["prev_hash"] == GENESIS
    assert all(b["prev_hash"] == a["hash"] for a, b in zip(rows, rows[1:]))
    assert all(link_hash(r["prev_hash"], r) == r["hash"] for r in rows)
    assert log_head(filled) == (N, rows[-1]["hash"])
    assert verify_log(filled) is None


def test_the_table_refuses_updates_and_deletes(filled):
    with pytest.raises(sqlite3.IntegrityError, match="append-only"):
        filled.conn.execute("UPDATE step_log SET person_name = 'x' WHERE id = 2")
    with pytest.raises(sqlite3.IntegrityError, match="append-only"):
        filled.conn.execute("DELETE FROM step_log WHERE id = 2")


@pytest.mark.parametrize("k", range(1, N + 1))
@pytest.mark.parametrize("column, value", [
    ("person_name", "Someone Else"), ("at_utc", "2026-11-20T20:00:00.000+00:00"), ("detail", None),
    ("event", "step_confirmed"), ("step_number", 99),
])
def test_editing_any_row_is_named(filled, k, column, value):
    before = row(filled, k)[column]
    if before == value:
        value = "changed"
    unlock(filled)
    filled.conn.execute(f"UPDATE step_log SET {column} = ? WHERE id = ?", (value, k))
    problem = verify_log(filled)
    assert problem is not None and problem.row_id == k and problem.kind == "changed", problem


@pytest.mark.parametrize("k", range(1, N + 1))
def test_deleting_any_row_is_named(filled, k):
    unlock(filled)
    filled.conn.execute("DELETE FROM step_log WHERE id = ?", (k,))
    problem = verify_log(filled)
    assert (problem.row_id, problem.kind) == (k, "removed"), problem


@pytest.mark.parametrize("k", range(1, N + 1))
def test_deleting_a_row_and_renumbering_the_rest_is_named(filled, k):
    unlock(filled)
    conn = filled.conn
    conn.execute("DELETE FROM step_log WHERE id = ?", (k,))
    conn.execute("UPDATE step_log SET id = -id WHERE id > ?", (k,))
    conn.execute("UPDATE step_log SET id = -id - 1 WHERE id < 0")
    conn.execute("UPDATE step_log_head SET last_id = last_id - 1")
    problem = verify_log(filled)
    assert (problem.row_id, problem.kind) == (k, "removed"), problem


def forged(prev_hash, i, valid=True):
    r = {"id": i, "at_utc": "2026-11-20T19:45:00.000+00:00", "event": "check_confirmed", "person_name": "Forger",
         "prev_hash": prev_hash}
    r["hash"] = link_hash(prev_hash, r) if valid else "f" * 64
    return r


def insert(conn, r):
    cols = ", ".join(r)
    conn.execute(f"INSERT INTO step_log ({cols}) VALUES ({', '.join('?' for _ in r)})", tuple(r.values()))


@pytest.mark.parametrize("k", range(1, N + 2))
@pytest.mark.parametrize("valid", [True, False], ids=["hash-recomputed", "hash-made-up"])
def test_inserting_a_row_anywhere_is_named(filled, k, valid):
    unlock(filled)
    conn = filled.conn
    prev = GENESIS if k == 1 else row(filled, k - 1)["hash"]
    conn.execute("UPDATE step_log SET id = -id WHERE id >= ?", (k,))  # make room, keep the rows
    conn.execute("UPDATE step_log SET id = -id + 1 WHERE id < 0")
    insert(conn, forged(prev, k, valid))
    problem = verify_log(filled)
    assert problem.row_id == k and problem.kind in ("inserted", "changed"), problem


def test_appending_with_client_id_is_idempotent(db):
    first = append_events(db, [{"event": "step_confirmed", "client_id": "tap-1", "person_name": "Ada"}])[0]
    again = append_events(db, [{"event": "step_confirmed", "client_id": "tap-1", "person_name": "Ada"}])[0]
    assert again == first
    assert db.conn.execute("SELECT count(*) FROM step_log").fetchone()[0] == 1
    same_batch = append_events(db, [{"event": "go", "client_id": "tap-2"}, {"event": "go", "client_id": "tap-2"}])
    assert same_batch[0]["id"] == same_batch[1]["id"] == 2
    assert find_by_client_id(db, "tap-2")["id"] == 2
    assert verify_log(db) is None


@pytest.mark.parametrize("event, message", [
    ({"event": ""}, "needs an event name"),
    ({"person": "Ada", "event": "go"}, "unknown step_log field"),
    ({"event": "go", "step_number": 1.5}, "must be text, an integer or empty"),
])
def test_bad_events_write_nothing(db, event, message):
    append_events(db, [{"event": "sign_in"}])
    with pytest.raises(ValidationError, match=message):
        append_events(db, [{"event": "go"}, event])
    assert log_head(db)[0] == 1
    assert verify_log(db) is None


def test_append_restores_the_connection_and_commits_with_full_sync(db):
    assert db.conn.execute("PRAGMA synchronous").fetchone()[0] == 1  # NORMAL as opened
    append_events(db, [{"event": "sign_in"}])
    assert db.conn.execute("PRAGMA synchronous").fetchone()[0] == 1
    assert not db.conn.in_transaction


def test_two_connections_appending_at_once_keep_one_chain(tmp_path, make_events):
    instance = tmp_path / "i"
    open_db(instance).conn.close()

    def worker(seed):
        own = open_db(instance)
        for event in make_events(40, seed):
            append_events(own, [event])
        own.conn.close()

    threads = [threading.Thread(target=worker, args=(s,)) for s in range(4)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    db = open_db(instance)
    assert log_head(db)[0] == 160
    assert verify_log(db) is None


def test_the_writer_commits_batches_isolates_failures_and_keeps_order(tmp_path):
    instance = tmp_path / "i"
    writer = LogWriter(instance)
    try:
        futures = [writer.submit(lambda d, i=i: __import__("showops.store.log", fromlist=["x"])
                                 .append_in_transaction(d.conn, [{"event": "go", "step_number": i}]))
                   for i in range(50)]

        def broken(d):
            d.conn.execute("INSERT INTO step_log_head (one, last_id, last_hash) VALUES (1, 0, 'x')")

        bad = writer.submit(broken)
        rows = [f.result(10)[0] for f in futures]
        with pytest.raises(sqlite3.IntegrityError):
            bad.result(10)
        assert [r["step_number"] for r in rows] == list(range(50))
        assert writer.append([{"event": "sign_in"}])[0]["id"] == 51
        assert writer.batches < writer.units  # at least one batch held several units
    finally:
        writer.close()
    db = open_db(instance)
    assert verify_log(db) is None


def test_the_writer_commits_with_full_sync_in_wal(tmp_path):
    # "Acknowledged means durable": WAL with synchronous=FULL syncs the WAL on every
    # commit (SQLite documentation, "PRAGMA synchronous": FULL = 2).
    writer = LogWriter(tmp_path / "i")
    try:
        pragmas = writer.run(lambda d: (d.conn.execute("PRAGMA synchronous").fetchone()[0],
                                        d.conn.execute("PRAGMA journal_mode").fetchone()[0]))
        assert pragmas == (2, "wal")
    finally:
        writer.close()
    with pytest.raises(Exception, match="closed"):
        writer.submit(lambda d: None)


def test_a_slow_writer_answers_busy_and_the_work_still_lands_once(tmp_path):
    import time as _time

    from showops.store.log import LogBusy, append_in_transaction

    writer = LogWriter(tmp_path / "i")
    try:
        def slow(d):
            _time.sleep(0.3)
            return append_in_transaction(d.conn, [{"event": "go", "client_id": "slow-1"}])

        with pytest.raises(LogBusy, match="send it again with the same client id"):
            writer.run(slow, timeout=0.05)
        again = writer.append([{"event": "go", "client_id": "slow-1"}])
        assert again[0]["id"] == 1  # the retry found the first one
    finally:
        writer.close()


def test_a_writer_that_dies_fails_its_callers_instead_of_hanging(tmp_path, monkeypatch):
    from showops.store.log import WriterClosed

    writer = LogWriter(tmp_path / "i")
    gate = threading.Event()

    def boom(conn, batch):
        gate.wait(5)
        raise RuntimeError("disk gone")

    monkeypatch.setattr(writer, "_commit", boom)
    first = writer.submit(lambda d: None)
    second = writer.submit(lambda d: None)
    gate.set()
    writer._thread.join(5)
    assert not writer._thread.is_alive()
    for future in (first, second):  # in the failed batch or still queued: both told
        with pytest.raises(WriterClosed, match="the log writer stopped: disk gone"):
            future.result(5)
    with pytest.raises(WriterClosed, match="closed: disk gone"):
        writer.submit(lambda d: None)
