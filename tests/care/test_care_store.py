"""The care store: records written, refused, logged, never changed, and turned into reasons.

The rules' sources are named in tests/care/test_rules.py and showops/care/rules.py:
LOLER 1998 reg 9 (six-monthly thorough examination of equipment lifting people, from
memory), DGUV Vorschrift 17 §15 (area release) and §20 (rehearsal on cast changes,
safety objection) (from memory), EU Machinery Directive 2006/42/EC Annex I §6.1.1
(working coefficients doubled for lifting persons, from memory).
"""

from __future__ import annotations

import sqlite3
from datetime import date

import pytest

from showops.errors import NotFound, PermissionDenied, ValidationError
from showops.store import care
from showops.store import show as show_store
from showops.store.log import iter_log, verify_log
TODAY = date(2026, 11, 20)  # the scene's day (conftest.py)


def limits(reasons, level=None):
    return [r.limit for r in reasons if level is None or r.level == level]


def of(reasons, limit):
    return [r for r in reasons if r.limit == limit]


def examine(scene, on="2026-09-01", **kw):
    args = dict(scope="thorough examination, whole rig", examiner="Marta Quill",
                findings="brake pads 4 mm, straps intact, pins greased", objection_to_use=False, today=TODAY)
    args.update(kw)
    return care.record_inspection(scene.db, "orchard-lift", on, **args)


# --------------------------------------------------------------------------- inspections

def test_no_examination_blocks_every_cue_of_the_rig(scene):
    reasons = care.readiness_reasons(scene.db, scene.next_week, scene.cue, as_of=TODAY)
    (r,) = of(reasons, "inspection")[:1]
    assert r.level == "blocked" and "no passing" in r.text


def test_examination_falling_due_between_performances(scene):
    # Last examined 2026-05-25; six-monthly (LOLER 1998 reg 9(3)(a)(i)): due 2026-11-25,
    # after tonight (2026-11-20) and before next week (2026-11-27).
    examine(scene, on="2026-05-25")
    tonight = of(care.readiness_reasons(scene.db, scene.tonight, scene.cue, as_of=TODAY), "inspection")
    assert [r.level for r in tonight] == ["caution"]
    later = of(care.readiness_reasons(scene.db, scene.next_week, scene.cue, as_of=TODAY), "inspection")
    assert [r.level for r in later] == ["blocked"] and "overdue since 2026-11-25" in later[0].text
    examine(scene, on="2026-11-20")
    assert of(care.readiness_reasons(scene.db, scene.next_week, scene.cue, as_of=TODAY), "inspection") == []


def test_failed_inspection_then_remedy_then_pass(scene):
    examine(scene, on="2026-09-01")
    failed = examine(scene, on="2026-11-18", findings="brake slips at 700 N", objection_to_use=True,
                     follow_up="replace brake pads and re-test holding")
    reasons = of(care.readiness_reasons(scene.db, scene.tonight, scene.cue, as_of=TODAY), "inspection")
    assert reasons[0].level == "blocked" and "out of service" in reasons[0].text
    care.acknowledge_remedy(scene.db, failed, "2026-11-19", person="Ada Fenn", remedy="pads replaced, holds 1.3 kN",
                            today=TODAY)
    still = of(care.readiness_reasons(scene.db, scene.tonight, scene.cue, as_of=TODAY), "inspection")
    assert "out of service" in still[0].text  # a remedy alone is not a passing examination
    examine(scene, on="2026-11-19")
    assert of(care.readiness_reasons(scene.db, scene.tonight, scene.cue, as_of=TODAY), "inspection") == []


def test_incident_calls_for_extraordinary_examination(scene):
    examine(scene, on="2026-09-01")
    care.record_rig_event(scene.db, "orchard-lift", "overload", "2026-11-18", "three dancers climbed aboard",
                          reported_by="Ada Fenn", today=TODAY)
    (r,) = of(care.readiness_reasons(scene.db, scene.tonight, scene.cue, as_of=TODAY), "inspection")
    assert r.level == "blocked" and "overload" in r.text
    examine(scene, on="2026-11-19", scope="extraordinary examination after overload")
    assert of(care.readiness_reasons(scene.db, scene.tonight, scene.cue, as_of=TODAY), "inspection") == []


