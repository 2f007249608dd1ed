"""Every verdict rule of the night, and what clears it (pure: records in, plan out)."""

from __future__ import annotations

from dataclasses import replace
from datetime import date, datetime
from pathlib import Path

import pytest

from showops.procedure.model import Phase, Procedure, Step
from showops.rig import load_rig
from showops.show.verdicts import (CrewMember, CueInput, PerformanceInput, Rehearsal, Rider, RigSolver,
                                   Training, acts_and_checks, night_plan, uncleared_riders, unrehearsed_riders,
                                   unstaffed_roles, untrained_crew)
from showops.verdict import Reason

RIG_FILE = Path(__file__).parents[2] / "procedures" / "rigs" / "orchard-lift.toml"
RIG = load_rig(RIG_FILE)
NIGHT = datetime(2026, 12, 12, 19, 30)
ON = NIGHT.date()
CURRENT = Training("orchard-lift", date(2026, 9, 1), "Halden Voss", date(2027, 9, 1))


def step(number, title, by, check=None, phase="Ride"):
    return Step(title=title, line=10 + number, phase=phase, number=number, by=by, check=check)


PROCEDURE = Procedure(
    title="Orchard lift (test)", rig="orchard-lift", roles=("caller", "spotter", "brake", "lifters", "rider"),
    signal="arms crossed on the chest", start={}, text="test procedure",
    phases=(Phase("Board", 5, False, (step(1, "Brake on", "brake", "spotter", "Board"),
                                      step(2, "Rider boards", "rider", "spotter", "Board"))),
            Phase("Ride", 20, False, (step(3, "Release brake", "brake", "spotter"),
                                      step(4, "Raise", "lifters")))),
)


def crew(pid, name, *roles, training=CURRENT):
    return CrewMember(pid, name, frozenset(roles), {"orchard-lift": training} if training else {})


CALLER = crew(1, "Halden Voss", "caller")
BRAKE = crew(2, "Margit Oduya", "brake", "spotter")
LIFTER_A = crew(3, "Fenn Castell", "lifters", "brake")
LIFTER_B = crew(4, "Joss Penhaligon", "lifters")
SPOTTER = crew(5, "Ama Kettering", "lifters", "spotter")
SPARE = crew(6, "Bastian Loe", "spotter", "lifters")
POOL = (CALLER, BRAKE, LIFTER_A, LIFTER_B, SPOTTER, SPARE)
FULL_CREW = (("caller", CALLER), ("brake", BRAKE), ("lifters", LIFTER_A), ("lifters", LIFTER_B),
             ("spotter", SPOTTER))

LIGHT = Rider(20, "Saskia Dunmore", 55, frozenset({"orchard-lift"}))
PARTNER = Rider(21, "Tobiah Renn", 61, frozenset({"orchard-lift"}))
HEAVY = Rider(22, "Mateus Oyelaran", 88, frozenset({"orchard-lift"}))


def cue(**changes) -> CueInput:
    base = CueInput(cue_id=5, number="5", name="Two in the branches", rig="orchard-lift", rig_model=RIG,
                    procedure=PROCEDURE, procedure_slug="orchard-lift", riders=(PARTNER, LIGHT), crew=FULL_CREW,
                    casts={"first": (PARTNER, LIGHT), "cover": (HEAVY, LIGHT)})
    return replace(base, **changes)


def plan_for(c: CueInput, **kwargs):
    perf = PerformanceInput(performance_id=9, production="The Glass Orchard", company="Kestrel Yard Dance Company",
                            venue="Ferrier Street Drill Hall, Aldmouth", starts_at=NIGHT, stage_manager="Halden Voss",
                            cues=(c,), crew_pool=POOL)
    kwargs.setdefault("advisor", lambda rig, masses: None)
    # The procedure checker is the procedure area's (tested there); here it passes.
    kwargs.setdefault("checker", lambda procedure, rig_result, context: ([], "test-rules"))
    return night_plan(perf, **kwargs).cues[0]


def blocked_limits(cue_night) -> list[str]:
    return [r.limit for r in cue_night.reasons if r.level == "blocked"]


def test_a_well_staffed_light_duet_is_not_blocked():
    night = plan_for(cue())
    assert night.verdict != "blocked", [r.text for r in night.reasons]
    assert blocked_limits(night) == []


def test_a_cue_with_no_rig_is_ok_and_carries_nothing():
    night = plan_for(cue(rig=None, rig_model=None, procedure=None, riders=(), crew=()))
    assert (night.verdict, night.reasons, night.load) == ("ok", (), None)


