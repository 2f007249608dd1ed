"""Each readiness rule: the record that blocks a cue and the record that clears it.

Sources behind the rules (as named in showops/care/rules.py):
- LOLER 1998 reg 9(3)(a)(i) six-monthly thorough examination of equipment lifting
  people, reg 9(3)(a)(iv) after exceptional circumstances (from memory);
- DGUV Grundsatz 315-390, check before each use with a trial in motion (from memory);
- DGUV Vorschrift 17 §15 area release, §20 rehearsal on cast changes and the stage
  specialist's safety objection (from memory);
- a briefing of everyone involved before each use: common practice, no source beyond
  DGUV Information 215-320 (from memory).
The people and dates are invented (the demo scenario's).
"""

from __future__ import annotations

from datetime import date, datetime, timezone

import pytest

from showops.care.model import (AreaRelease, Briefing, ChecklistItem, Inspection, Objection, Participant, Person,
                                PreshowAnswer, Rehearsal, RigEvent)
from showops.care.rules import (CueReadiness, area_release_reasons, briefing_reasons, cue_readiness, due_list,
                                inspection_reasons, objection_reasons, participants_of, pending_level,
                                preshow_reasons, rehearsal_reasons, summary_line)
from showops.care.schedules import DEFAULT_RULE_SETS
from showops.verdict import verdict_of

RIG = "orchard-lift"
LOLER = DEFAULT_RULE_SETS["uk-loler"]
EXAMINER = Person("Marta Quill", 7)


def insp(id, on, passed=True, follow_up="", remedied=None, covers=(), rig=RIG):
    return Inspection(id=id, rig=rig, on=on, scope="thorough examination", examiner=EXAMINER,
                      findings="brake pads 4 mm, straps intact" if passed else "brake slips at 600 N",
                      objection_to_use=not passed, follow_up=follow_up, covers=covers, remedied_on=remedied,
                      remedied_by=EXAMINER if remedied else None)


def at(day, hour=18, minute=0):
    return datetime(day.year, day.month, day.day, hour, minute, tzinfo=timezone.utc)


# --------------------------------------------------------------------------- inspection

def test_six_monthly_examination_in_date_passes():
    assert inspection_reasons(RIG, LOLER, [insp(1, date(2026, 6, 1))], [], date(2026, 11, 1)) == []


def test_no_examination_on_record_blocks():
    (r,) = inspection_reasons(RIG, LOLER, [], [], date(2026, 11, 1))
    assert r.level == "blocked" and r.limit == "inspection" and "no passing" in r.text
    assert "LOLER 1998 reg 9(3)(a)(i)" in r.text


def test_overdue_examination_blocks_then_a_passing_record_clears_it():
    # Last examined 2026-05-10; LOLER reg 9: due within 6 months, by 2026-11-10.
    records = [insp(1, date(2026, 5, 10))]
    assert verdict_of(inspection_reasons(RIG, LOLER, records, [], date(2026, 11, 10))) == "caution"
    (r,) = inspection_reasons(RIG, LOLER, records, [], date(2026, 11, 11))
    assert r.level == "blocked" and "overdue since 2026-11-10" in r.text
    records.append(insp(2, date(2026, 11, 11)))
    assert inspection_reasons(RIG, LOLER, records, [], date(2026, 11, 11)) == []


def test_examination_due_soon_is_a_caution_with_days():
    (r,) = inspection_reasons(RIG, LOLER, [insp(1, date(2026, 5, 10))], [], date(2026, 11, 1))
    assert r.level == "caution" and r.value == 9


def test_failed_inspection_puts_rig_out_of_service_until_a_passing_one():
    records = [insp(1, date(2026, 6, 1)), insp(2, date(2026, 9, 1), passed=False, follow_up="replace brake pads")]
    reasons = inspection_reasons(RIG, LOLER, records, [], date(2026, 9, 5))
    assert [r.level for r in reasons] == ["blocked"] and "out of service" in reasons[0].text
    assert "replace brake pads" in reasons[0].fix
    records.append(insp(3, date(2026, 9, 4)))
    assert inspection_reasons(RIG, LOLER, records, [], date(2026, 9, 5)) == []


def test_inspection_after_the_performance_does_not_count_for_it():
    records = [insp(1, date(2026, 12, 1))]
    assert verdict_of(inspection_reasons(RIG, LOLER, records, [], date(2026, 11, 30))) == "blocked"