@pytest.mark.parametrize("change, field", [
    ({"on": "2026-11-21"}, "on"),                 # in the future
    ({"on": "21/11/2026"}, "on"),                 # not ISO 8601
    ({"examiner": "Somebody Else"}, "examiner"),  # not on the people list
    ({"findings": "  "}, "findings"),
    ({"scope": ""}, "scope"),
    ({"objection_to_use": True}, "follow_up"),
    ({"covers": ["weekly"]}, "covers"),
])
def test_bad_inspections_are_refused(scene, change, field):
    with pytest.raises(ValidationError) as err:
        examine(scene, **change)
    assert err.value.field == field
    assert care.inspections(scene.db) == []


def test_unknown_rig_is_refused(scene):
    with pytest.raises(ValidationError) as err:
        care.record_inspection(scene.db, "no-such-rig", "2026-11-01", scope="x y", examiner="Marta Quill",
                               findings="a b", objection_to_use=False, today=TODAY)
    assert err.value.field == "rig" and "orchard-lift" in str(err.value)


def test_due_list(scene):
    examine(scene, on="2026-05-25")
    (item,) = [d for d in care.due(scene.db, TODAY, 14) if d.rule.key == "thorough-6m"]
    assert item.status == "due soon" and item.due_on == date(2026, 11, 25) and item.days == 5
    assert care.due(scene.db, TODAY, 3) == []
    with pytest.raises(ValidationError):
        care.due(scene.db, TODAY, -1)


def test_venue_edits_its_rule_set(scene):
    examine(scene, on="2026-05-25")
    care.choose_rule_set(scene.db, "orchard-lift", "uk-loler", "Ada Fenn")
    care.write_rule(scene.db, "uk-loler", "thorough-6m", written_by="Ada Fenn", months=3,
                    source="venue competent person: examination scheme 2026")
    (r,) = of(care.readiness_reasons(scene.db, scene.tonight, scene.cue, as_of=TODAY), "inspection")
    assert r.level == "blocked" and "every 3 months" in r.text
    assert care.rule_set_for(scene.db, "orchard-lift").rule("thorough-6m").months == 3
    with pytest.raises(ValidationError) as err:
        care.choose_rule_set(scene.db, "orchard-lift", "no-such-set", "Ada Fenn")
    assert err.value.field == "rule_set"


# --------------------------------------------------------------------------- log and append-only

def test_every_record_is_a_row_of_the_hash_chained_log(scene):
    insp = examine(scene)
    obj = care.raise_objection(scene.db, person="Nell Varga", role="lifters", reason="handle bar loose at the weld",
                               responsible="Ada Fenn", rig="orchard-lift")
    care.resolve_objection(scene.db, obj, person="Ada Fenn", reason="weld repaired and load-tested")
    rows = list(iter_log(scene.db))
    events = [r["event"] for r in rows]
    assert events == ["inspection_recorded", "objection_raised", "objection_resolved"]
    log_id = scene.db.execute("SELECT log_id FROM care_inspection WHERE id = ?", [insp]).fetchone()[0]
    assert log_id == rows[0]["id"] and rows[0]["person_name"] == "Marta Quill"
    assert "brake pads 4 mm" in rows[0]["detail"]
    assert rows[1]["role"] == "lifters" and "handle bar loose" in rows[1]["detail"]
    assert verify_log(scene.db) is None


@pytest.mark.parametrize("sql", ["UPDATE care_objection SET reason = 'nothing'", "DELETE FROM care_objection",
                                 "DELETE FROM care_resolution", "UPDATE care_inspection SET objection_to_use = 0"])
def test_records_are_never_changed_or_deleted(scene, sql):
    examine(scene)
    obj = care.raise_objection(scene.db, person="Nell Varga", role="lifters", reason="handle bar loose",
                               responsible="Ada Fenn", rig="orchard-lift")
    care.resolve_objection(scene.db, obj, person="Ada Fenn", reason="weld repaired and load-tested")
    with pytest.raises(sqlite3.IntegrityError, match="append-only"):
        scene.db.execute(sql)


# --------------------------------------------------------------------------- objection

