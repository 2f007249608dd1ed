"""The stored deviation scan (``audit_scan``): each performance's scan is kept with its
last log row id, the scan's version and whether its night was over, and is used only
while all of these hold. A stale scan would show a safety officer an old picture of
the log, so each way it goes stale is tested here: new rows, a new rule set, a night
that ends, a procedure version that arrives after the rows naming it.

The rules' own sources are in tests/audit/test_deviations.py; the data is invented
fixture data (Kestrel Yard Dance Company, conftest.py).
"""

from __future__ import annotations

import hashlib
import sqlite3
from datetime import datetime, timedelta, timezone
from pathlib import Path

import pytest
import sqlite_utils

from showops.store import audit as store

REPO = Path(__file__).resolve().parents[2]

NOW = datetime(2026, 11, 23, 12, 0, tzinfo=timezone.utc)


def stored(inst) -> dict[int, tuple]:
    return {pid: (last, version, finished) for pid, last, version, finished in inst.db.execute(
        "SELECT performance_id, last_row_id, scan_version, finished FROM audit_scan")}


def last_row(inst, pid) -> int:
    return inst.db.execute("SELECT max(id) FROM step_log WHERE performance_id = ?", [pid]).fetchone()[0]


def as_dicts(devs):
    return [d.to_dict() for d in devs]


@pytest.fixture
def scanned(monkeypatch):
    """Record the performances whose rows each scan reads."""
    calls: list[set] = []
    real = store.scan_rows

    def spy(rows, *args, **kwargs):
        rows = list(rows)
        calls.append({r[7] for r in rows})    # deviations.COLUMNS[7] is performance_id
        return real(rows, *args, **kwargs)

    monkeypatch.setattr(store, "scan_rows", spy)
    store.forget_scans_in_memory()
    yield calls
    store.forget_scans_in_memory()


def test_each_performance_is_stored_and_read_back_without_a_scan(inst, scanned, monkeypatch):
    inst.run_cue(inst.perf1, hold=True)
    inst.run_cue(inst.perf2, signoff=False)
    first = store.find_deviations(inst.db, now=NOW)
    assert {d.rule for d in first} == {"hold", "signoff_missing"} and scanned
    assert stored(inst) == {inst.perf1: (last_row(inst, inst.perf1), store.scan_version(), 1),
                            inst.perf2: (last_row(inst, inst.perf2), store.scan_version(), 1)}
    # a fresh process: nothing in memory, and no scan may run
    store.forget_scans_in_memory()
    monkeypatch.setattr(store, "scan_rows", lambda *a, **k: pytest.fail("scanned although nothing changed"))
    assert as_dicts(store.find_deviations(inst.db, now=NOW)) == as_dicts(first)
    assert as_dicts(store.find_deviations(inst.db, [inst.perf2], now=NOW)) == \
        [d.to_dict() for d in first if d.performance_id == inst.perf2]


def test_what_is_read_back_is_what_was_stored(inst, scanned):
    # proves the stored rows are used: a stored scan changed by hand comes back as it is
    inst.run_cue(inst.perf1, hold=True)
    assert any(d.rule == "hold" for d in store.find_deviations(inst.db, now=NOW))
    inst.db.execute("UPDATE audit_scan SET deviations = '[]' WHERE performance_id = ?", [inst.perf1])
    store.forget_scans_in_memory()
    assert store.find_deviations(inst.db, now=NOW) == []


def test_new_rows_rescan_their_performance_only(inst, scanned):
    inst.run_cue(inst.perf1)
    inst.run_cue(inst.perf2)
    inst.run_cue(inst.perf3)
    assert store.find_deviations(inst.db, now=NOW) == []
    scanned.clear()
    # the memory of the last answer must not hide the new row either
    hold = inst.log("hold", performance=inst.perf2, cue=inst.cue_lift, role="spotter", person=(2, "Tomas Ilve"),
                    detail={"note": "rider signalled"})
    devs = store.find_deviations(inst.db, now=NOW)
    assert [(d.rule, d.row_ids) for d in devs] == [("hold", (hold["id"],)), ("signoff_missing", (hold["id"],))]
    assert scanned == [{inst.perf2}]
    assert stored(inst)[inst.perf2][0] == hold["id"]
    assert stored(inst)[inst.perf1][0] == last_row(inst, inst.perf1) < hold["id"]


def test_a_new_rule_set_rescans_every_performance(inst, scanned, monkeypatch):
    inst.run_cue(inst.perf1, hold=True)
    found = store.find_deviations(inst.db, now=NOW)
    inst.db.execute("UPDATE audit_scan SET deviations = '[]'")   # what older rules might have found
    store.forget_scans_in_memory()
    assert store.find_deviations(inst.db, now=NOW) == []
    monkeypatch.setattr(store, "_SCAN_VERSION", "other-rules")
    assert store.scan_version() == "other-rules"
    scanned.clear()
    assert as_dicts(store.find_deviations(inst.db, now=NOW)) == as_dicts(found)   # memory is not used either
    assert scanned == [{inst.perf1}] and stored(inst)[inst.perf1][1] == "other-rules"


def test_the_scan_version_follows_the_rules_and_the_procedure_reader():
    from showops.audit.deviations import RULE_SET_VERSION

    version = store.scan_version()
    assert version.startswith(RULE_SET_VERSION + "-") and len(RULE_SET_VERSION) == 12
    int(RULE_SET_VERSION, 16)


