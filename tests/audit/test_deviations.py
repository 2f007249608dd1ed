"""Each deviation rule, one named case each, over invented log rows.

The rules' sources are named in showops/audit/deviations.py (RULES): the two-person
rule (DGUV Information 215-320; FAA AC 120-71), complete checklists (Degani and
Wiener, NASA CR-177549), the procedure's own `hold` times; the late-record threshold
and the sign-off rule are common practice, no source. The rows are invented fixture
data in the step_log column layout of DEVELOPERS.md.
"""

from __future__ import annotations

import json
from datetime import datetime, timedelta, timezone

import pytest

from showops.audit.deviations import (COLUMNS, RULES, ProcedureFacts, StepFacts, counts_by_rule, deviation_order,
                                      refusal_class, scan, scan_rows)

PROC = ProcedureFacts("v1", "Orchard lift, rider up and down", (
    StepFacts("Board/Brake on", 1, "Brake on", by="brake", check="spotter", sets=("brake on",)),
    StepFacts("Board/Rider boards", 2, "Rider boards", by="rider", check="spotter", sets=("rider aboard",)),
    StepFacts("Ride/Release brake", 3, "Release brake", by="brake", check="spotter", hold_s=20,
              sets=("brake off",)),
    StepFacts("Ride/Raise", 4, "Raise", by="lifters", hold_s=30, sets=("platform up",)),
    StepFacts("Ride/Lower", 5, "Lower", by="lifters", hold_s=30, sets=("platform down",)),
    StepFacts("Ride/Brake on", 6, "Brake on", by="brake", check="spotter", hold_s=10, sets=("brake on",)),
))
PEOPLE = {"brake": (1, "Ada"), "spotter": (2, "Tomas"), "rider": (3, "Mira"), "lifters": (4, "Oskar"),
          "caller": (5, "June")}
T0 = datetime(2026, 11, 21, 20, 0, tzinfo=timezone.utc)


class Log:
    """Builds rows as the live runner would write them (ids in order, server times)."""

    def __init__(self):
        self.rows, self.t = [], T0

    def add(self, event, role="caller", *, pid=7, cid=70, step=None, dt=5.0, device_lag=None, detail=None,
            person=None):
        self.t += timedelta(seconds=dt)
        person_id, name = person or PEOPLE[role]
        number = next((s.number for s in PROC.steps if s.key == step), None)
        row = {"id": len(self.rows) + 1, "at_utc": self.t.isoformat(), "event": event,
               "device_at": (self.t - timedelta(seconds=device_lag)).isoformat() if device_lag is not None else None,
               "person_id": person_id, "person_name": name, "role": role, "performance_id": pid,
               "cue_id": cid, "step_key": step, "step_number": number, "procedure_version": "v1",
               "detail": json.dumps(detail) if detail else None}
        self.rows.append(row)
        return row

    def clean_cue(self, *, pid=7, cid=70, skip=(), dt=None, self_check=None, lag=None, check_dt=None):
        dt, check_dt = dt or {}, check_dt or {}
        self.add("cue_started", pid=pid, cid=cid)
        for s in PROC.steps:
            if s.key in skip:
                continue
            if s.key == "Ride/Release brake":
                self.add("standby", s.by, pid=pid, cid=cid, step=s.key)
                self.add("go", "caller", pid=pid, cid=cid, step=s.key)
            self.add("step_confirmed", s.by, pid=pid, cid=cid, step=s.key, dt=dt.get(s.key, 5.0),
                     device_lag=lag.get(s.key) if lag else 0.5)
            if s.check:
                who = PEOPLE[s.by] if self_check == s.key else None
                self.add("check_confirmed", s.check, pid=pid, cid=cid, step=s.key, person=who,
                         dt=check_dt.get(s.key, 5.0))
        self.add("cue_completed", pid=pid, cid=cid)

    def signoff(self, pid=7):
        self.add("signoff", "caller", pid=pid, cid=None)


def rules(devs):
    return sorted(d.rule for d in devs)


def test_a_clean_night_has_no_deviation():
    log = Log()
    log.clean_cue()
    log.signoff()
    assert scan(log.rows, {"v1": PROC}) == []


@pytest.mark.parametrize("reason,code,cls", [
    ("step 3 cannot be confirmed before step 2", None, "out_of_order"),
    ("Ada is not assigned to the spotter role tonight", None, "wrong_role"),
    ("Oskar's training for lifters has expired", None, "untrained"),
    ("the cue is blocked: riders over the rated payload", None, "blocked_cue"),
    ("anything", "untrained", "untrained"),
    ("anything", "wrong_person", "wrong_role"),      # the live runner's codes (showops.live.runner)
    ("anything", "blocked", "blocked_cue"),
    ("anything", "no_standby", "out_of_order"),
    ("the moon is wrong", None, "other"),
])
def test_refused_attempt_is_found_and_classed(reason, code, cls):
    log = Log()
    log.clean_cue()
    detail = {"reason": reason, **({"code": code} if code else {})}
    bad = log.add("refused", "spotter", step="Ride/Raise", detail=detail)
    log.signoff()
    devs = scan(log.rows, {"v1": PROC})
    assert rules(devs) == ["refused_attempt"]
    assert devs[0].row_ids == (bad["id"],) and devs[0].detail["class"] == cls
    assert refusal_class(detail) == cls