@pytest.mark.parametrize("kind", ["incident", "overload", "modification"])
def test_event_needs_extraordinary_examination(kind):
    records = [insp(1, date(2026, 9, 1))]
    events = [RigEvent(1, RIG, kind, date(2026, 10, 3), "lifter slipped, platform dropped 10 cm")]
    (r,) = inspection_reasons(RIG, LOLER, records, events, date(2026, 10, 4))
    assert r.level == "blocked" and kind in r.text and "reg 9(3)(a)(iv)" in r.text
    records.append(insp(2, date(2026, 10, 3)))
    assert inspection_reasons(RIG, LOLER, records, events, date(2026, 10, 4)) == []


def test_open_follow_up_is_a_caution_until_remedy_acknowledged():
    open_ = [insp(1, date(2026, 9, 1), follow_up="re-tension caster bolts")]
    (r,) = inspection_reasons(RIG, LOLER, open_, [], date(2026, 9, 10))
    assert r.level == "caution" and "re-tension" in r.text
    done = [insp(1, date(2026, 9, 1), follow_up="re-tension caster bolts", remedied=date(2026, 9, 2))]
    assert inspection_reasons(RIG, LOLER, done, [], date(2026, 9, 10)) == []


def test_other_rigs_records_do_not_count():
    assert verdict_of(inspection_reasons(RIG, LOLER, [insp(1, date(2026, 9, 1), rig="bough-lever")], [],
                                         date(2026, 9, 10))) == "blocked"


def test_dguv_expert_interval_needs_its_own_cover():
    dguv = DEFAULT_RULE_SETS["de-dguv"]
    annual_only = [insp(1, date(2026, 6, 1), covers=("annual",))]
    (r,) = inspection_reasons(RIG, dguv, annual_only, [], date(2026, 7, 1))
    assert "expert" in r.text
    both = annual_only + [insp(2, date(2026, 6, 2), covers=("expert-4y",))]
    assert inspection_reasons(RIG, dguv, both, [], date(2026, 7, 1)) == []


def test_due_list_orders_overdue_first():
    records = [insp(1, date(2026, 5, 10)), insp(2, date(2026, 5, 20), rig="bough-lever")]
    today = date(2026, 11, 12)
    assert [(d.rig, d.status, d.due_on) for d in due_list(RIG, LOLER, records, [], today)] == [
        (RIG, "overdue", date(2026, 11, 10))]
    (soon,) = due_list("bough-lever", LOLER, records, [], today, days=14)
    assert soon.status == "due soon" and soon.days == 8
    assert due_list("bough-lever", LOLER, records, [], today, days=7) == []
    (never,) = due_list("other", LOLER, records, [], today)
    assert never.status == "never examined"


# --------------------------------------------------------------------------- pre-show

ITEMS = (ChecklistItem("Rig/Brake", "Brake", "brake"), ChecklistItem("Rig/Straps", "Straps", "spotter"),
         ChecklistItem("Trial/Load trial", "Load trial", "lifters", load_trial=True))


def answer(id, key, result="pass", hour=17):
    return PreshowAnswer(id, 3, RIG, key, "brake holds with 40 kg on the rear bar", result,
                         Person("Ivo Marsh", 2), at(date(2026, 11, 20), hour))


def test_preshow_incomplete_blocks_on_the_day_and_is_not_due_before():
    answers = [answer(1, "Rig/Brake")]
    (r,) = preshow_reasons(RIG, ITEMS, answers, "blocked")
    assert r.level == "blocked" and "1 of 3" in r.text and "Load trial" in r.text
    assert preshow_reasons(RIG, ITEMS, answers, None) == []


def test_preshow_complete_clears():
    answers = [answer(i, item.key) for i, item in enumerate(ITEMS, 1)]
    assert preshow_reasons(RIG, ITEMS, answers, "blocked") == []


def test_preshow_fault_blocks_until_the_item_is_answered_again():
    answers = [answer(i, item.key) for i, item in enumerate(ITEMS, 1)]
    answers.append(answer(9, "Rig/Straps", "fault", hour=18))
    (r,) = preshow_reasons(RIG, ITEMS, answers, None)  # a fault found blocks even before the day
    assert r.level == "blocked" and "fault" in r.text and "Straps" in r.text
    answers.append(answer(10, "Rig/Straps", "pass", hour=19))
    assert preshow_reasons(RIG, ITEMS, answers, "blocked") == []


