"""Each checker rule against a safe procedure and unsafe variants made for it.

Every unsafe variant must fail for the right rule at the right line. The rules and
their sources (named beside each rule in showops/procedure/check.py):
 1  FAA AC 120-71B (who calls, does and checks is explicit); DOE-STD-1029-92 (vocabulary)
 2  FAA AC 120-71B (challenge and response); DOE-STD-1029-92 (prerequisites)
 3  common practice, no source: brake on and platform down before a rider boards or leaves
 4  the rig's statics (empty_operator_force_n < 0: the empty platform rises)
 5  DOE-STD-1029-92 (one action per step); common practice, no source
 6  DGUV Information 215-320 (two-person principle; clause from memory); FAA AC 120-71B
 7  DOE-STD-1029-92 (return to a defined safe state)
 8  DOE-STD-1029-92 (contingencies); DGUV Information 215-320 §5.3, §6 (from memory)
 9  Jinja2 sandbox documentation; common practice, no source
10  Degani & Wiener, NASA CR-177549 (1990): replies state the observed status
11  DOE-STD-1029-92 (reasons for critical steps); FAA AC 120-71B (completion calls)
12  DGUV Information 215-320 §5.3, §6 (emergency signal; rescue path; from memory)
"""

from __future__ import annotations

import pytest

from showops.procedure import RULE_NUMBERS, RULE_SET_VERSION, RULES, check_procedure, parse_procedure

from .conftest import SAFE, line_of, linkage_rig_text, solve_text


def _replace(old: str, new: str, count: int = 1):
    def mutate(text: str) -> str:
        if old not in text:
            raise AssertionError(f"fixture drifted: {old!r} not in SAFE")
        return text.replace(old, new, count)
    return mutate


def _drop_from(marker: str):
    def mutate(text: str) -> str:
        return text[: text.index(marker)]
    return mutate


def _chain(*mutations):
    def mutate(text: str) -> str:
        for m in mutations:
            text = m(text)
        return text
    return mutate


RELEASE = "### Release brake\n- by: brake\n- go: caller\n- check: spotter\n- needs: rider aboard, strap fastened, load ok\n"
RIDER_LEAVES = ('### Rider leaves\n- by: rider\n- check: spotter\n- needs: brake on, platform down\n'
                '- sets: rider off, strap open\n- why: only with the brake on and the platform down\n'
                '- say: "Rider off"\n- reply: "Rider off, brake on"\n')
BRAKE_ON = ("### Brake on\n- by: brake\n- check: spotter\n- needs: platform down\n- sets: brake on\n"
            "- why: the empty platform would rise once the rider is off\n\n")