# ---------------------------------------------------------------- the load


def test_heavy_pair_is_blocked_for_rated_payload():
    # 88 + 55 + 2 x 4 kg allowance = 151 kg against the 140 kg on the maker's plate
    # (procedures/rigs/orchard-lift.toml; hand arithmetic).
    night = plan_for(cue(riders=(HEAVY, LIGHT)))
    payload = next(r for r in night.reasons if r.limit == "rated_payload")
    assert (payload.level, payload.value, payload.allowed) == ("blocked", pytest.approx(151.0), 140.0)
    assert "bring the riders' total (with allowance) down by 11 kg to the rated payload of 140 kg" in night.fixes
    assert ("the other cast (first: Tobiah Renn and Saskia Dunmore) clears the load and casting checks"
            in night.fixes)


def test_the_balance_advisor_text_leads_the_fixes_when_installed():
    night = plan_for(cue(riders=(HEAVY, LIGHT)), advisor=lambda rig, masses: f"advice for {len(masses)} riders")
    assert night.fixes[0] == "advice for 2 riders"


def test_the_other_cast_that_is_also_too_heavy_says_it_does_not_clear():
    other = Rider(23, "Wren Halloway", 90, frozenset({"orchard-lift"}))
    night = plan_for(cue(riders=(HEAVY, LIGHT), casts={"second": (other, LIGHT)}))
    # 90 + 55 + 2 x 4 kg = 153 kg, 109 % of the 140 kg rated payload (rig file arithmetic)
    assert any(f.startswith("the other cast (second: Wren Halloway and Saskia Dunmore) does not clear it "
                            "(rated payload at 109% of its limit") for f in night.fixes), night.fixes


def test_solves_are_cached_by_rig_version_and_masses():
    solver = RigSolver()
    a = solver(RIG, [61, 55])
    b = solver(RIG, [55, 61])
    assert a is b and solver.solves == 1
    solver(RIG, [88, 55])
    assert solver.solves == 2


# ---------------------------------------------------------------- staffing


@pytest.mark.parametrize("drop, limit, text", [
    ("spotter", "unstaffed:spotter", "nobody is assigned to spotter"),
    ("caller", "unstaffed:caller", "nobody is assigned to caller"),
    ("brake", "unstaffed:brake", "nobody is assigned to brake"),
])
def test_a_role_with_nobody_blocks_and_names_who_could_take_it(drop, limit, text):
    night = plan_for(cue(crew=tuple(a for a in FULL_CREW if a[0] != drop)))
    reason = next(r for r in night.reasons if r.limit == limit)
    assert (reason.text, reason.level) == (text, "blocked")
    assert reason.fix.startswith(f"assign a person trained on orchard-lift to {drop}")


def test_one_lifter_where_the_rig_assumes_two_blocks():
    night = plan_for(cue(crew=tuple(a for a in FULL_CREW if a[1] is not LIFTER_B)))
    reason = next(r for r in night.reasons if r.limit == "unstaffed:lifters")
    assert reason.text == "1 lifter assigned; the rig's pull per lifter is computed for 2"
    assert "Bastian Loe" in reason.fix  # free, trained, listed for lifters


def test_no_riders_blocks_the_rider_role():
    assert unstaffed_roles(PROCEDURE, FULL_CREW, (), RIG)[0].text == "nobody is cast to ride"


def test_a_person_not_listed_for_the_role_blocks():
    wrong = (("caller", CALLER), ("brake", LIFTER_B), ("lifters", LIFTER_A), ("lifters", SPARE), ("spotter", SPOTTER))
    night = plan_for(cue(crew=wrong))
    assert [r.text for r in night.reasons if r.limit == "role:brake"] == [
        "Joss Penhaligon is assigned to brake but is not listed for that role"]


# ---------------------------------------------------------------- training


@pytest.mark.parametrize("training, text", [
    (None, "Ama Kettering (spotter) is not trained on orchard-lift"),
    (Training("orchard-lift", date(2025, 1, 5), "Lise Armitage", date(2026, 10, 28)),
     "Ama Kettering (spotter): training on orchard-lift expired 2026-10-28"),
    (Training("orchard-lift", date(2026, 12, 20), "Lise Armitage", date(2027, 12, 20)),
     "Ama Kettering (spotter): training on orchard-lift is dated 2026-12-20, after this performance"),
])
def test_untrained_or_expired_crew_blocks(training, text):
    spotter = crew(5, "Ama Kettering", "lifters", "spotter", training=training)
    reasons = untrained_crew([("spotter", spotter)], "orchard-lift", ON)
    assert [r.text for r in reasons] == [text]
    night = plan_for(cue(crew=FULL_CREW[:-1] + (("spotter", spotter),)))
    assert night.verdict == "blocked"
    assert next(r for r in night.reasons if r.limit == "training:spotter").fix == (
        "assign a person trained on orchard-lift to spotter: Bastian Loe")