def test_hold_is_found():
    log = Log()
    log.add("cue_started")
    hold = log.add("hold", "spotter", detail={"reason": "rider signalled"})
    log.add("resume", "caller")
    log.add("cue_completed")
    log.signoff()
    devs = [d for d in scan(log.rows, {"v1": PROC}) if d.rule == "hold"]
    assert len(devs) == 1 and devs[0].row_ids == (hold["id"],) and "rider signalled" in devs[0].text


def test_step_past_its_hold_time():
    log = Log()
    log.clean_cue(dt={"Ride/Raise": 31.0})          # Raise has hold 30 s
    log.signoff()
    devs = scan(log.rows, {"v1": PROC})
    assert rules(devs) == ["past_hold_time"]
    assert devs[0].step_key == "Ride/Raise" and devs[0].detail["elapsed_s"] == pytest.approx(31.0)


def test_step_exactly_at_its_hold_time_is_not_a_deviation():
    log = Log()
    log.clean_cue(dt={"Ride/Raise": 30.0})
    log.signoff()
    assert scan(log.rows, {"v1": PROC}) == []


def test_self_check_is_found():
    log = Log()
    log.clean_cue(self_check="Board/Rider boards")
    log.signoff()
    devs = scan(log.rows, {"v1": PROC})
    assert rules(devs) == ["self_check"]
    acted, checked = (log.rows[i - 1] for i in devs[0].row_ids)
    assert acted["event"] == "step_confirmed" and checked["event"] == "check_confirmed"
    assert acted["person_id"] == checked["person_id"]


def test_cue_completed_with_steps_unconfirmed():
    log = Log()
    log.clean_cue(skip={"Board/Rider boards"})
    log.signoff()
    devs = scan(log.rows, {"v1": PROC})
    assert rules(devs) == ["unconfirmed_at_completion"]
    assert devs[0].detail["missing"] == ["Board/Rider boards"]


def test_brake_off_longer_than_allowed():
    # allowance = holds of steps 3..6 = 20 + 30 + 30 + 10 = 90 s
    assert PROC.brake_off_allowance_s() == 90
    log = Log()
    log.clean_cue(dt={"Ride/Raise": 30, "Ride/Lower": 30, "Ride/Brake on": 10})
    log.signoff()
    # brake off at step 3, on at step 6: 5 s check + 30 + 30 + 10 = 75 s
    assert scan(log.rows, {"v1": PROC}) == []
    # every step inside its own hold, but the spotter's check of the release took 25 s:
    # 25 + 30 + 30 + 10 = 95 s with the brake off
    log = Log()
    log.clean_cue(dt={"Ride/Raise": 30, "Ride/Lower": 30, "Ride/Brake on": 10},
                  check_dt={"Ride/Release brake": 25})
    log.signoff()
    devs = scan(log.rows, {"v1": PROC})
    assert rules(devs) == ["brake_off_too_long"]
    assert devs[0].detail == {"elapsed_s": pytest.approx(95.0), "allowed_s": 90}
    off, on = (log.rows[i - 1] for i in devs[0].row_ids)
    assert off["step_key"] == "Ride/Release brake" and on["step_key"] == "Ride/Brake on"


def test_brake_left_off_at_completion():
    log = Log()
    log.clean_cue(skip={"Ride/Brake on"})
    log.signoff()
    assert rules(scan(log.rows, {"v1": PROC})) == ["brake_off_too_long", "unconfirmed_at_completion"]


def test_late_record():
    log = Log()
    log.clean_cue(lag={"Ride/Lower": 61.0})
    log.signoff()
    devs = scan(log.rows, {"v1": PROC})
    assert rules(devs) == ["late_record"] and devs[0].detail["gap_s"] == pytest.approx(61.0)
    log = Log()
    log.clean_cue(lag={"Ride/Lower": 59.0})
    log.signoff()
    assert scan(log.rows, {"v1": PROC}) == []


def test_signoff_missing_and_cue_left_open():
    log = Log()
    log.clean_cue()
    log.add("cue_started", cid=71)
    devs = scan(log.rows, {"v1": PROC})
    assert rules(devs) == ["cue_left_open", "signoff_missing"]
    # a night still running is not judged for them
    assert scan(log.rows, {"v1": PROC}, finished=[]) == []


