"""The contracts other parts rely on: the issue's file syntax, the API names, the
finding format, and docs that cover every rule and CLI option."""

from __future__ import annotations

import re

import click

from showops.cli import main
from showops.procedure import RULES, Finding, check_procedure, parse_procedure

from .conftest import REPO

# The syntax excerpt of issue 3, verbatim. It "does not pass every rule": the test
# holds the parser to its structure and the checker to the rules it breaks.
ISSUE_EXCERPT = '''Title: Example lift, rider up and down
Rig: example-lift
Roles: caller, spotter, brake, lifters, rider
Signal: arms crossed on the chest

# Example lift, rider up and down
Free text: purpose, cautions, the riders ({{ riders|join(", ") }}), the pull each lifter gives ({{ load.operator_force_per_person_n|round|int }} N).

## Board
### Brake on, platform down
- by: brake
- check: spotter
- say: "Brake on"
- reply: "Brake on, checked"
- needs: platform down
- sets: brake on
- why: the empty platform must not move while someone steps on

### Rider boards
- by: rider
- check: spotter
- needs: brake on, platform down
- sets: rider aboard, strap fastened

## Ride
### Release brake
- by: brake
- go: caller
- check: spotter
- needs: rider aboard, strap fastened, load ok
- sets: brake off

### Raise
- by: lifters
- go: caller
- needs: brake off
- sets: platform up
- hold: 90

## If anything goes wrong
- phase: stop
### Hold and brake
- by: brake
- sets: brake on
'''


def test_the_issue_excerpt_parses_as_the_contract_says():
    proc = parse_procedure(ISSUE_EXCERPT, source="example.md")
    assert proc.problems == ()
    assert (proc.title, proc.rig, proc.signal) == ("Example lift, rider up and down", "example-lift",
                                                   "arms crossed on the chest")
    assert [(p.title, p.stop) for p in proc.phases] == [("Board", False), ("Ride", False),
                                                       ("If anything goes wrong", True)]
    first, boards, release, raise_ = proc.main_steps
    assert (first.by, first.check, first.say, first.reply) == ("brake", "spotter", "Brake on", "Brake on, checked")
    assert first.needs == ("platform down",) and first.sets == ("brake on",)
    assert boards.sets == ("rider aboard", "strap fastened")
    assert release.go == "caller" and release.needs[-1] == "load ok"
    assert raise_.hold_s == 90.0
    assert [s.title for s in proc.stop_steps] == ["Hold and brake"]


def test_the_issue_excerpt_breaks_the_rules_it_should():
    findings = check_procedure(parse_procedure(ISSUE_EXCERPT, source="example.md"))
    rules = {f.rule for f in findings}
    assert "file_is_well_formed" not in rules and "needs_are_met" not in rules
    # it never lowers (7), its stop phase leaves the platform up (8), "Hold and brake"
    # has no check (6) and no why (11), and the stop phase has no lowering path (12)
    assert {"ends_at_rest", "stop_phase_makes_safe", "second_person_checks", "reasons_and_completion_calls",
            "emergency_signal_and_lowering_path"} <= rules


def test_finding_format_without_a_step_or_a_state():
    assert Finding(3, None, "r", "no stop phase").format("f.md") == "f.md:3: no stop phase"
    assert Finding(3, "S", "r", "m", "brake on").format("f.md") == 'f.md:3: step "S": m (brake on)'
    assert Finding(3, "S", "r", "m", "x").to_dict() == {"line": 3, "step": "S", "rule": "r", "message": "m",
                                                        "state": "x"}


def test_docs_name_every_rule():
    doc = (REPO / "docs" / "procedure-file.md").read_text()
    for number, rule in enumerate(RULES, 1):
        assert re.search(rf"\| {number} \| `{rule.__name__}` \|", doc), rule.__name__


def test_docs_name_every_procedure_command_and_option():
    doc = (REPO / "docs" / "procedure-file.md").read_text()
    group = main.commands["procedure"]
    assert isinstance(group, click.Group)
    for name, command in group.commands.items():
        assert f"showops procedure {name}" in doc, name
        for param in command.params:
            if isinstance(param, click.Option):
                assert any(opt in doc for opt in param.opts), f"{name} {param.opts}"


def test_docs_list_every_state_and_field():
    from showops.procedure import STATE_VALUES, STEP_FIELDS

    doc = (REPO / "docs" / "procedure-file.md").read_text()
    for field in STEP_FIELDS:
        assert f"| `{field}` |" in doc, field
    for subject, values in STATE_VALUES.items():
        for value in values:
            assert f"`{subject} {value}`" in doc
