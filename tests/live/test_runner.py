"""The cue runner's rules, each refusal and what clears it (pure, no database).

Rules and their sources (also in showops/live/runner.py):
- two-person verification: the person who secures a rider is not the one who
  checks it (DGUV Information 215-320, from memory);
- standby before go, HOLD stops everyone and only the stage manager resumes:
  common practice in stage management, no source;
- steps confirmed in order by the named role, challenge and response
  (FAA AC 120-71, standard operating procedures and crew monitoring).
"""

from __future__ import annotations

from datetime import datetime, timedelta, timezone

import pytest

from showops.live.runner import Action, apply, decide, describe, new_state, next_for, replay
from showops.verdict import Reason

T0 = datetime(2026, 11, 20, 19, 30, tzinfo=timezone.utc)


class Sim:
    """Decide and apply, numbering rows like the log would; a clock that moves 5 s a step."""

    def __init__(self, setup):
        self.state = new_state(setup)
        self.rows = []
        self.now = T0

    def act(self, kind, actor, step=None, *, advance=5.0, note=None):
        self.now += timedelta(seconds=advance)
        key = self.key(step)
        decision = decide(self.state, Action(kind, actor, key, note=note), self.now)
        for event in decision.events:
            row = dict(event, id=len(self.rows) + 1)
            if isinstance(row["detail"], dict):
                import json
                row["detail"] = json.dumps(row["detail"], sort_keys=True, separators=(",", ":"))
            self.rows.append(row)
            apply(self.state, row)
        return decision

    def key(self, step):
        if step is None or isinstance(step, str):
            return step
        return self.state.steps[step - 1].step.key

    def ok(self, kind, actor, step=None, **kw):
        decision = self.act(kind, actor, step, **kw)
        assert decision.refusal is None, decision.refusal
        return decision

    def refused(self, kind, actor, step=None, **kw):
        decision = self.act(kind, actor, step, **kw)
        assert decision.refusal is not None, f"{kind} {step} by {actor.name} was not refused"
        assert [e["event"] for e in decision.events] == ["refused"]
        return decision.refusal


def run_whole_cue(sim, L):
    sim.ok("start", L.SM)
    sim.ok("confirm", L.BRAKE, 1)
    sim.ok("check", L.SPOTTER, 1)
    sim.ok("confirm", L.SM, 2)            # the caller hears the rider (rider has no screen)
    sim.ok("check", L.SPOTTER, 2)
    sim.ok("standby", L.BRAKE, 3)
    sim.ok("go", L.SM, 3)
    sim.ok("confirm", L.BRAKE, 3)
    sim.ok("check", L.SPOTTER, 3)
    sim.ok("standby", L.LIFTER_A, 4)
    sim.ok("standby", L.LIFTER_B, 4)
    sim.ok("go", L.SM, 4)
    sim.ok("confirm", L.LIFTER_B, 4)
    sim.ok("confirm", L.BRAKE, 5)
    sim.ok("standby", L.BRAKE, 6)
    sim.ok("go", L.SM, 6)
    sim.ok("confirm", L.BRAKE, 6)
    sim.ok("standby", L.LIFTER_A, 7)
    sim.ok("standby", L.LIFTER_B, 7)
    sim.ok("go", L.SM, 7)
    sim.ok("confirm", L.LIFTER_A, 7)
    sim.ok("confirm", L.BRAKE, 8)
    sim.ok("check", L.SPOTTER, 8)
    sim.ok("confirm", L.SM, 9)
    return sim.ok("check", L.SPOTTER, 9)


def test_a_whole_cue_runs_to_completion_and_replays_the_same(lift):
    sim = Sim(lift.setup())
    last = run_whole_cue(sim, lift)
    assert [e["event"] for e in last.events] == ["check_confirmed", "cue_completed"]
    assert sim.state.status == "complete"
    assert sim.state.states == {"brake": "on", "platform": "down", "rider": "off", "strap": "open"}
    again = replay(lift.setup(), sim.rows)
    assert describe(again, sim.now) == describe(sim.state, sim.now)
    assert sim.refused("confirm", lift.BRAKE, 1).code == "finished"


