"""``showops due`` and ``showops care ...`` through click's CliRunner on the invented scene.

Sources of the rules exercised: LOLER 1998 reg 9(3)(a)(i) (six-monthly, from memory);
DGUV Vorschrift 17 §15 and §20 (from memory).
"""

from __future__ import annotations

import json
from datetime import date, timedelta

from click.testing import CliRunner

from showops.care.schedules import add_months
from showops.cli import main


def run(scene, *args):
    return CliRunner().invoke(main, [*args, "--instance", str(scene.instance)])


def test_due_lists_an_examination_falling_due(scene):
    last = add_months(date.today(), -6) + timedelta(days=5)  # six-monthly: due in about five days
    result = run(scene, "care", "inspect", "orchard-lift", "--on", last.isoformat(), "--scope", "thorough examination",
                 "--examiner", "Marta Quill", "--findings", "brake pads 4 mm, straps intact")
    assert result.exit_code == 0, result.output
    result = run(scene, "due", "--days", "14")
    assert result.exit_code == 0, result.output
    assert "DUE SOON" in result.output and "orchard-lift" in result.output and "LOLER 1998 reg 9" in result.output
    data = json.loads(run(scene, "due", "--json").output)
    assert {d["rule"] for d in data} == {"thorough-6m"}
    assert "Nothing due" in run(scene, "due", "--days", "1").output


def test_bad_input_is_one_line_exit_2(scene):
    future = (date.today() + timedelta(days=3)).isoformat()
    result = run(scene, "care", "inspect", "orchard-lift", "--on", future, "--scope", "thorough examination",
                 "--examiner", "Marta Quill", "--findings", "fine and dandy")
    assert result.exit_code == 2
    assert result.output.startswith("Error: on: ") and "in the future" in result.output
    result = run(scene, "care", "inspect", "orchard-lift", "--on", "2026-11-01", "--scope", "thorough",
                 "--examiner", "Nobody Known", "--findings", "pads worn")
    assert result.exit_code == 2 and "Error: examiner: 'Nobody Known' is not on the people list" in result.output
    result = run(scene, "care", "object", "--by", "Nell Varga", "--role", "lifters", "--reason", " ",
                 "--responsible", "Ada Fenn", "--rig", "orchard-lift")
    assert result.exit_code == 2 and result.output.startswith("Error: reason: ")


def test_objection_raise_list_resolve(scene):
    result = run(scene, "care", "object", "--by", "Nell Varga", "--role", "lifters", "--reason",
                 "handle bar loose at the weld", "--responsible", "Ada Fenn", "--rig", "orchard-lift")
    assert result.exit_code == 0, result.output
    assert "OPEN until Ada Fenn" in run(scene, "care", "objections", "--open").output
    result = run(scene, "care", "resolve", "1", "--by", "Sam Okoro", "--reason", "fine")
    assert result.exit_code == 2 and "only Ada Fenn" in result.output
    result = run(scene, "care", "resolve", "1", "--by", "Ada Fenn", "--reason", "weld repaired and load-tested")
    assert result.exit_code == 0, result.output
    assert run(scene, "care", "objections", "--open").output == ""
    assert "resolved" in run(scene, "care", "objections").output


def test_rehearsal_briefing_release_and_status(scene):
    perf = str(scene.tonight)
    result = run(scene, "care", "rehearse", "orchard-lift", "--on", "2026-11-10", "--member", "Sam Okoro=caller",
                 "--member", "Ivo Marsh=brake", "--member", "Nell Varga=lifters", "--member", "Odile Brand=rider")
    assert result.exit_code == 0, result.output
    result = run(scene, "care", "rehearse", "orchard-lift", "--on", "2026-11-10", "--member", "Quentin Hale=rider")
    assert result.exit_code == 2 and "not cleared to ride" in result.output
    result = run(scene, "care", "rehearse", "orchard-lift", "--on", "2026-11-10", "--member", "Quentin Hale")
    assert result.exit_code == 2 and "Error: --member" in result.output
    assert run(scene, "care", "brief", perf, "orchard-lift", "--by", "Sam Okoro").exit_code == 0
    assert run(scene, "care", "attend", "1", "Ivo Marsh").exit_code == 0
    assert run(scene, "care", "release", perf, "--by", "Sam Okoro").exit_code == 0
    status = run(scene, "care", "status", perf, "--json")
    assert status.exit_code == 0, status.output
    (rig,) = json.loads(status.output)
    assert rig["briefing"] == "2 of 4 confirmed" and rig["area_released"] is True  # Sam gave it, Ivo confirmed
    text = run(scene, "care", "status", perf).output
    assert "NOT READY" in text and "Nell Varga (lifters)" in text and "Caution:" in text


def test_parts_and_rules(scene):
    result = run(scene, "care", "part", "orchard-lift", "rear bar brake", "--kind", "brake", "--rating", "2400",
                 "--factor", "2", "--sees", "brake_n")
    assert result.exit_code == 0, result.output
    assert "rear bar brake" in run(scene, "care", "parts", "orchard-lift").output
    result = run(scene, "care", "part", "orchard-lift", "strap", "--kind", "strap", "--rating", "9000",
                 "--sees", "riders_n")
    assert result.exit_code == 2 and "design_factor" in result.output
    rules = run(scene, "care", "rules", "--rig", "orchard-lift")
    assert rules.exit_code == 0 and "strictest" in rules.output and "LOLER 1998" in rules.output
    assert run(scene, "care", "use-rules", "orchard-lift", "de-dguv", "--by", "Ada Fenn").exit_code == 0
    assert "DGUV Vorschrift 17 §34" in run(scene, "care", "rules", "--rig", "orchard-lift").output
    result = run(scene, "care", "edit-rule", "de-dguv", "annual", "--months", "18", "--by", "Ada Fenn")
    assert result.exit_code == 2 and "Error: source" in result.output


def test_every_care_command_and_option_is_in_docs_care_md():
    # Keep docs/care.md true: each command of `showops care` and `showops due`, and each
    # of their options, is written there.
    from pathlib import Path

    import click

    text = (Path(__file__).resolve().parents[2] / "docs" / "care.md").read_text(encoding="utf-8")
    group = main.commands["care"]
    commands = {f"showops care {name}": cmd for name, cmd in group.commands.items()}
    commands["showops due"] = main.commands["due"]
    for usage, cmd in commands.items():
        assert usage + " " in text or usage + "\n" in text, usage
        line = next(ln for ln in text.splitlines() if ln.startswith(usage + " ") or ln == usage)
        for param in cmd.params:
            if isinstance(param, click.Option) and param.name != "instance":
                assert any(opt in line for opt in param.opts), (usage, param.opts)
        assert "Example:" in (cmd.help or ""), usage