# (id, mutation, rule, exact text of the line the finding must point at, occurrence)
CASES = [
    ("role-not-in-roles", _replace("- by: lifters\n- go: caller\n- needs: brake off\n",
                                   "- by: lifter\n- go: caller\n- needs: brake off\n"),
     "file_is_well_formed", "- by: lifter", 1),
    ("unknown-field", _replace("- hold: 20\n", "- hold: 20\n- wy: steady\n"),
     "file_is_well_formed", "- wy: steady", 1),
    ("misspelt-state", _replace("- needs: brake off\n- sets: platform up", "- needs: brake of\n- sets: platform up"),
     "file_is_well_formed", "- needs: brake of", 1),
    ("step-without-by", _replace("### Raise\n- by: lifters\n", "### Raise\n"),
     "file_is_well_formed", "### Raise", 1),
    ("duplicate-title", _replace("### Lower\n", "### Raise\n"), "file_is_well_formed", "### Raise", 2),
    ("duplicate-phase", _replace("## Off\n", "## Ride\n"), "file_is_well_formed", "## Ride", 2),
    ("field-without-value", _replace("- hold: 20\n", "- hold:\n"), "file_is_well_formed", "- hold:", 1),
    ("load-ok-set-by-a-step", _replace("- sets: platform up", "- sets: platform up, load ok"),
     "file_is_well_formed", "- sets: platform up, load ok", 1),
    ("need-not-met", _replace("- needs: brake off\n- sets: platform up", "- needs: brake off, platform up\n- sets: platform up"),
     "needs_are_met", "- needs: brake off, platform up", 1),
    ("rider-leaves-with-brake-off",
     _chain(_replace(BRAKE_ON + RIDER_LEAVES, RIDER_LEAVES.replace("needs: brake on, platform down", "needs: platform down")
                     .replace('- say: "Rider off"\n- reply: "Rider off, brake on"\n', "") + "\n"
                     + BRAKE_ON.replace("\n\n", '\n- say: "Brake on"\n- reply: "Brake on, platform down"\n'))),
     "rider_boards_and_leaves_braked_and_down", "- sets: rider off, strap open", 1),
    ("release-without-load-ok-need", _replace(RELEASE, RELEASE.replace(", load ok", "")),
     "brake_released_only_when_safe", "- sets: brake off", 1),
    ("raise-with-brake-on", _replace("- sets: brake off\n- why: only with the rider aboard",
                                     "- why: only with the rider aboard"),
     "platform_moves_only_with_brake_off", "- sets: platform up", 1),
    ("release-and-raise-in-one-step", _replace("- sets: brake off\n- why: only with the rider aboard",
                                               "- sets: brake off, platform up\n- why: only with the rider aboard"),
     "platform_moves_only_with_brake_off", "- sets: brake off, platform up", 1),
    ("brake-change-unchecked", _replace(BRAKE_ON, BRAKE_ON.replace("- check: spotter\n", "")),
     "second_person_checks", "### Brake on", 1),
    ("checked-by-the-actor", _replace(BRAKE_ON, BRAKE_ON.replace("- check: spotter\n", "- check: brake\n")),
     "second_person_checks", "- check: brake", 1),
    ("ends-with-brake-off", _replace(BRAKE_ON, ""), "ends_at_rest", "### Rider leaves", 1),
    ("no-stop-phase", _drop_from("## Stop"), "stop_phase_makes_safe", "Title: Test lift, one rider up and down", 1),
    ("stop-lowers-with-brake-on",
     _chain(_drop_from("### Release to lower the rider"),
            lambda t: t + ("### Lower the rider\n- by: lifters\n- go: caller\n- sets: platform down\n"
                           "- why: the rider is safest at the bottom\n- say: \"Down\"\n"
                           "- reply: \"Platform down\"\n")),
     "stop_phase_makes_safe", "- sets: platform down", 2),
    ("stop-ends-at-height", _replace("- needs: brake off, platform up\n- sets: platform down\n- why: the rider is safest",
                                     "- needs: brake off, platform up\n- why: the rider is safest"),
     "stop_phase_makes_safe", "## Stop", 1),
    ("unbound-placeholder", _replace("{{ load.operator_force_per_person_n|round|int }}", "{{ crew.brak }}"),
     "placeholders_bound", "Each lifter pulls {{ crew.brak }} N.", 1),
    ("unknown-name-placeholder", _replace("{{ load.operator_force_per_person_n|round|int }}", "{{ lod.x }}"),
     "placeholders_bound", "Each lifter pulls {{ lod.x }} N.", 1),
    ("internals-placeholder", _replace("{{ load.operator_force_per_person_n|round|int }}", "{{ ''.__class__.__mro__ }}"),
     "placeholders_bound", "Each lifter pulls {{ ''.__class__.__mro__ }} N.", 1),
    ("unknown-load-key", _replace("{{ load.operator_force_per_person_n|round|int }}", "{{ load.operator_pull }}"),
     "placeholders_bound", "Each lifter pulls {{ load.operator_pull }} N.", 1),
    ("reply-ok", _replace('- reply: "Rider aboard, strap fastened"', '- reply: "OK"'),
     "replies_state_what_is_seen", '- reply: "OK"', 1),
    ("reply-checked", _replace('- reply: "Rider aboard, strap fastened"', '- reply: Checked.'),
     "replies_state_what_is_seen", "- reply: Checked.", 1),
    ("reply-done-set", _replace('- reply: "Rider aboard, strap fastened"', '- reply: "Done, set"'),
     "replies_state_what_is_seen", '- reply: "Done, set"', 1),
    ("no-why", _replace("- why: hand over hand, steadily\n", ""), "reasons_and_completion_calls", "### Raise", 1),
    ("phase-without-completion-call", _replace('- say: "Rider off"\n', ""),
     "reasons_and_completion_calls", "### Rider leaves", 1),
    ("no-signal", _replace("Signal: arms crossed on the chest\n", ""),
     "emergency_signal_and_lowering_path", "Title: Test lift, one rider up and down", 1),
    ("signal-tbd", _replace("Signal: arms crossed on the chest", "Signal: TBD"),
     "emergency_signal_and_lowering_path", "Signal: TBD", 1),
    ("no-lowering-path", _replace("- needs: platform up, rider aboard, load ok\n- sets: brake off\n",
                                  "- needs: platform up, rider aboard, load ok\n"),
     "emergency_signal_and_lowering_path", "## Stop", 1),
    ("stop-leaves-rider-aboard", _replace("- sets: rider off, strap open\n- why: only with the brake on and the platform down\n"
                                          "- say: \"Rider off, lift safe\"",
                                          "- why: only with the brake on and the platform down\n"
                                          "- say: \"Rider off, lift safe\""),
     "emergency_signal_and_lowering_path", "## Stop", 1),
]


def test_the_safe_procedure_is_clean(rising_rig):
    assert check_procedure(parse_procedure(SAFE), rig_result=rising_rig) == []


@pytest.mark.parametrize("case_id, mutate, rule, needle, occurrence", CASES, ids=[c[0] for c in CASES])
def test_each_unsafe_procedure_fails_for_its_rule_at_its_line(rising_rig, case_id, mutate, rule, needle, occurrence):
    text = mutate(SAFE)
    findings = check_procedure(parse_procedure(text, source="unsafe.md"), rig_result=rising_rig)
    expected_line = line_of(text, needle, occurrence)
    got = {(f.rule, f.line) for f in findings}
    assert (rule, expected_line) in got, "\n".join(f.format("unsafe.md") + f"  [{f.rule}]" for f in findings)


