"""The demo's care records show every block the issue asks for, each cleared by its record.

The scenario is invented (Kestrel Yard Dance Company, The Glass Orchard). Rules and
sources as in showops/care/rules.py: LOLER 1998 reg 9(3)(a)(i) six-monthly thorough
examination (from memory); DGUV Vorschrift 17 §15 and §20 (from memory).
"""

from __future__ import annotations

from datetime import date

import pytest

from showops.show import demo_data as d
from showops.store import care, open_db
from showops.store import show as show_store
from showops.store.log import verify_log

TODAY = date(2026, 11, 20)


@pytest.fixture
def demo(tmp_path):
    db = open_db(tmp_path / "instance")
    ids = show_store.install_demo(db, TODAY)
    notes = care.seed_demo_care(db, ids, TODAY)
    return db, ids, notes


def limits(db, perf, cue_id, limit):
    return [r for r in care.readiness_reasons(db, perf, cue_id, as_of=TODAY) if r.limit == limit]


def test_examination_falls_due_between_two_performances(demo):
    db, ids, _ = demo
    bough = ids.cues["6"]
    before, after = ids.performances[3], ids.performances[4]
    assert [r.level for r in limits(db, before, bough, "inspection")] == ["caution"]  # due within 14 days
    (blocked,) = limits(db, after, bough, "inspection")
    assert blocked.level == "blocked" and "overdue since" in blocked.text
    care.record_inspection(db, "bough-lever", TODAY, scope="thorough examination, whole rig",
                           examiner="Lise Armitage", findings="band lining 3 mm, bearing sound",
                           objection_to_use=False, today=TODAY)
    assert limits(db, after, bough, "inspection") == []


def test_past_performance_was_checked_briefed_and_released(demo):
    db, ids, _ = demo
    past = ids.past_performance
    for number, cue_id in ids.cues.items():
        for limit in ("preshow", "briefing", "area_release", "objection", "equipment"):
            assert limits(db, past, cue_id, limit) == [], (number, limit)
    status = care.rig_status(db, past, "orchard-lift", as_of=TODAY)
    assert status["preshow"] == "complete" and status["area_released"]


def test_briefing_absentee_blocks_their_cue_only(demo):
    db, ids, notes = demo
    nxt = ids.performances[1]
    blocked = {n: limits(db, nxt, c, "briefing") for n, c in ids.cues.items() if limits(db, nxt, c, "briefing")}
    assert len(blocked) == 1
    ((number, (reason,)),) = blocked.items()
    absent = reason.text.split(": ", 1)[1].split(" (rider)")[0]
    assert any(absent in line for line in notes)
    briefing = care.briefing_for(db, nxt, "orchard-lift")
    care.confirm_briefing(db, briefing.id, absent)
    assert limits(db, nxt, ids.cues[number], "briefing") == []


def test_understudy_blocked_until_rehearsal_recorded(demo):
    db, ids, _ = demo
    heavy, duet = ids.heavy_performance, ids.cues["5"]
    (r,) = limits(db, heavy, duet, "rehearsal")
    assert d.UNDERSTUDY in r.text and r.level == "blocked"
    team = [(m.name, m.role) for m in care.cue_team(db, heavy, duet)]
    care.record_rehearsal(db, "orchard-lift", TODAY, team, cue_id=duet, today=TODAY)
    assert limits(db, heavy, duet, "rehearsal") == []
    # the other nights' duet, with the first cast, was never blocked for rehearsal
    assert all(not limits(db, p, duet, "rehearsal") for p in ids.performances if p != heavy)


def test_objection_raised_and_resolved_is_kept(demo):
    db, ids, _ = demo
    (o,) = care.objections(db)
    assert not o.open and o.resolution and o.reason
    assert care.objections(db, open_only=True) == []


def test_cover_lines_list_each_reason_once_and_the_log_verifies(demo):
    db, ids, _ = demo
    cover = care.performance_readiness(db, ids.performances[4], as_of=TODAY)
    assert len(cover) == len(set(cover))
    assert [r.level for r in cover] == sorted((r.level for r in cover), key=lambda lv: lv != "blocked")
    assert any(r.limit == "inspection" and "bough-lever" in r.text for r in cover)
    assert verify_log(db) is None
    events = {row[0] for row in db.execute("SELECT DISTINCT event FROM step_log")}
    assert {"inspection_recorded", "preshow_answered", "briefing_given", "briefing_confirmed", "rehearsal_recorded",
            "area_released", "objection_raised", "objection_resolved"} <= events
