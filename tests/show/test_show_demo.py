"""The demo scenario: the heavy-understudy night is blocked for its load, the expired
training night for the training, and no other night or cue for either."""

from __future__ import annotations

from datetime import datetime, timedelta

import pytest

from showops.show import demo_data as d
from showops.store import show as store



@pytest.fixture
def plans(demo, monkeypatch):
    """Every night's plan from this area's rules alone (rig care's records are another area's)."""
    db, ids = demo
    monkeypatch.setattr(store, "_care_hook", lambda db, name: None)
    return ids, {p.performance_id: p for p in store.night_plans(db)}


def cue(plan, number):
    return next(c for c in plan.cues if c.number == number)


def test_the_demo_has_the_scenario_the_issue_asks_for(demo, today):
    db, ids = demo
    assert 6 <= len(d.PERFORMERS) <= 8
    assert len(d.CREW) == 8
    assert len(ids.performances) == 6
    assert len(ids.cues) >= 10
    rig_cues = [c for c in store.cue_list(db) if c["rig"]]
    assert len(rig_cues) >= 4
    starts = [datetime.fromisoformat(p["starts_at"]) for p in store.list_performances(db)]
    now = datetime.combine(today, datetime.min.time())
    assert sum(1 for s in starts if s < now) == 1           # one already past ...
    assert starts[0] == now - timedelta(days=2) + timedelta(hours=19, minutes=30)  # ... two days ago
    assert max(starts) - min(starts) <= timedelta(days=14)  # two weekends


def test_understudy_and_partner_exceed_the_rated_payload_by_the_rig_files_arithmetic():
    # Hand arithmetic from procedures/rigs/orchard-lift.toml: rated_payload 140 kg (the
    # maker's plate), allowance 4 kg per rider: 88 + 55 + 2 * 4 = 151 kg > 140 kg.
    masses = {p.name: p.mass_kg for p in d.PERFORMERS}
    cover = d.CUES[4].casts["cover"]
    assert d.UNDERSTUDY in cover
    assert sum(masses[n] for n in cover) + 4 * len(cover) == 151


def test_heavy_night_blocks_the_duet_for_its_load_with_a_computed_fix(plans):
    ids, by_id = plans
    duet = cue(by_id[ids.heavy_performance], "5")
    assert duet.verdict == "blocked"
    payload = next(r for r in duet.reasons if r.limit == "rated_payload")
    assert payload.level == "blocked"
    assert payload.value == pytest.approx(151.0)   # 88 + 55 + 2 x 4 kg (rig file arithmetic)
    assert payload.allowed == pytest.approx(140.0)
    assert duet.rider_total_kg == pytest.approx(151.0)
    assert any("down by 11 kg" in f for f in duet.fixes)
    assert any(f.startswith("the other cast (first: Tobiah Renn and Saskia Dunmore) clears") for f in duet.fixes)


def test_no_other_night_blocks_the_duet(plans):
    ids, by_id = plans
    for pid, plan in by_id.items():
        if pid == ids.heavy_performance:
            continue
        duet = cue(plan, "5")
        assert duet.verdict != "blocked", (plan.starts_at, [r.text for r in duet.reasons])
        assert not any(r.limit == "rated_payload" and r.level == "blocked" for r in duet.reasons)


def test_expired_training_blocks_windfall_on_that_night_only(plans, today):
    ids, by_id = plans
    for pid, plan in by_id.items():
        windfall = cue(plan, "8")
        training = [r for r in windfall.reasons if r.limit.startswith("training:")]
        if pid == ids.expired_training_performance:
            assert windfall.verdict == "blocked"
            assert [r.text for r in training] == [
                f"{d.EXPIRED_CREW} (spotter): training on orchard-lift expired "
                f"{(today - timedelta(days=35)).isoformat()}"]
            assert training[0].fix.startswith("assign a person trained on orchard-lift to spotter: ")
            assert "Ama Kettering" in training[0].fix
        else:
            assert training == []
            assert windfall.verdict != "blocked", (plan.starts_at, [r.text for r in windfall.reasons])


def test_every_other_rig_cue_runs_on_every_night(plans):
    ids, by_id = plans
    special = {(ids.heavy_performance, "5"), (ids.expired_training_performance, "8")}
    for pid, plan in by_id.items():
        for c in plan.rig_cues:
            if (pid, c.number) not in special:
                assert c.verdict != "blocked", (plan.starts_at, c.number, [r.text for r in c.reasons])


def test_plan_carries_names_and_versions_but_no_single_mass(plans):
    ids, by_id = plans
    plan = by_id[ids.heavy_performance]
    duet = cue(plan, "5")
    assert set(duet.riders) == {d.UNDERSTUDY, "Saskia Dunmore"}
    assert {a.role for a in duet.crew} == {"caller", "brake", "lifters", "spotter"}
    assert len(duet.people_in("lifters")) == 2
    assert len(duet.rig_version) == 64 and len(duet.procedure_version) == 64
    assert duet.signal
    assert plan.stage_manager == d.STAGE_MANAGER
    assert plan.venue == f"{d.VENUE}, {d.TOWN}"
    text = repr(plan)
    for p in d.PERFORMERS:
        assert f"mass_kg={p.mass_kg}" not in text
        assert f"'{p.mass_kg:g}'" not in text