def test_a_night_that_ends_is_scanned_again(inst, scanned):
    # a cue left open is judged only once the night is over (12 hours after its start)
    inst.log("cue_started", performance=inst.perf1, cue=inst.cue_lift, role="caller")
    during = datetime(2026, 11, 20, 21, 0, tzinfo=timezone.utc)
    assert store.find_deviations(inst.db, [inst.perf1], now=during) == []
    assert stored(inst)[inst.perf1][2] == 0
    after = store.find_deviations(inst.db, [inst.perf1], now=during + timedelta(hours=12))
    assert {d.rule for d in after} == {"cue_left_open", "signoff_missing"}
    assert stored(inst)[inst.perf1][2] == 1


def test_a_procedure_version_stored_after_its_rows_is_used(inst, scanned):
    from showops.store import show as s

    text = (REPO / "procedures/orchard-lift.md").read_text(encoding="utf-8")
    version = hashlib.sha256(text.encode("utf-8")).hexdigest()
    # "Standby" allows 60 s (its `hold` in procedures/orchard-lift.md); this one took 70 s
    inst.log("cue_started", performance=inst.perf1, cue=inst.cue_lift, role="caller", version=version)
    inst.log("step_confirmed", performance=inst.perf1, cue=inst.cue_lift, step="Brake release/Standby", number=5,
             role="caller", dt=70.0, version=version)
    before = {d.rule for d in store.find_deviations(inst.db, now=NOW)}
    assert "past_hold_time" not in before          # the version is not on record: nothing to judge by
    assert s.add_procedure(inst.db, "orchard-lift", text) == version
    after = {d.rule for d in store.find_deviations(inst.db, now=NOW)}
    assert "past_hold_time" in after and "unconfirmed_at_completion" not in after


def test_a_scan_that_cannot_be_stored_is_still_answered(inst, scanned):
    inst.run_cue(inst.perf1, hold=True)
    path = inst.db.execute("PRAGMA database_list").fetchone()[2]
    readonly = sqlite_utils.Database(sqlite3.connect(f"file:{path}?mode=ro", uri=True, isolation_level=None))
    try:
        assert {d.rule for d in store.find_deviations(readonly, now=NOW)} == {"hold"}
        assert not readonly.conn.in_transaction
    finally:
        readonly.conn.close()
    assert stored(inst) == {}


def test_the_warm_up_stores_every_performance(inst, scanned, tmp_path, monkeypatch):
    inst.run_cue(inst.perf1, hold=True)
    inst.run_cue(inst.perf2)
    monkeypatch.setattr(store, "_MARGIN_CACHE", {})
    assert store.warm_audit(inst.folder) == 1
    assert set(stored(inst)) == {inst.perf1, inst.perf2}
    # the margins of every performance are remembered: the page's call finds them
    assert len(store._MARGIN_CACHE) == 1
    margins = store._margins(inst.db, [inst.perf1, inst.perf2, inst.perf3])
    assert margins and len(store._MARGIN_CACHE) == 1
    assert store.warm_audit(tmp_path / "no-instance-here") is None


def test_serve_starts_the_warm_up_in_the_background(inst, monkeypatch):
    import threading

    from click.testing import CliRunner

    from showops.cli import main
    from showops.web import close_stores

    started, apps = threading.Event(), []
    monkeypatch.setattr(store, "warm_audit", lambda instance: started.set())
    monkeypatch.setattr("waitress.serve", lambda app, **kw: apps.append(app))
    result = CliRunner().invoke(main, ["serve", "--instance", str(inst.folder)])
    assert result.exit_code == 0, result.output
    assert started.wait(10)
    close_stores(apps[0])


def test_a_page_opened_during_the_warm_up_waits_for_its_scan(inst, monkeypatch):
    import threading
    import time

    from showops.store import open_db

    inst.run_cue(inst.perf1, hold=True)
    store.forget_scans_in_memory()
    calls, real = [], store.scan_rows

    def slow(rows, *args, **kwargs):
        calls.append(1)
        time.sleep(0.3)                 # the second caller arrives while this scan runs
        return real(rows, *args, **kwargs)

    monkeypatch.setattr(store, "scan_rows", slow)
    answers = []

    def open_page():
        db = open_db(inst.folder)
        try:
            answers.append([d.to_dict() for d in store.find_deviations(db, now=NOW)])
        finally:
            db.conn.close()

    threads = [threading.Thread(target=open_page) for _ in range(2)]
    for t in threads:
        t.start()
        time.sleep(0.05)
    for t in threads:
        t.join(10)
    assert len(answers) == 2 and answers[0] == answers[1] and answers[0]
    assert len(calls) == 1
    store.forget_scans_in_memory()


def test_rows_of_no_performance_or_another_keep_the_remembered_answer(inst, scanned, monkeypatch):
    inst.run_cue(inst.perf1, hold=True)
    inst.run_cue(inst.perf2)
    first = store.find_deviations(inst.db, [inst.perf1], now=NOW)
    inst.log("sign_in", performance=None, role="crew")               # a sign-in names no performance
    inst.log("hold", performance=inst.perf2, cue=inst.cue_lift, role="spotter", person=(2, "Tomas Ilve"))
    real, reread = store._last_rows, []
    monkeypatch.setattr(store, "_last_rows", lambda *a: reread.append(a) or real(*a))
    assert as_dicts(store.find_deviations(inst.db, [inst.perf1], now=NOW)) == as_dicts(first)
    assert reread == []
    # a row of the performance asked for is seen at once
    hold = inst.log("hold", performance=inst.perf1, cue=inst.cue_lift, role="spotter", person=(2, "Tomas Ilve"))
    assert hold["id"] in {d.row_ids[0] for d in store.find_deviations(inst.db, [inst.perf1], now=NOW)}