def test_objection_blocks_until_the_responsible_person_resolves_it(scene):
    obj = care.raise_objection(scene.db, person="Ivo Marsh", role="brake", reason="brake lever cracked",
                               responsible="Ada Fenn", cue_id=scene.cue, performance_id=scene.tonight)
    (r,) = of(care.readiness_reasons(scene.db, scene.next_week, scene.cue, as_of=TODAY), "objection")
    assert r.level == "blocked" and "brake lever cracked" in r.text and "Ada Fenn" in r.fix
    with pytest.raises(PermissionDenied):
        care.resolve_objection(scene.db, obj, person="Sam Okoro", reason="looks fine to me")
    with pytest.raises(ValidationError) as err:
        care.resolve_objection(scene.db, obj, person="Ada Fenn", reason="   ")
    assert err.value.field == "reason"
    care.resolve_objection(scene.db, obj, person="Ada Fenn", reason="lever replaced, brake re-tested at 1.2 kN")
    assert of(care.readiness_reasons(scene.db, scene.next_week, scene.cue, as_of=TODAY), "objection") == []
    (kept,) = care.objections(scene.db)
    assert kept.reason == "brake lever cracked" and kept.resolution.startswith("lever replaced")
    with pytest.raises(ValidationError):
        care.resolve_objection(scene.db, obj, person="Ada Fenn", reason="again")


@pytest.mark.parametrize("kwargs, field", [
    ({"reason": ""}, "reason"),
    ({"reason": "x", "rig": None}, "rig"),
    ({"reason": "x", "person": "Stranger"}, "person"),
    ({"reason": "x", "responsible": "Nobody Here"}, "responsible"),
    ({"reason": "x", "role": " "}, "role"),
])
def test_bad_objections_are_refused(scene, kwargs, field):
    args = dict(person="Nell Varga", role="lifters", responsible="Ada Fenn", rig="orchard-lift")
    args.update(kwargs)
    with pytest.raises(ValidationError) as err:
        care.raise_objection(scene.db, **args)
    assert err.value.field == field


# --------------------------------------------------------------------------- briefing, area release

def test_briefing_absentee_blocked_until_they_confirm(scene):
    b = care.give_briefing(scene.db, scene.tonight, "orchard-lift", given_by="Sam Okoro")
    for name in ("Ivo Marsh", "Odile Brand"):
        care.confirm_briefing(scene.db, b, name, device="phone")
    (r,) = of(care.readiness_reasons(scene.db, scene.tonight, scene.cue, as_of=TODAY), "briefing")
    assert r.level == "blocked" and "Nell Varga (lifters)" in r.text
    care.confirm_briefing(scene.db, b, "Nell Varga")
    assert of(care.readiness_reasons(scene.db, scene.tonight, scene.cue, as_of=TODAY), "briefing") == []
    with pytest.raises(ValidationError):
        care.confirm_briefing(scene.db, b, "Nell Varga")          # twice
    with pytest.raises(ValidationError) as err:
        care.confirm_briefing(scene.db, b, "Rune Tarr")           # not on the rig tonight
    assert err.value.field == "person"
    with pytest.raises(NotFound):
        care.confirm_briefing(scene.db, 999, "Nell Varga")


def test_night_records_block_only_from_the_day(scene):
    early = care.readiness_reasons(scene.db, scene.tonight, scene.cue, as_of=date(2026, 11, 19))
    assert not {"briefing", "area_release", "preshow"} & set(limits(early))
    on_day = care.readiness_reasons(scene.db, scene.tonight, scene.cue, as_of=TODAY)
    assert {"briefing", "area_release", "preshow"} <= set(limits(on_day, "blocked"))


def test_area_release(scene):
    with pytest.raises(ValidationError) as err:
        care.release_area(scene.db, scene.tonight, person="Nell Varga", role="lifters")
    assert err.value.field == "role"
    with pytest.raises(ValidationError) as err:
        care.release_area(scene.db, scene.tonight, person="Ada Fenn", role="stage manager")
    assert err.value.field == "person"
    care.release_area(scene.db, scene.tonight, person="Sam Okoro", note="stage clear, traps closed")
    assert of(care.readiness_reasons(scene.db, scene.tonight, scene.cue, as_of=TODAY), "area_release") == []
    # the release is for that performance only
    assert of(care.readiness_reasons(scene.db, scene.next_week, scene.cue, as_of=date(2026, 11, 27)),
              "area_release")


