"""store.live: the service functions over a real database (the runner's rules are in
test_runner.py; here: the rows they write, idempotency, refusals logged, the writer
path, the demo's past performance)."""

from __future__ import annotations

import threading
from datetime import datetime, timedelta, timezone

import pytest

from showops.errors import NotFound
from showops.live.runner import Action
from showops.store import open_db
from showops.store import live as svc
from showops.store.log import LogWriter, iter_log, log_head, verify_log

T0 = datetime(2026, 11, 20, 19, 30, tzinfo=timezone.utc)


def count(db, event=None):
    sql = "SELECT count(*) FROM step_log" + (" WHERE event = ?" if event else "")
    return db.conn.execute(sql, (event,) if event else ()).fetchone()[0]


def test_a_confirmation_is_written_with_everything_the_log_names(db, lift):
    svc.start_cue(db, 1, 3, lift.SM, plans=lift.plans, now=T0)
    key = lift.STEPS[0].key
    out = svc.confirm_step(db, 1, 3, lift.BRAKE, key, client_id="tap-1", device_at="2026-11-20T19:30:04.500+00:00",
                           plans=lift.plans, now=T0 + timedelta(seconds=5))
    row = out.row
    assert (row["event"], row["person_id"], row["person_name"], row["role"], row["device"]) == (
        "step_confirmed", 2, "Margit Oduya", "brake", "phone-2")
    assert (row["performance_id"], row["cue_id"], row["step_key"], row["step_number"]) == (1, 3, key, 1)
    assert row["at_utc"] == "2026-11-20T19:30:05.000+00:00"
    assert row["device_at"] == "2026-11-20T19:30:04.500+00:00"
    assert row["procedure_version"] == lift.PROCEDURE.version and row["rig_version"] == "r" * 64
    assert verify_log(db) is None


def test_a_retried_confirmation_returns_the_first_row_and_writes_nothing(db, lift):
    svc.start_cue(db, 1, 3, lift.SM, plans=lift.plans)
    key = lift.STEPS[0].key
    first = svc.confirm_step(db, 1, 3, lift.BRAKE, key, client_id="tap-9", plans=lift.plans)
    n = count(db)
    again = svc.confirm_step(db, 1, 3, lift.BRAKE, key, client_id="tap-9", plans=lift.plans)
    assert again.rows == first.rows and count(db) == n


def test_a_refusal_is_logged_then_raised_and_a_retry_re_raises_it(db, lift):
    svc.start_cue(db, 1, 3, lift.SM, plans=lift.plans)
    key = lift.STEPS[2].key
    with pytest.raises(svc.RefusedAttempt, match="cannot be done yet: step 1 'Brake on' is not confirmed") as info:
        svc.confirm_step(db, 1, 3, lift.BRAKE, key, client_id="tap-x", plans=lift.plans)
    assert info.value.status == 409 and info.value.code == "out_of_order"
    assert info.value.row["event"] == "refused" and count(db, "refused") == 1
    with pytest.raises(svc.RefusedAttempt, match="not confirmed"):
        svc.confirm_step(db, 1, 3, lift.BRAKE, key, client_id="tap-x", plans=lift.plans)
    assert count(db, "refused") == 1


def test_the_blocked_cue_cannot_start_and_the_refusal_is_kept(db, lift):
    with pytest.raises(svc.RefusedAttempt, match="blocked tonight and cannot be started: riders 151 kg"):
        svc.start_cue(db, 2, 5, lift.SM, plans=lift.plans)
    (row,) = iter_log(db)
    assert row["event"] == "refused" and '"code":"blocked"' in row["detail"]
    status = svc.night_status(db, 2, plans=lift.plans)
    cue5 = next(c for c in status["cues"] if c["number"] == "5")
    assert cue5["verdict"] == "blocked" and cue5["status"] == "waiting" and cue5["fixes"] == ["cast the first pair"]


@pytest.mark.parametrize("performance_id, cue_id, message", [
    (9, 3, "no performance 9"), (1, 77, "cue 77 is not in the running order of performance 1")])
def test_unknown_performance_or_cue_is_not_found_and_writes_nothing(db, lift, performance_id, cue_id, message):
    with pytest.raises(NotFound, match=message):
        svc.confirm_step(db, performance_id, cue_id, lift.BRAKE, "x", plans=lift.plans)
    assert count(db) == 0


def test_signoff_rules(db, lift):
    svc.start_cue(db, 1, 3, lift.SM, plans=lift.plans)
    with pytest.raises(svc.RefusedAttempt, match="Only the stage manager signs off"):
        svc.signoff(db, 1, lift.BRAKE, plans=lift.plans)
    with pytest.raises(svc.RefusedAttempt, match="cue 3 'Blossom rise' is still running"):
        svc.signoff(db, 1, lift.SM, plans=lift.plans)
    svc.hold(db, 1, 3, lift.SPOTTER, plans=lift.plans)
    svc.end_cue(db, 1, 3, lift.SM, note="rider unwell: stop procedure", plans=lift.plans)
    row = svc.signoff(db, 1, lift.SM, note="show down", plans=lift.plans).row
    assert row["event"] == "signoff" and '"status":"ended"' in row["detail"]
    with pytest.raises(svc.RefusedAttempt, match="already signed off"):
        svc.signoff(db, 1, lift.SM, plans=lift.plans)
    assert svc.night_status(db, 1, plans=lift.plans)["signed_off"] is True
    assert count(db, "refused") == 3