def test_rows_carry_person_role_versions_and_spoken_for(lift):
    sim = Sim(lift.setup())
    sim.ok("start", lift.SM)
    row = sim.ok("confirm", lift.BRAKE, 1).events[0]
    assert (row["event"], row["person_id"], row["role"], row["step_number"]) == ("step_confirmed", 2, "brake", 1)
    assert row["procedure_version"] == lift.PROCEDURE.version and row["rig_version"] == "r" * 64
    sim.ok("check", lift.SPOTTER, 1)
    rider = sim.ok("confirm", lift.SM, 2).events[0]
    assert rider["role"] == "caller" and rider["detail"]["spoken_for"] == "rider"


def test_a_blocked_cue_cannot_be_started_and_says_why_and_the_fix(lift):
    reason = Reason("riders 149 kg over the rated payload 140 kg", limit="payload", value=149, allowed=140,
                    fix="swap the cover rider")
    near = Reason("pull per lifter 168 N is 84% of the 200 N limit", level="caution")
    sim = Sim(lift.setup(verdict="blocked", reasons=(near, reason), fixes=("cast a lighter pair",)))
    refusal = sim.refused("start", lift.SM)
    assert refusal.code == "blocked"
    assert refusal.reason.startswith("Cue 3 'Blossom rise' is blocked tonight")  # the name keeps its case
    assert "168 N" not in refusal.reason  # a caution is not why it is blocked
    assert "riders 149 kg over the rated payload 140 kg" in refusal.reason
    assert "What would clear it: cast a lighter pair" in refusal.reason
    assert sim.refused("confirm", lift.BRAKE, 1).code == "not_started"
    assert sim.rows[0]["detail"].count("blocked") >= 1 and sim.state.status == "waiting"
    # only the night plan clears it: the same cue with an ok verdict starts
    assert Sim(lift.setup()).act("start", lift.SM).refusal is None


def test_load_ok_need_fails_when_the_verdict_turns_blocked_mid_cue(lift):
    sim = Sim(lift.setup())
    sim.ok("start", lift.SM)
    for args in (("confirm", lift.BRAKE, 1), ("check", lift.SPOTTER, 1), ("confirm", lift.SM, 2),
                 ("check", lift.SPOTTER, 2), ("standby", lift.BRAKE, 3)):
        sim.ok(*args)
    blocked = replay(lift.setup(verdict="blocked"), sim.rows)
    decision = decide(blocked, Action("go", lift.SM, sim.key(3)), sim.now)
    assert decision.refusal.code == "needs" and "'load ok'" in decision.refusal.reason