# --------------------------------------------------------------------------- rehearsal

TEAM = [("Sam Okoro", "caller"), ("Ivo Marsh", "brake"), ("Nell Varga", "lifters"), ("Odile Brand", "rider")]


def test_understudy_blocked_until_rehearsal_recorded(scene):
    care.record_rehearsal(scene.db, "orchard-lift", "2026-11-10", TEAM, today=TODAY)
    assert of(care.readiness_reasons(scene.db, scene.next_week, scene.cue, as_of=TODAY), "rehearsal") == []
    show_store.cast_riders(scene.db, scene.next_week, scene.cue, [scene.people["Pia Lund"]])
    (r,) = of(care.readiness_reasons(scene.db, scene.next_week, scene.cue, as_of=TODAY), "rehearsal")
    assert r.level == "blocked" and "Pia Lund (rider)" in r.text
    care.record_rehearsal(scene.db, "orchard-lift", "2026-11-20", TEAM[:3] + [("Pia Lund", "rider")],
                          cue_id=scene.cue, today=TODAY)
    assert of(care.readiness_reasons(scene.db, scene.next_week, scene.cue, as_of=TODAY), "rehearsal") == []


@pytest.mark.parametrize("team, field", [
    ([("Quentin Hale", "rider")], "team"),        # not cleared to ride the rig
    ([("Rune Tarr", "lifters")], "team"),         # training expired
    ([("Marta Quill", "brake")], "team"),         # never trained on it
    ([("Nobody", "brake")], "team"),              # not on the people list
    ([], "team"),
])
def test_rehearsal_for_a_rig_the_person_is_not_trained_on_is_refused(scene, team, field):
    with pytest.raises(ValidationError) as err:
        care.record_rehearsal(scene.db, "orchard-lift", "2026-11-10", team, today=TODAY)
    assert err.value.field == field
    assert care.rehearsals(scene.db) == []


def test_rehearsal_in_the_future_is_refused(scene):
    with pytest.raises(ValidationError) as err:
        care.record_rehearsal(scene.db, "orchard-lift", "2026-12-01", TEAM, today=TODAY)
    assert err.value.field == "on"


# --------------------------------------------------------------------------- equipment register

def test_part_over_its_people_rating_blocks(scene):
    # The orchard lift's brake must hold a few hundred newtons; a brake rated 500 N at 2:1
    # carrying people keeps 250 N (2006/42/EC Annex I §6.1.1 doubling).
    care.add_part(scene.db, "orchard-lift", "rear bar disc brake", "brake", carries_people=True, rating_n=500,
                  design_factor=2, sees="brake_n")
    (r,) = of(care.readiness_reasons(scene.db, scene.tonight, scene.cue, as_of=TODAY), "equipment")
    assert r.level == "blocked" and r.allowed == pytest.approx(250)
    (part,) = care.parts(scene.db, "orchard-lift")
    care.retire_part(scene.db, part.id, "2026-11-19", "replaced by a 3 kN brake", today=TODAY)
    care.add_part(scene.db, "orchard-lift", "rear bar disc brake (new)", "brake", carries_people=True,
                  rating_n=3000, design_factor=2, sees="brake_n")
    assert of(care.readiness_reasons(scene.db, scene.tonight, scene.cue, as_of=TODAY), "equipment") == []
    assert len(care.parts(scene.db, "orchard-lift", fitted_only=False)) == 2


@pytest.mark.parametrize("kwargs, field", [
    ({"kind": "rope-lock"}, "kind"),
    ({"rating_n": -5}, "rating_n"),
    ({"rating_n": None}, "rating_n"),
    ({"design_factor": None}, "design_factor"),
    ({"design_factor": 0.5}, "design_factor"),
    ({"sees": "moon_n"}, "sees"),
    ({"share": 0}, "share"),
])
def test_bad_parts_are_refused(scene, kwargs, field):
    args = dict(kind="strap", carries_people=True, rating_n=10000, design_factor=7, sees="riders_n")
    args.update(kwargs)
    with pytest.raises(ValidationError) as err:
        care.add_part(scene.db, "orchard-lift", "rider strap", **args)
    assert err.value.field == field
