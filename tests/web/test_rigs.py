"""Rigs and limits: editing a rig file's [limits] keeps its comments, a change makes
a new version, the verdicts are recomputed from it and the change is logged.

TOML values are read back with the standard library's tomllib (Python 3.11, TOML 1.0).
"""

from __future__ import annotations

import json
import tomllib
from pathlib import Path

import pytest

from showops.errors import ValidationError
from showops.store.users import DEMO_PASSWORD
from showops.web.areas.rigs import current_limits, set_limits
from web_helpers import alerts, read_forms

RIG = (Path(__file__).parents[2] / "procedures" / "rigs" / "orchard-lift.toml").read_text(encoding="utf-8")


@pytest.mark.parametrize("changes, expected", [
    ({"rated_payload": "150"}, {"rated_payload": 150}),
    ({"rated_payload": "150.5"}, {"rated_payload": 150.5}),
    ({"rated_payload": "150 kg"}, {"rated_payload": "150 kg"}),
    ({"operator_force_source": 'a "quoted" # source'}, {"operator_force_source": 'a "quoted" # source'}),
    ({"caution_at": "0.75", "operators": "3"}, {"caution_at": 0.75, "operators": 3}),
    ({"new_limit": "12"}, {"new_limit": 12}),
])
def test_set_limits_changes_only_those_values(changes, expected):
    new = set_limits(RIG, changes, note="test change")
    before, after = tomllib.loads(RIG), tomllib.loads(new)
    for key, value in expected.items():
        assert after["limits"][key] == value
    untouched = {k: v for k, v in before["limits"].items() if k not in changes}
    assert {k: after["limits"][k] for k in untouched} == untouched
    assert {k: v for k, v in after.items() if k != "limits"} == {k: v for k, v in before.items() if k != "limits"}


def test_set_limits_keeps_comments_and_adds_the_note():
    new = set_limits(RIG, {"rated_payload": "150"}, note="2026-12-02: limits changed by Lise Armitage")
    assert new.splitlines()[0] == "# 2026-12-02: limits changed by Lise Armitage"
    line = next(x for x in new.splitlines() if x.startswith("rated_payload"))
    assert line == "rated_payload = 150      # kg, riders with allowance (the maker's plate)"


def test_set_limits_without_a_limits_table():
    with pytest.raises(ValidationError, match="no \\[limits\\] table"):
        set_limits("kind = 'x'\n", {"a": "1"}, note="n")


def test_current_limits_reads_scalars_in_order():
    limits = current_limits(RIG)
    assert list(limits)[:2] == ["rated_payload", "operators"]
    assert limits["rated_payload"] == 140


@pytest.fixture
def admin(client, auth, demo):
    assert auth.login("lise", DEMO_PASSWORD).status_code == 302
    return client


def post_limits(client, slug, values, reason="maker's new plate after the 2026 inspection"):
    token = read_forms(client.get(f"/rigs/{slug}").get_data(as_text=True)).meta_token
    data = {"csrf_token": token, "reason": reason}
    data.update({f"limit-{k}": v for k, v in values.items()})
    return client.post(f"/rigs/{slug}/limits", data=data)


def test_raising_the_rated_payload_makes_a_new_version_and_recomputes(admin, db, demo):
    ids, _ = demo
    from showops.store.show import load_night_plan

    duet = ids.cues["5"]
    heavy = load_night_plan(db, ids.heavy_performance)
    old = next(c for c in heavy.cues if c.cue_id == duet)
    assert any("151 kg" in r.text and "140 kg" in r.text for r in old.reasons)

    response = post_limits(admin, "orchard-lift", {"rated_payload": "160"})
    assert response.status_code == 200, alerts(response.get_data(as_text=True))
    assert db.execute("SELECT COUNT(*) FROM rig_version WHERE rig_slug = 'orchard-lift'").fetchone()[0] == 2

    heavy = load_night_plan(db, ids.heavy_performance)
    new = next(c for c in heavy.cues if c.cue_id == duet)
    assert new.rig_version != old.rig_version
    assert not any("140 kg" in r.text for r in new.reasons)
    assert any("151 kg" in r.text and "160 kg" in r.text for r in new.reasons)

    row = db.execute("SELECT person_name, role, rig_version, detail FROM step_log WHERE event = 'rig_changed'").fetchone()
    assert row[:3] == ("Lise Armitage", "admin", new.rig_version)
    detail = json.loads(row[3])
    assert detail["changes"] == {"rated_payload": {"from": 140, "to": "160"}}
    assert detail["reason"] == "maker's new plate after the 2026 inspection"
    from showops.store.log import verify_log
    assert verify_log(db) is None


def test_a_bad_value_is_refused_and_nothing_is_written(admin, db):
    response = post_limits(admin, "orchard-lift", {"rated_payload": "a lot"})
    assert response.status_code == 400
    assert alerts(response.get_data(as_text=True))
    assert db.execute("SELECT COUNT(*) FROM rig_version WHERE rig_slug = 'orchard-lift'").fetchone()[0] == 1


def test_a_change_needs_a_reason(admin, db):
    response = post_limits(admin, "orchard-lift", {"rated_payload": "150"}, reason="")
    assert response.status_code == 400
    assert alerts(response.get_data(as_text=True)) == [
        "reason: say why the limits change (it goes in the log and the file)"]


def test_the_stage_manager_sees_limits_without_a_form(client, auth, demo):
    auth.login("halden", DEMO_PASSWORD)
    page = read_forms(client.get("/rigs/orchard-lift").get_data(as_text=True))
    assert [f for f in page.forms if f["id"] == "limits-form"] == []


def test_limits_are_shown_with_their_units(client, auth, demo):
    # The units each key is read in (docs/rig-file.md's tables), written with the SI symbols
    # (BIPM, The International System of Units, 9th ed. 2019: kg, N, N·m).
    from showops.web.areas.rigs import limit_units

    units = limit_units(RIG, "orchard-lift")
    assert units == {"rated_payload": "kg", "operator_force_per_person": "N", "stand_moment": "N·m",
                     "beam_axial": "N", "brake_holding": "N"}
    auth.login("halden", DEMO_PASSWORD)
    page = client.get("/rigs").get_data(as_text=True)
    for shown in ("<dd>140 kg</dd>", "<dd>300 N·m</dd>", "<dd>1200 N</dd>", "<dd>4500 N·m</dd>", "<dd>2</dd>",
                  "<dd>0.8</dd>"):
        assert shown in page, shown
    assert "+00:00" not in page and " UTC ·" in page  # versions dated as people read them
    auth.logout()
    auth.login("lise", DEMO_PASSWORD)
    form = client.get("/rigs/orchard-lift").get_data(as_text=True)
    assert "rated payload (kg)" in form and "stand moment (N·m)" in form