def test_every_rule_has_an_unsafe_case():
    assert {c[2] for c in CASES} == {r.__name__ for r in RULES}


def test_each_rule_is_named_and_names_its_source():
    assert len(RULES) == 12
    for number, rule in enumerate(RULES, 1):
        assert RULE_NUMBERS[rule.__name__] == number
        doc = rule.__doc__ or ""
        assert doc.startswith(f"Rule {number}:")
        assert "Source:" in doc


def test_rule_set_version_is_a_short_stable_hash():
    assert len(RULE_SET_VERSION) == 12 and int(RULE_SET_VERSION, 16) >= 0


TEST_RELEASE_PHASE = """## Test the brake
### Test brake release
- by: brake
- go: caller
- check: spotter
- needs: platform down, load ok
- sets: brake off
- why: the brake operator feels the release before anyone boards

### Brake back on
- by: brake
- check: spotter
- needs: brake off
- sets: brake on
- why: nobody boards until the brake is on
- say: "Brake tested"
- reply: "Brake on, platform down"

## Board
"""


def test_a_test_release_before_boarding_follows_the_counterweight():
    """The issue's "done when": clean while the empty platform stays down, a finding for
    rule 4 at the release once counterweight makes it rise, clean again when removed."""
    text = SAFE.replace("## Board\n", TEST_RELEASE_PHASE, 1)
    proc = parse_procedure(text, source="test-release.md")
    release_line = line_of(text, "- sets: brake off", 1)

    light = solve_text(linkage_rig_text(counterweight_kg=0))
    assert light.empty_operator_force_n > 0
    assert check_procedure(proc, rig_result=light) == []

    heavy = solve_text(linkage_rig_text(counterweight_kg=60))
    assert heavy.empty_operator_force_n < 0
    findings = check_procedure(proc, rig_result=heavy)
    assert [(f.rule, f.line) for f in findings] == [("brake_released_only_when_safe", release_line)]
    assert "rises by itself" in findings[0].message
    assert findings[0].state == "brake on, platform down, rider off, strap open"

    again = solve_text(linkage_rig_text(counterweight_kg=0))
    assert check_procedure(proc, rig_result=again) == []


def test_a_blocked_load_stops_the_release():
    """`load ok` holds iff the rig verdict is not blocked (issue 3)."""
    blocked = solve_text(linkage_rig_text(counterweight_kg=60), riders=(150, 120))
    assert blocked.verdict == "blocked"
    findings = check_procedure(parse_procedure(SAFE), rig_result=blocked)
    release = line_of(SAFE, "- sets: brake off", 1)
    assert ("brake_released_only_when_safe", release) in {(f.rule, f.line) for f in findings}
    assert any("load is not ok" in f.message for f in findings)


def test_without_a_rig_the_empty_platform_is_assumed_to_rise():
    text = SAFE.replace("## Board\n", TEST_RELEASE_PHASE, 1)
    findings = check_procedure(parse_procedure(text))
    assert [f.rule for f in findings] == ["brake_released_only_when_safe"]
    assert "assumed to rise" in findings[0].message


def test_start_header_changes_the_starting_state(rising_rig):
    text = SAFE.replace("Signal:", "Start: brake off\nSignal:", 1)
    findings = check_procedure(parse_procedure(text), rig_result=rising_rig)
    board = line_of(text, "- needs: brake on, platform down", 1)
    assert ("needs_are_met", board) in {(f.rule, f.line) for f in findings}
    assert ("rider_boards_and_leaves_braked_and_down", board + 1) in {(f.rule, f.line) for f in findings}


def test_finding_format_is_the_contract(rising_rig):
    text = SAFE.replace('- reply: "Rider aboard, strap fastened"', '- reply: "OK"')
    (finding,) = check_procedure(parse_procedure(text), rig_result=rising_rig)
    line = line_of(text, '- reply: "OK"')
    assert finding.format("p.md") == (f'p.md:{line}: step "Rider boards": reply "OK" names no state or value: '
                                      'answer with what is observed (e.g. "Brake on, handle locked") (OK)')
    assert finding.step == "Rider boards" and finding.rule == "replies_state_what_is_seen"


@pytest.mark.parametrize("reply, empty", [
    ("OK", True), ("okay!", True), ("Checked", True), ("done", True), ("Set.", True), ("Yes, confirmed", True),
    ("Standing by", True), ("Brake on", False), ("Platform down on the stops", False), ("Clear", False),
    ("Strap fastened, two clicks", False), ("90 kg aboard", False),
])
def test_reply_words(rising_rig, reply, empty):
    text = SAFE.replace('- reply: "Rider aboard, strap fastened"', f'- reply: "{reply}"')
    rules = [f.rule for f in check_procedure(parse_procedure(text), rig_result=rising_rig)]
    assert ("replies_state_what_is_seen" in rules) is empty