def test_preshow_without_checklist():
    (r,) = preshow_reasons(RIG, None, [], "blocked")
    assert r.limit == "preshow" and "checklist" in r.text


# --------------------------------------------------------------------------- briefing

TEAM = (Participant("Ivo Marsh", "brake", 2), Participant("Nell Varga", "lifters", 3),
        Participant("Odile Brand", "rider", 4))


def test_briefing_absentee_blocks_only_them_until_they_confirm():
    briefing = Briefing(1, 3, RIG, Person("Sam Okoro", 1), at(date(2026, 11, 20), 18),
                        attendees=(Person("Ivo Marsh", 2), Person("Odile Brand", 4)))
    (r,) = briefing_reasons(RIG, TEAM, briefing, None)
    assert r.level == "blocked" and "Nell Varga (lifters)" in r.text and "Ivo" not in r.text
    late = Briefing(1, 3, RIG, briefing.given_by, briefing.at, attendees=briefing.attendees + (Person("Nell Varga", 3),))
    assert briefing_reasons(RIG, TEAM, late, "blocked") == []


def test_no_briefing_is_pending():
    (r,) = briefing_reasons(RIG, TEAM, None, "blocked")
    assert r.level == "blocked" and r.limit == "briefing"
    assert briefing_reasons(RIG, TEAM, None, None) == []


def test_briefing_matches_by_name_when_no_id():
    briefing = Briefing(1, 3, RIG, Person("Sam Okoro"), at(date(2026, 11, 20)),
                        attendees=(Person("ivo marsh"), Person("Nell Varga"), Person("Odile Brand")))
    assert briefing_reasons(RIG, TEAM, briefing, "blocked") == []


# --------------------------------------------------------------------------- rehearsal

def rehearsal(id, on, team, config="v1", cue_id=None):
    return Rehearsal(id, RIG, on, tuple(team), cue_id=cue_id, configuration=config)


def test_team_that_rehearsed_together_is_current():
    assert rehearsal_reasons(RIG, 5, TEAM, [rehearsal(1, date(2026, 11, 1), TEAM)], "v1", date(2026, 11, 20)) == []


def test_understudy_blocks_until_rehearsal_recorded():
    # DGUV Vorschrift 17 §20: rehearse on every cast change.
    tonight = TEAM[:2] + (Participant("Pia Lund", "rider", 5),)
    history = [rehearsal(1, date(2026, 11, 1), TEAM)]
    (r,) = rehearsal_reasons(RIG, 5, tonight, history, "v1", date(2026, 11, 20))
    assert r.level == "blocked" and "Pia Lund (rider)" in r.text and "2026-11-01" in r.text
    assert "DGUV Vorschrift 17 §20" in r.fix
    history.append(rehearsal(2, date(2026, 11, 19), tonight))
    assert rehearsal_reasons(RIG, 5, tonight, history, "v1", date(2026, 11, 20)) == []


def test_rehearsal_in_another_role_does_not_count():
    swapped = (Participant("Ivo Marsh", "lifters", 2), Participant("Nell Varga", "brake", 3), TEAM[2])
    (r,) = rehearsal_reasons(RIG, 5, swapped, [rehearsal(1, date(2026, 11, 1), TEAM)], "v1", date(2026, 11, 20))
    assert r.limit == "rehearsal"


def test_rig_change_since_rehearsal_blocks():
    (r,) = rehearsal_reasons(RIG, 5, TEAM, [rehearsal(1, date(2026, 11, 1), TEAM, config="v1")], "v2",
                             date(2026, 11, 20))
    assert "changed" in r.text


def test_rehearsal_for_another_cue_does_not_count_but_rig_wide_does():
    other_cue = [rehearsal(1, date(2026, 11, 1), TEAM, cue_id=9)]
    assert rehearsal_reasons(RIG, 5, TEAM, other_cue, "v1", date(2026, 11, 20))[0].limit == "rehearsal"
    assert rehearsal_reasons(RIG, 9, TEAM, other_cue, "v1", date(2026, 11, 20)) == []


def test_no_rehearsal_at_all():
    (r,) = rehearsal_reasons(RIG, 5, TEAM, [], "v1", date(2026, 11, 20))
    assert "no rehearsal" in r.text


# --------------------------------------------------------------------------- area release, objection