@pytest.mark.parametrize("name, before, attempt, code, clear", [
    ("only the stage manager or caller starts", [], ("start", "BRAKE", None), "not_stage_manager",
     ("start", "SM", None)),
    ("nothing before the start", [], ("confirm", "BRAKE", 1), "not_started", None),
    ("wrong person for the role", [("start", "SM", None)], ("confirm", "STRANGER", 1), "wrong_person",
     ("confirm", "BRAKE", 1)),
    ("a viewer cannot confirm", [("start", "SM", None)], ("confirm", "VIEWER", 1), "wrong_person", None),
    ("out of order", [("start", "SM", None)], ("confirm", "SM", 2), "out_of_order", None),
    ("out of order until checked", [("start", "SM", None), ("confirm", "BRAKE", 1)], ("confirm", "SM", 2),
     "out_of_order", ("check", "SPOTTER", 1)),
    ("check before confirm", [("start", "SM", None)], ("check", "SPOTTER", 1), "not_confirmed",
     ("confirm", "BRAKE", 1)),
    ("check by the wrong role", [("start", "SM", None), ("confirm", "BRAKE", 1)], ("check", "LIFTER_A", 1),
     "wrong_person", ("check", "SPOTTER", 1)),
    ("already confirmed", [("start", "SM", None), ("confirm", "BRAKE", 1)], ("confirm", "BRAKE", 1),
     "already_done", None),
    ("unknown step", [("start", "SM", None)], ("confirm", "BRAKE", "Board/Nope"), "unknown_step", None),
    ("started twice", [("start", "SM", None)], ("start", "SM", None), "already_started", None),
    ("resume when not held", [("start", "SM", None)], ("resume", "SM", None), "not_held", None),
    ("end by crew", [("start", "SM", None)], ("end", "BRAKE", None), "not_stage_manager", None),
])
def test_each_refusal(lift, name, before, attempt, code, clear):
    sim = Sim(lift.setup())
    for kind, who, step in before:
        sim.ok(kind, getattr(lift, who), step)
    kind, who, step = attempt
    refusal = sim.refused(kind, getattr(lift, who), step)
    assert refusal.code == code, refusal
    assert refusal.reason.endswith(".")  # a sentence, said to a person
    row = sim.rows[-1]
    assert row["event"] == "refused" and f'"code":"{code}"' in row["detail"]
    assert row["person_id"] == getattr(lift, who).person_id
    if clear:
        sim.ok(clear[0], getattr(lift, clear[1]), clear[2])


def _to_step3(sim, L):
    sim.ok("start", L.SM)
    sim.ok("confirm", L.BRAKE, 1)
    sim.ok("check", L.SPOTTER, 1)
    sim.ok("confirm", L.SM, 2)


def test_the_check_needs_a_second_person(lift):
    # the spotter is also cast as brake on this cue: they may act or check, never both
    crew = tuple(c for c in lift.CREW if c.role != "brake") + (lift.Crew("brake", 5, lift.SPOTTER.name),)
    sim = Sim(lift.setup(crew=crew))
    sim.ok("start", lift.SM)
    sim.ok("confirm", lift.SPOTTER, 1)
    refusal = sim.refused("check", lift.SPOTTER, 1)
    assert refusal.code == "same_person"
    assert "needs a second person" in refusal.reason and lift.SPOTTER.name in refusal.reason


def test_standby_before_go_for_every_person_in_the_role(lift):
    sim = Sim(lift.setup())
    _to_step3(sim, lift)
    sim.ok("check", lift.SPOTTER, 2)
    assert sim.refused("go", lift.SM, 3).code == "no_standby"
    assert sim.refused("confirm", lift.BRAKE, 3).code == "no_go"
    assert sim.refused("standby", lift.LIFTER_A, 3).code == "wrong_person"
    sim.ok("standby", lift.BRAKE, 3)
    assert sim.refused("go", lift.BRAKE, 3).code == "wrong_person"  # only the caller calls the go
    sim.ok("go", lift.SM, 3)
    sim.ok("confirm", lift.BRAKE, 3)
    sim.ok("check", lift.SPOTTER, 3)
    sim.ok("standby", lift.LIFTER_A, 4)
    refusal = sim.refused("go", lift.SM, 4)
    assert refusal.code == "no_standby" and lift.LIFTER_B.name in refusal.reason
    assert lift.LIFTER_A.name not in refusal.reason
    view = describe(sim.state, sim.now)["steps"][3]
    assert view["go_enabled"] is False and view["waiting_standby"] == [lift.LIFTER_B.name]
    sim.ok("standby", lift.LIFTER_B, 4)
    assert describe(sim.state, sim.now)["steps"][3]["go_enabled"] is True
    sim.ok("go", lift.SM, 4)