def test_training_valid_through_its_expiry_day():
    last_day = Training("orchard-lift", date(2025, 12, 12), "Lise Armitage", ON)
    assert untrained_crew([("spotter", crew(5, "Ama Kettering", "spotter", training=last_day))], "orchard-lift", ON) == []


def test_training_on_another_rig_does_not_count():
    other = CrewMember(5, "Ama Kettering", frozenset({"spotter"}),
                       {"bough-lever": Training("bough-lever", date(2026, 9, 1), "Halden Voss", date(2027, 9, 1))})
    assert untrained_crew([("spotter", other)], "orchard-lift", ON)[0].text == (
        "Ama Kettering (spotter) is not trained on orchard-lift")


# ---------------------------------------------------------------- riders


def test_a_rider_not_cleared_for_the_rig_blocks_and_the_other_cast_is_tried():
    floor_only = Rider(24, "Priya Castellane", 64, frozenset())
    night = plan_for(cue(riders=(floor_only, LIGHT)))
    assert [r.text for r in night.reasons if r.limit == "rider_clearance"] == [
        "Priya Castellane is not cleared to ride orchard-lift"]
    assert "the other cast (first: Tobiah Renn and Saskia Dunmore) clears the load and casting checks" in night.fixes
    assert uncleared_riders([LIGHT], "orchard-lift") == []


# DGUV Vorschrift 17 §20: rehearsal on every cast change.
CHANGED = datetime(2026, 12, 6, 19, 30)


@pytest.mark.parametrize("rehearsed_at, blocked", [
    (None, True),                               # never rehearsed
    (datetime(2026, 12, 1, 18, 0), True),       # before the cast changed
    (datetime(2026, 12, 10, 17, 0), False),     # after the change, before tonight
    (datetime(2026, 12, 13, 17, 0), True),      # after tonight does not count tonight
])
def test_rehearsal_since_the_cast_changed(rehearsed_at, blocked):
    records = [Rehearsal(LIGHT.person_id, "orchard-lift", rehearsed_at)] if rehearsed_at else []
    reasons = unrehearsed_riders([LIGHT], "orchard-lift", CHANGED, NIGHT, records)
    assert bool(reasons) is blocked
    if blocked:
        assert reasons[0].text == "Saskia Dunmore has not rehearsed on orchard-lift since the cast changed after 2026-12-06 19:30"
        assert reasons[0].fix == "record a rehearsal of Saskia Dunmore on orchard-lift before the performance"


def test_rehearsal_on_another_rig_does_not_count():
    records = [Rehearsal(LIGHT.person_id, "bough-lever", datetime(2026, 12, 10, 17, 0))]
    assert unrehearsed_riders([LIGHT], "orchard-lift", CHANGED, NIGHT, records)


def test_rehearsal_rule_is_off_without_records_and_on_with_them():
    assert plan_for(cue(cast_since=CHANGED)).verdict != "blocked"
    night = plan_for(cue(cast_since=CHANGED), rehearsals=[
        Rehearsal(PARTNER.person_id, "orchard-lift", datetime(2026, 12, 10, 17, 0))])
    assert [r.text for r in night.reasons if r.limit == "rehearsal"] == [
        "Saskia Dunmore has not rehearsed on orchard-lift since the cast changed after 2026-12-06 19:30"]


# ---------------------------------------------------------------- two people


def test_one_person_acting_and_checking_a_step_blocks():
    # DGUV Information 215-320: the person who secures a rider is not the one who checks.
    doubled = (("caller", CALLER), ("brake", BRAKE), ("lifters", LIFTER_A), ("lifters", LIFTER_B),
               ("spotter", BRAKE))
    reasons = acts_and_checks(PROCEDURE, doubled, (LIGHT,))
    assert [r.text for r in reasons] == [
        'Margit Oduya is assigned to both brake and spotter: step 1 "Brake on" would be checked by the person who does it']
    assert reasons[0].fix == "assign a different person to spotter"
    night = plan_for(cue(crew=doubled))
    assert "duty_separation" in blocked_limits(night)


def test_different_people_acting_and_checking_pass():
    assert acts_and_checks(PROCEDURE, FULL_CREW, (LIGHT,)) == []