def test_status_views_follow_the_log(db, lift):
    svc.start_cue(db, 1, 3, lift.SM, plans=lift.plans)
    svc.confirm_step(db, 1, 3, lift.BRAKE, lift.STEPS[0].key, plans=lift.plans)
    cue = svc.cue_status(db, 1, 3, person_id=5, plans=lift.plans)
    assert cue["status"] == "running" and cue["steps"][0]["status"] == "confirmed"
    assert cue["steps"][0]["confirmed_by"] == {"person_id": 2, "name": "Margit Oduya"}
    assert cue["next"] == {"action": "check", "step": lift.STEPS[0].key, "why": "check Brake on"}
    night = svc.night_status(db, 1, person_id=5, plans=lift.plans)
    assert night["live_cue"] == 3 and night["last_log_id"] == log_head(db)[0]
    assert [c["status"] for c in night["cues"]] == [None, "running", "waiting", "waiting"]


def test_the_writer_decides_concurrent_taps_one_at_a_time(tmp_path, lift):
    """Eight devices press the same step at once: exactly one confirmation, seven refusals."""
    instance = tmp_path / "i"
    writer = LogWriter(instance)
    live = svc.Live(writer=writer, plans=lift.plans)
    db = open_db(instance)
    live.act(db, 1, 3, Action("start", lift.SM))
    results, barrier = [], threading.Barrier(8)

    def tap(i):
        barrier.wait()
        try:
            live.act(db_i := open_db(instance), 1, 3, Action("confirm", lift.BRAKE, lift.STEPS[0].key,
                                                              client_id=f"press-{i}"))
            results.append("ok")
        except svc.RefusedAttempt as exc:
            results.append(exc.code)
        finally:
            db_i.conn.close()

    threads = [threading.Thread(target=tap, args=(i,)) for i in range(8)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    writer.close()
    assert sorted(results) == ["already_done"] * 7 + ["ok"]
    assert count(db, "step_confirmed") == 1 and count(db, "refused") == 7
    assert verify_log(db) is None


def test_the_demo_past_performance_runs_through_the_service(db, lift):
    counts = svc.run_demo_performance(db, 2, plans=lift.plans)
    rows = list(iter_log(db))
    events = [r["event"] for r in rows]
    assert counts["rows"] == len(rows) and counts["cues"] == 2
    assert events.count("cue_completed") == 2 and events[-1] == "signoff"
    refused = [r for r in rows if r["event"] == "refused"]
    assert {'"code":"out_of_order"' in r["detail"] for r in refused} == {True, False}
    assert any('"code":"blocked"' in r["detail"] for r in refused)
    assert events.count("hold") == 1 and events.count("resume") == 1
    assert sum('"overdue_s"' in (r["detail"] or "") for r in rows) == 1
    # that night's times, in order, after the curtain
    times = [r["at_utc"] for r in rows]
    assert times == sorted(times) and times[0] > "2026-11-20T19:30" and times[-1] < "2026-11-20T23:00"
    assert all(r["device_at"] for r in rows)
    assert verify_log(db) is None
    with pytest.raises(Exception, match="has already been run in the show log"):
        svc.run_demo_performance(db, 2, plans=lift.plans)


def test_the_real_demo_past_performance_runs_every_cue_it_can(tmp_path):
    """The shipped demo (show's install_demo, care's seed_demo_care) through the real
    night plan: every rig cue that is not blocked runs to completion, every blocked
    one is a refused start, the deviations the audit looks for are there, the night
    is signed off and the chain verifies."""
    from datetime import date

    from showops.store import show as store
    from showops.store.care import seed_demo_care

    db = open_db(tmp_path / "demo")
    today = date(2026, 12, 2)
    ids = store.install_demo(db, today)
    seed_demo_care(db, ids, today)
    plan = store.load_night_plan(db, ids.past_performance)
    counts = svc.run_demo_performance(db, ids.past_performance)
    runnable = [c for c in plan.rig_cues if c.verdict != "blocked" and c.procedure is not None]
    blocked = [c for c in plan.rig_cues if c.verdict == "blocked"]
    assert len(runnable) >= 2, "the demo's past performance should run its lift cues"
    assert counts["cues"] == len(runnable) == count(db, "cue_completed")
    rows = list(iter_log(db, performance_id=ids.past_performance))
    refused = [r for r in rows if r["event"] == "refused"]
    assert sum('"code":"blocked"' in r["detail"] for r in refused) == len(blocked)
    assert sum('"code":"out_of_order"' in r["detail"] for r in refused) == 1
    assert count(db, "hold") == count(db, "resume") == 1
    assert sum('"overdue_s"' in (r["detail"] or "") for r in rows) == 1
    assert count(db, "signoff") == 1
    runner_rows = [r for r in rows if r["cue_id"] is not None]
    assert runner_rows[0]["at_utc"] > plan.starts_at.astimezone(timezone.utc).isoformat()[:16]
    assert verify_log(db) is None


def test_hold_from_a_screen_still_showing_another_cue_stops_the_running_one(db, lift):
    # Safety, common practice (no source): HOLD stops what is moving, even when the
    # pressing screen has not yet caught up with the cue the caller just started.
    svc.start_cue(db, 1, 8, lift.SM, plans=lift.plans)
    row = svc.hold(db, 1, 3, lift.SPOTTER, plans=lift.plans).row
    assert row["event"] == "hold" and row["cue_id"] == 8
    assert svc.cue_status(db, 1, 8, plans=lift.plans)["status"] == "held"
    with pytest.raises(svc.RefusedAttempt, match="Only the stage manager resumes"):
        svc.resume(db, 1, 8, lift.SPOTTER, plans=lift.plans)
    svc.resume(db, 1, 8, lift.SM, plans=lift.plans)
    assert svc.cue_status(db, 1, 8, plans=lift.plans)["status"] == "running"