def test_area_release():
    (r,) = area_release_reasons([], "blocked")
    assert r.level == "blocked" and "DGUV Vorschrift 17 §15" in r.fix
    release = AreaRelease(1, 3, Person("Sam Okoro", 1), "stage manager", at(date(2026, 11, 20), 19))
    assert area_release_reasons([release], "blocked") == []


def objection(id, rig=None, cue_id=None, resolved=False):
    return Objection(id, Person("Nell Varga", 3), "lifters", at(date(2026, 11, 18)), "handle bar loose at the weld",
                     Person("Ada Fenn", 9), rig=rig, cue_id=cue_id,
                     resolved_by=Person("Ada Fenn", 9) if resolved else None,
                     resolved_at=at(date(2026, 11, 19)) if resolved else None,
                     resolution="weld repaired and load-tested" if resolved else "")


@pytest.mark.parametrize("obj, rig, cue_id, blocked", [
    (objection(1, rig=RIG), RIG, 5, True),
    (objection(1, rig=RIG), "bough-lever", 6, False),
    (objection(1, cue_id=5), RIG, 5, True),
    (objection(1, cue_id=5), RIG, 7, False),
    (objection(1, rig=RIG, resolved=True), RIG, 5, False),
])
def test_objection_blocks_its_rig_or_cue_until_resolved(obj, rig, cue_id, blocked):
    reasons = objection_reasons([obj], rig, cue_id)
    assert bool(reasons) == blocked
    if blocked:
        assert "Ada Fenn" in reasons[0].fix and "handle bar loose" in reasons[0].text


# --------------------------------------------------------------------------- together

def ready_context(**changes):
    day = date(2026, 11, 20)
    base = dict(rig=RIG, cue_id=5, performance_id=3, performance_day=day, as_of=day, rule_set=LOLER, team=TEAM,
                configuration="v1", inspections=(insp(1, date(2026, 9, 1)),), checklist=ITEMS,
                answers=tuple(answer(i, item.key) for i, item in enumerate(ITEMS, 1)),
                briefing=Briefing(1, 3, RIG, Person("Sam Okoro", 1), at(day), attendees=tuple(p.person for p in TEAM)),
                rehearsals=(rehearsal(1, date(2026, 11, 1), TEAM),),
                releases=(AreaRelease(1, 3, Person("Sam Okoro", 1), "stage manager", at(day, 19)),))
    base.update(changes)
    return CueReadiness(**base)


def test_all_records_in_order_is_ready():
    assert cue_readiness(ready_context()) == []
    assert summary_line(RIG, []) == f"{RIG}: ready"


@pytest.mark.parametrize("change, limit", [
    ({"inspections": ()}, "inspection"),
    ({"answers": ()}, "preshow"),
    ({"briefing": None}, "briefing"),
    ({"rehearsals": ()}, "rehearsal"),
    ({"releases": ()}, "area_release"),
    ({"objections": (objection(1, rig=RIG),)}, "objection"),
])
def test_each_missing_record_blocks_on_the_day(change, limit):
    reasons = cue_readiness(ready_context(**change))
    assert [r.limit for r in reasons] == [limit]
    assert reasons[0].level == "blocked" and reasons[0].fix
    assert "NOT READY" in summary_line(RIG, reasons)


def test_night_records_are_not_due_before_the_day():
    early = ready_context(answers=(), briefing=None, releases=(), as_of=date(2026, 11, 10))
    assert cue_readiness(early) == []
    on_the_day = ready_context(answers=(), briefing=None, releases=())
    assert {r.limit for r in cue_readiness(on_the_day)} == {"preshow", "briefing", "area_release"}
    assert verdict_of(cue_readiness(on_the_day)) == "blocked"


def test_pending_level():
    assert pending_level(date(2026, 11, 20), date(2026, 11, 19)) is None
    assert pending_level(date(2026, 11, 20), date(2026, 11, 20)) == "blocked"


def test_participants_of_a_cue_night():
    from showops.show.model import Assignment, CueNight

    cue = CueNight(cue_id=5, number="7", name="Orchard rise", rig=RIG, riders=("Odile Brand",),
                   crew=(Assignment("brake", 2, "Ivo Marsh"), Assignment("lifters", 3, "Nell Varga")))
    assert participants_of(cue) == (Participant("Ivo Marsh", "brake", 2), Participant("Nell Varga", "lifters", 3),
                                    Participant("Odile Brand", "rider"))