def test_signoff_before_the_last_cue_does_not_count():
    log = Log()
    log.clean_cue()
    log.signoff()
    log.clean_cue(cid=71)
    assert rules(scan(log.rows, {"v1": PROC})) == ["signoff_missing"]


def test_performances_are_kept_apart_and_keys_are_stable():
    log = Log()
    log.clean_cue(pid=1, skip={"Ride/Lower"})
    log.clean_cue(pid=2)
    log.signoff(pid=2)
    devs = scan(log.rows, {"v1": PROC})
    assert {(d.rule, d.performance_id) for d in devs} == {("unconfirmed_at_completion", 1),
                                                         ("signoff_missing", 1)}
    assert [d.key for d in devs] == [d.key for d in scan(log.rows, {"v1": PROC})]
    assert counts_by_rule(devs)["signoff_missing"] == 1 and set(counts_by_rule(devs)) == set(RULES)


def test_unknown_procedure_still_gets_the_rules_that_need_none():
    log = Log()
    log.clean_cue(self_check="Board/Brake on", skip={"Ride/Lower"})
    assert rules(scan(log.rows, {})) == ["self_check", "signoff_missing"]


def test_audit_and_care_events_naming_a_cue_do_not_count_as_running_it():
    log = Log()
    log.clean_cue()
    log.signoff()
    log.add("incident_reported", "caller")          # an audit row after the sign-off, with the cue's id
    log.add("inspection_recorded", "brake")
    assert scan(log.rows, {"v1": PROC}) == []


def test_late_record_compares_instants_not_clock_faces():
    # Same wall-clock minute at different UTC offsets is an hour apart (ISO 8601 offsets);
    # the same instant written at two offsets is not late at all.
    log = Log()
    log.clean_cue()
    log.signoff()
    rows = [dict(r) for r in log.rows]
    confirm = next(r for r in rows if r["event"] == "step_confirmed")
    at = datetime.fromisoformat(confirm["at_utc"])
    confirm["device_at"] = at.replace(second=0, tzinfo=timezone(timedelta(hours=1))).isoformat()
    devs = scan(rows, {"v1": PROC})
    assert rules(devs) == ["late_record"] and devs[0].detail["gap_s"] == pytest.approx(
        (at - at.replace(second=0, tzinfo=timezone(timedelta(hours=1)))).total_seconds())
    confirm["device_at"] = at.astimezone(timezone(timedelta(hours=1))).isoformat()
    assert scan(rows, {"v1": PROC}) == []


def test_a_threshold_under_a_minute_is_still_applied():
    log = Log()
    log.clean_cue(lag={"Ride/Lower": 40.0})
    log.signoff()
    assert scan(log.rows, {"v1": PROC}) == []
    assert rules(scan(log.rows, {"v1": PROC}, late_after_s=30.0)) == ["late_record"]


def test_tuples_of_the_columns_scan_as_the_rows_do():
    log = Log()
    log.clean_cue(pid=1, dt={"Ride/Raise": 31.0}, self_check="Board/Brake on")
    log.add("hold", "spotter", pid=1, detail={"note": "rider signalled"})
    log.clean_cue(pid=2, skip={"Ride/Brake on"}, lag={"Ride/Lower": 61.0})
    log.signoff(pid=2)
    tuples = [tuple(r[c] for c in COLUMNS) for r in log.rows]
    assert [d.to_dict() for d in scan_rows(tuples, {"v1": PROC})] == \
        [d.to_dict() for d in scan(log.rows, {"v1": PROC})]


def test_each_performance_scanned_apart_gives_the_scan_of_all():
    # The store keeps each performance's scan and rescans only changed ones: that is
    # right only while every rule's state is per performance. Interleave two nights.
    log = Log()
    log.clean_cue(pid=1, dt={"Ride/Raise": 31.0})
    log.clean_cue(pid=2, self_check="Board/Rider boards")
    log.add("cue_started", pid=1, cid=71)
    log.add("refused", "spotter", pid=2, step="Ride/Raise", detail={"code": "out_of_order", "reason": "not yet"})
    log.clean_cue(pid=2, cid=71, skip={"Ride/Lower"})
    log.add("hold", "spotter", pid=1, cid=71, detail={"note": "rider signalled"})
    log.signoff(pid=2)
    whole = scan(log.rows, {"v1": PROC})
    apart = [d for pid in (1, 2) for d in scan([r for r in log.rows if r["performance_id"] == pid], {"v1": PROC})]
    assert {d.performance_id for d in whole} == {1, 2} and len(whole) >= 6
    assert [d.to_dict() for d in sorted(apart, key=deviation_order)] == [d.to_dict() for d in whole]