def test_demo_ids_name_what_other_areas_build_on(demo):
    db, ids = demo
    assert ids.past_performance == ids.performances[0]
    assert ids.people[d.UNDERSTUDY] == ids.understudy
    assert ids.people[d.EXPIRED_CREW] == ids.expired_crew
    assert "orchard-lift" in ids.rigs
    assert set(ids.cues) >= {"1", "3", "5", "8", "11", "12"}


def test_demo_without_rig_files_skips_them_and_says_so(db, tmp_path, today):
    empty = tmp_path / "nothing"
    (empty / "rigs").mkdir(parents=True)
    ids = store.install_demo(db, today, procedures_dir=empty)
    assert ids.rigs == ()
    assert len(ids.skipped) == 2 and all("no file" in s for s in ids.skipped)
    assert all(c["rig"] is None for c in store.cue_list(db))


def test_cast_change_dates_follow_the_running_order(demo):
    db, ids = demo
    season = store._Season(db)
    perf = ids.performances
    start = {p: datetime.fromisoformat(season.performances[p][3]) for p in perf}
    duet = ids.cues["5"]
    heavy = perf.index(ids.heavy_performance)
    assert season.cast_since(perf[0], duet) is None                       # never changed
    assert season.cast_since(perf[heavy], duet) == start[perf[heavy - 1]]  # the cover goes on
    assert season.cast_since(perf[heavy + 1], duet) == start[perf[heavy]]  # and comes off again
    assert season.cast_since(perf[-1], duet) == start[perf[heavy]]
    assert season.cast_since(perf[-1], ids.cues["3"]) is None


def test_rehearsal_records_from_rig_care_block_the_unrehearsed_cover(demo, monkeypatch, today):
    # DGUV Vorschrift 17 §20: rehearsal on cast changes. Everyone rehearsed a week before
    # the run; nobody since: the understudy's night, and the night after (the first cast
    # back on), both need a new rehearsal.
    db, ids = demo
    week_before = datetime.combine(today - timedelta(days=7), datetime.min.time())
    records = [(pid, "orchard-lift", week_before.isoformat()) for pid in ids.people.values()]

    class Care:
        @staticmethod
        def rehearsal_records(db):
            return records

    monkeypatch.setattr(store, "_care_hook", lambda db, name: getattr(Care, name, None))
    plans = {p.performance_id: p for p in store.night_plans(db)}
    heavy = plans[ids.heavy_performance]
    texts = [r.text for r in cue(heavy, "5").reasons if r.limit == "rehearsal"]
    assert sorted(texts) == sorted(
        f"{name} has not rehearsed on orchard-lift since the cast changed after "
        f"{plans[ids.performances[2]].starts_at:%Y-%m-%d %H:%M}" for name in (d.UNDERSTUDY, "Saskia Dunmore"))
    assert not [r for r in cue(plans[ids.performances[1]], "5").reasons if r.limit == "rehearsal"]

    records.append((ids.understudy, "orchard-lift", (heavy.starts_at - timedelta(hours=3)).isoformat()))
    records.append((ids.people["Saskia Dunmore"], "orchard-lift", (heavy.starts_at - timedelta(hours=3)).isoformat()))
    heavy = store.load_night_plan(db, ids.heavy_performance)
    assert not [r for r in cue(heavy, "5").reasons if r.limit == "rehearsal"]


def test_rig_care_readiness_reasons_reach_the_cue_with_tonights_load(demo, monkeypatch):
    from showops.verdict import Reason

    db, ids = demo
    seen = []

    class Care:
        @staticmethod
        def readiness_reasons(db, performance_id, cue):
            seen.append((performance_id, cue))
            if performance_id == ids.performances[1] and cue.number == "3":
                return [Reason("thorough examination overdue since 2026-11-20", limit="inspection",
                               fix="record a thorough examination of orchard-lift")]
            return []

    monkeypatch.setattr(store, "_care_hook", lambda db, name: getattr(Care, name, None))
    plan = store.load_night_plan(db, ids.performances[1])
    blossom = cue(plan, "3")
    assert blossom.verdict == "blocked"
    assert [r.limit for r in blossom.reasons if r.level == "blocked"] == ["inspection"]
    assert "record a thorough examination of orchard-lift" in blossom.fixes
    asked = {c.number: c for p, c in seen}
    assert set(asked) == {c.number for c in plan.rig_cues}          # asked for rig cues only
    assert asked["5"].load["rider_mass_kg"] == pytest.approx(124.0)  # 61 + 55 + 2 x 4 kg, from the rig file
    assert set(asked["5"].riders) == {"Tobiah Renn", "Saskia Dunmore"}
    assert {a.role for a in asked["5"].crew} == {"caller", "brake", "lifters", "spotter"}