# ---------------------------------------------------------------- procedure and readiness


def test_no_procedure_on_file_blocks():
    night = plan_for(cue(procedure=None))
    assert [r.text for r in night.reasons if r.limit == "procedure"] == ["no procedure on file for this cue"]
    assert night.verdict == "blocked"


def test_procedure_checker_findings_block_and_carry_the_rule_set_version():
    seen = {}

    def checker(procedure, rig_result, context):
        seen.update(context=context, load_verdict=rig_result.verdict)
        return ['procedures/orchard-lift.md:14: step "Release brake": needs load ok (load blocked)'], "r7"

    night = plan_for(cue(riders=(HEAVY, LIGHT)), checker=checker)
    assert night.findings == ('procedures/orchard-lift.md:14: step "Release brake": needs load ok (load blocked)',)
    assert night.rule_set_version == "r7"
    assert ("procedure check: procedures/orchard-lift.md:14: step \"Release brake\": needs load ok (load blocked)"
            in [r.text for r in night.reasons])
    assert seen["load_verdict"] == "blocked"
    assert seen["context"]["crew"]["lifters"] == ["Fenn Castell", "Joss Penhaligon"]
    assert seen["context"]["riders"] == ["Mateus Oyelaran", "Saskia Dunmore"]


def test_without_a_checker_installed_the_cue_says_its_procedure_is_unchecked():
    night = plan_for(cue(), checker=lambda procedure, rig_result, context: (None, None))
    assert ("caution", "procedure_unchecked") in [(r.level, r.limit) for r in night.reasons]
    assert night.verdict == "caution"


def test_readiness_reasons_from_rig_care_count_with_their_level():
    objection = Reason("open safety objection: handrail loose", limit="objection", fix="resolve the objection")
    night = plan_for(cue(readiness=(objection,)))
    assert night.verdict == "blocked" and objection in night.reasons
    assert "resolve the objection" in night.fixes
    soon = Reason("thorough examination due in 3 days", level="caution", limit="inspection")
    assert plan_for(cue(readiness=(soon,))).verdict in ("caution",)


def test_the_plan_never_holds_one_persons_mass():
    odd = Rider(25, "Wren Halloway", 49.37, frozenset({"orchard-lift"}))
    night = plan_for(cue(riders=(odd,)))
    assert "49.37" not in repr(night)
    assert night.rider_total_kg == pytest.approx(53.37)  # the riders' total with allowance is the figure shown


def test_another_cast_is_not_offered_for_a_crew_block():
    expired = crew(5, "Ama Kettering", "spotter",
                   training=Training("orchard-lift", date(2025, 1, 5), "Lise Armitage", date(2026, 10, 28)))
    night = plan_for(cue(crew=FULL_CREW[:-1] + (("spotter", expired),)))
    assert night.verdict == "blocked"
    assert not any(f.startswith("the other cast") for f in night.fixes), night.fixes


# ---------------------------------------------------------------- with the real procedure checker

SHIPPED = Path(__file__).parents[2] / "procedures" / "orchard-lift.md"


def real_procedure(text=None):
    from showops.procedure import parse_procedure

    return parse_procedure(text if text is not None else SHIPPED.read_text(encoding="utf-8"),
                           source="procedures/orchard-lift.md")


def test_a_blocked_load_is_reported_once_not_again_as_procedure_findings():
    from showops.show.verdicts import check_cue_procedure

    night = plan_for(cue(riders=(HEAVY, LIGHT), procedure=real_procedure()), checker=check_cue_procedure)
    assert night.verdict == "blocked"
    assert [r.limit for r in night.reasons if r.level == "blocked"] == ["rated_payload", "operator_force_per_person"]
    assert night.findings == ()
    assert "correct the procedure file so the checker passes" not in night.fixes


def test_a_faulty_procedure_is_still_found_when_the_load_is_blocked():
    from showops.show.verdicts import check_cue_procedure

    text = SHIPPED.read_text(encoding="utf-8")
    faulty = text.replace("- needs: rider aboard, strap fastened, platform down, area clear, load ok\n",
                          "- needs: rider aboard, strap fastened, platform down, area clear\n", 1)
    assert faulty != text  # the release step of the shipped procedure lost its "load ok"
    for riders in ((HEAVY, LIGHT), (PARTNER, LIGHT)):
        night = plan_for(cue(riders=riders, procedure=real_procedure(faulty)), checker=check_cue_procedure)
        assert any('without needing "load ok"' in f for f in night.findings), night.findings
        assert "procedure" in [r.limit for r in night.reasons if r.level == "blocked"]