def test_hold_stops_everyone_and_only_the_stage_manager_resumes(lift):
    sim = Sim(lift.setup())
    sim.ok("start", lift.SM)
    sim.ok("confirm", lift.BRAKE, 1)
    held = sim.ok("hold", lift.LIFTER_A, note="rider not ready")
    assert held.events[0]["event"] == "hold" and held.events[0]["step_number"] == 1
    for kind, who, step in (("check", lift.SPOTTER, 1), ("confirm", lift.SM, 2), ("standby", lift.BRAKE, 3)):
        refusal = sim.refused(kind, who, step)
        assert refusal.code == "held" and lift.LIFTER_A.name in refusal.reason
    assert sim.ok("hold", lift.SPOTTER).events[0]["detail"] == {"already_held": True}
    for who in (lift.BRAKE, lift.LIFTER_A, lift.SPOTTER):
        assert sim.refused("resume", who).code == "not_stage_manager"
    resumed = sim.ok("resume", lift.SM)
    assert resumed.events[0]["detail"]["held_s"] == pytest.approx(40.0)  # 8 attempts, 5 s apart
    sim.ok("check", lift.SPOTTER, 1)


def test_hold_before_the_start_keeps_the_cue_from_starting(lift):
    sim = Sim(lift.setup())
    sim.ok("hold", lift.SPOTTER, note="trip hazard on the platform")
    assert sim.refused("start", lift.SM).code == "held"
    sim.ok("resume", lift.SM)
    sim.ok("start", lift.SM)


def test_a_step_confirmed_past_its_hold_is_marked_overdue(lift):
    sim = Sim(lift.setup())
    run = [("start", "SM", None), ("confirm", "BRAKE", 1), ("check", "SPOTTER", 1), ("confirm", "SM", 2),
           ("check", "SPOTTER", 2), ("standby", "BRAKE", 3), ("go", "SM", 3), ("confirm", "BRAKE", 3),
           ("check", "SPOTTER", 3), ("standby", "LIFTER_A", 4), ("standby", "LIFTER_B", 4), ("go", "SM", 4)]
    for kind, who, step in run:
        sim.ok(kind, getattr(lift, who), step)
    assert describe(sim.state, sim.now + timedelta(seconds=100))["steps"][3]["overdue_s"] == pytest.approx(10.0)
    row = sim.ok("confirm", lift.LIFTER_A, 4, advance=120).events[0]
    # hold 90 s counted from the go; confirmed 120 s after it
    assert row["detail"]["overdue_s"] == pytest.approx(30.0) and row["detail"]["hold_s"] == 90


def test_the_stage_manager_ends_a_cue_early_with_its_unfinished_steps(lift):
    sim = Sim(lift.setup())
    sim.ok("start", lift.SM)
    sim.ok("hold", lift.SPOTTER)
    row = sim.ok("end", lift.SM, note="stop procedure: rider unwell").events[0]
    assert row["event"] == "cue_completed" and row["detail"]["complete"] is False
    assert len(row["detail"]["unfinished"]) == 9
    assert sim.state.status == "ended"


def test_next_for_tells_each_person_their_next_action(lift):
    sim = Sim(lift.setup())
    assert next_for(sim.state, lift.SM.person_id)["action"] == "start"
    assert next_for(sim.state, lift.BRAKE.person_id) is None
    _to_step3(sim, lift)
    assert next_for(sim.state, lift.SPOTTER.person_id) == {"action": "check", "step": sim.key(2),
                                                           "why": "check Rider boards"}
    assert next_for(sim.state, lift.BRAKE.person_id)["action"] == "standby"
    assert next_for(sim.state, lift.SM.person_id) is None  # step 2 awaits its check
    sim.ok("check", lift.SPOTTER, 2)
    sim.ok("standby", lift.BRAKE, 3)
    assert next_for(sim.state, lift.SM.person_id) == {"action": "go", "step": sim.key(3),
                                                      "why": "give the go for Release the brake"}
    assert next_for(sim.state, lift.BRAKE.person_id)["action"] == "wait"
