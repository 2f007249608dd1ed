"""The pre-show check end to end: the shipped checklists, answers refused and taken,
and the block they lift.

Sources: a check before each use including a trial in motion (DGUV Grundsatz 315-390,
from memory); answers state the observed condition, never "OK" (Degani and Wiener,
NASA CR-177549, 1990); the procedure checker's rules (showops.procedure, each with its
own source) hold for the checklists as for any procedure.
"""

from __future__ import annotations

from datetime import date, datetime, timezone
from pathlib import Path

import pytest

from showops.errors import ValidationError
from showops.procedure import check_procedure, parse_procedure
from showops.rig import load_rig, solve_rig
from showops.store import care
from showops.store.log import iter_log

ROOT = Path(__file__).resolve().parents[2]
TODAY = date(2026, 11, 20)


def checklist_text(rig: str) -> str:
    return (ROOT / "procedures" / "checks" / f"{rig}-preshow.md").read_text(encoding="utf-8")


@pytest.mark.parametrize("rig", ["orchard-lift", "bough-lever"])
def test_shipped_checklists_parse_pass_the_checker_and_hold_a_load_trial(rig):
    from showops.care.preshow import checklist_items

    procedure = parse_procedure(checklist_text(rig), f"{rig}-preshow.md")
    assert procedure.rig == rig
    rig_model = load_rig(ROOT / "procedures" / "rigs" / f"{rig}.toml")
    assert check_procedure(procedure, rig_result=solve_rig(rig_model, [60]), rig_slug=rig) == []
    items = checklist_items(procedure)
    assert len(items) >= 10
    assert [i.title for i in items if i.load_trial][:1]  # at least one trial in motion
    assert all(i.expect for i in items)                 # every item says what should be seen


def load(scene):
    return care.load_checklist(scene.db, "orchard-lift", checklist_text("orchard-lift"), "orchard-lift-preshow.md")


def test_checklist_without_load_trial_is_refused(scene):
    text = checklist_text("orchard-lift").split("## Load trial in motion")[0]
    with pytest.raises(ValidationError) as err:
        care.load_checklist(scene.db, "orchard-lift", text, "short.md")
    assert err.value.field == "checklist" and "load trial" in str(err.value)
    with pytest.raises(ValidationError) as err:
        care.load_checklist(scene.db, "orchard-lift", checklist_text("bough-lever"), "bough.md")
    assert err.value.field == "checklist" and "bough-lever" in str(err.value)


def answer_all(scene, perf, at_hour=17):
    items, _ = care.checklist(scene.db, "orchard-lift")
    for n, item in enumerate(items):
        text = (item.expect or item.title) + (", test load 80 kg" if item.load_trial else "")
        care.answer_preshow(scene.db, perf, "orchard-lift", item.key, text, person="Ivo Marsh",
                            at=datetime(2026, 11, 20, at_hour, n, tzinfo=timezone.utc))
    return items


def preshow_reasons(scene):
    return [r for r in care.readiness_reasons(scene.db, scene.tonight, scene.cue, as_of=TODAY) if r.limit == "preshow"]


def test_complete_check_clears_the_block_and_a_fault_blocks_until_answered_again(scene):
    load(scene)
    (r,) = preshow_reasons(scene)
    assert r.level == "blocked" and "0 of" in r.text
    items = answer_all(scene, scene.tonight)
    assert preshow_reasons(scene) == []
    care.answer_preshow(scene.db, scene.tonight, "orchard-lift", "2", "webbing frayed 3 cm from the buckle",
                        person="Nell Varga", result="fault", at=datetime(2026, 11, 20, 18, 0, tzinfo=timezone.utc))
    (r,) = preshow_reasons(scene)
    assert r.level == "blocked" and "frayed" in r.text and items[1].title in r.text
    care.answer_preshow(scene.db, scene.tonight, "orchard-lift", items[1].title, "new strap fitted, webbing whole, "
                        "buckle locks", person="Nell Varga", at=datetime(2026, 11, 20, 18, 20, tzinfo=timezone.utc))
    assert preshow_reasons(scene) == []
    logged = [row for row in iter_log(scene.db) if row["event"] == "preshow_answered"]
    assert len(logged) == len(items) + 2 and "frayed" in logged[-2]["detail"]


@pytest.mark.parametrize("item, observation, kwargs, field", [
    ("1", "OK", {}, "observation"),
    ("1", "checked", {}, "observation"),
    ("1", "done", {}, "observation"),
    ("Raise the test load through the stroke", "rose smoothly to the top", {}, "observation"),  # no test load
    ("99", "pads 4 mm", {}, "item"),
    ("1", "pads 4 mm", {"person": "Somebody Unknown"}, "person"),
    ("1", "pads 4 mm", {"result": "meh"}, "result"),
    ("1", "pads 4 mm", {"at": "2999-01-01T18:00Z"}, "at"),
])
def test_bad_answers_are_refused(scene, item, observation, kwargs, field):
    load(scene)
    args = {"person": "Ivo Marsh", **kwargs}
    with pytest.raises(ValidationError) as err:
        care.answer_preshow(scene.db, scene.tonight, "orchard-lift", item, observation, **args)
    assert err.value.field == field
    assert care.preshow_answers(scene.db, scene.tonight) == []
