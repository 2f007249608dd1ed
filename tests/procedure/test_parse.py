"""Reading procedure files: the structure, and bad input that must give a clear
finding or a clear error, never a traceback or a hang (issue 3, "Bad input")."""

from __future__ import annotations

import time

import pytest

from showops.errors import ProcedureFileError
from showops.procedure import REST_STATE, check_procedure, load_procedure, parse_procedure

from .conftest import SAFE, line_of


def test_structure_of_the_safe_procedure():
    proc = parse_procedure(SAFE, source="safe.md")
    assert proc.title == "Test lift, one rider up and down"
    assert proc.rig == "test-lift"
    assert proc.roles == ("caller", "spotter", "brake", "lifters", "rider")
    assert proc.signal == "arms crossed on the chest"
    assert proc.start == REST_STATE
    assert [p.title for p in proc.phases] == ["Board", "Ride", "Off", "Stop"]
    assert [p.stop for p in proc.phases] == [False, False, False, True]
    assert [s.number for s in proc.main_steps] == [1, 2, 3, 4, 5, 6]
    assert [s.number for s in proc.stop_steps] == [7, 8, 9, 10, 11]
    release = proc.main_steps[1]
    assert release.title == "Release brake" and release.key == "Ride/Release brake"
    assert (release.by, release.go, release.check) == ("brake", "caller", "spotter")
    assert release.needs == ("rider aboard", "strap fastened", "load ok")
    assert release.sets == ("brake off",)
    assert release.line == line_of(SAFE, "### Release brake")
    assert release.field_lines["sets"] == release.line + 5
    assert proc.main_steps[0].say == "Rider secure?"          # quotes removed
    assert proc.main_steps[0].reply == "Rider aboard, strap fastened"
    assert proc.main_steps[2].hold_s == 20.0
    assert proc.problems == ()
    assert len(proc.version) == 64


def test_version_is_the_sha256_of_the_text():
    import hashlib

    assert parse_procedure(SAFE).version == hashlib.sha256(SAFE.encode()).hexdigest()
    assert parse_procedure(SAFE + "\n").version != parse_procedure(SAFE).version


@pytest.mark.parametrize("hold, seconds", [("90", 90.0), ("90 s", 90.0), ("45s", 45.0), ("2 min", 120.0),
                                           ("1.5 minutes", 90.0)])
def test_hold_values(hold, seconds):
    proc = parse_procedure(SAFE.replace("- hold: 20", f"- hold: {hold}"))
    assert proc.main_steps[2].hold_s == seconds and proc.problems == ()


@pytest.mark.parametrize("hold", ["soon", "-5", "0", "99999", "2 hours"])
def test_bad_hold_is_a_finding(hold):
    text = SAFE.replace("- hold: 20", f"- hold: {hold}")
    findings = check_procedure(parse_procedure(text))
    assert any(f.line == line_of(text, f"- hold: {hold}") and "is not a time" in f.message for f in findings)


def test_windows_line_endings_and_a_byte_order_mark_read_the_same():
    proc = parse_procedure("\ufeff" + SAFE.replace("\n", "\r\n"))
    plain = parse_procedure(SAFE)
    assert [(s.title, s.line, s.sets) for s in proc.main_steps] == [(s.title, s.line, s.sets) for s in plain.main_steps]
    assert proc.problems == ()


def test_continuation_lines_join_the_field():
    text = SAFE.replace("- why: hand over hand, steadily\n", "- why: hand over hand,\n  steadily and slowly\n")
    assert parse_procedure(text).main_steps[2].why == "hand over hand, steadily and slowly"


def test_fenced_code_is_not_read_as_steps():
    text = SAFE.replace("## Board\n", "```\n## Not a phase\n### Not a step\n- by: nobody\n```\n\n## Board\n")
    proc = parse_procedure(text)
    assert [p.title for p in proc.phases] == ["Board", "Ride", "Off", "Stop"]


def test_start_header():
    proc = parse_procedure(SAFE.replace("Signal:", "Start: brake off, area clear\nSignal:"))
    assert proc.start == {**REST_STATE, "brake": "off", "area": "clear"}


# -- bad input: a clear finding (rule 1 and friends) --------------------------------------------

@pytest.mark.parametrize("case, text, needle, words", [
    ("not markdown", '{"title": "a JSON file", "steps": [1, 2, 3]}\n', None, "no steps found"),
    ("prose only", "Just some notes about the lift.\nNothing structured here.\n", None, "no steps found"),
    ("steps with no fields", SAFE.replace("### Raise\n- by: lifters\n- go: caller\n- needs: brake off\n"
                                          "- sets: platform up\n- why: hand over hand, steadily\n- hold: 20\n",
                                          "### Raise\n"), "### Raise", "step has no fields"),
    ("field with no value", SAFE.replace("- go: caller\n- needs: brake off", "- go:\n- needs: brake off"),
     "- go:", 'field "go" has no value'),
    ("misspelt state word", SAFE.replace("- sets: platform up", "- sets: platfrom up"),
     "- sets: platfrom up", 'did you mean "platform up"'),
    ("heading with no steps", SAFE.replace("## Off\n", "## Off\n\n## Really off\n"), "## Off", "has no steps"),
    ("bullet that is no field", SAFE.replace("- hold: 20\n", "- hold: 20\n- keep it slow\n"), "- keep it slow",
     "must be `- field: value`"),
    ("unknown field with a hint", SAFE.replace("- hold: 20\n", "- hold: 20\n- chek: spotter\n"), "- chek: spotter",
     'did you mean "check"'),
    ("unknown header", "Rigg: test-lift\n" + SAFE, "Rigg: test-lift", 'did you mean "Rig"'),
    ("step outside a phase", SAFE.replace("## Board\n", "", 1), "### Rider boards", "before any ## phase"),
    ("empty step heading", SAFE.replace("### Raise\n", "###\n"), "###", "no title"),
    ("two values for one state", SAFE.replace("- sets: platform up", "- sets: platform up, platform down"),
     "- sets: platform up, platform down", "sets both"),
    ("field outside a step", SAFE.replace("## Ride\n", "## Ride\n- by: brake\n"), "- by: brake",
     "outside a step"),
    ("misspelt phase marker", SAFE.replace("- phase: stop", "- phse: stop"), "- phse: stop", 'did you mean "phase"'),
    ("unclosed placeholder", SAFE.replace("{{ load.operator_force_per_person_n|round|int }}", "{{ load.x"),
     "Each lifter pulls {{ load.x N.", "never closed"),
    ("statement tag", SAFE.replace("{{ load.operator_force_per_person_n|round|int }}", "{% for x in riders %}"),
     "Each lifter pulls {% for x in riders %} N.", "{% ... %} tag"),
])
def test_bad_input_gives_a_clear_finding(case, text, needle, words):
    findings = check_procedure(parse_procedure(text, source="bad.md"))
    line = 1 if needle is None else line_of(text, needle)
    assert any(f.line == line and words in f.message for f in findings), \
        "\n".join(f.format("bad.md") for f in findings)
    for f in findings:
        assert f.format("bad.md").startswith(f"bad.md:{f.line}: ")


@pytest.mark.parametrize("text, words", [
    ("", "empty"),
    ("   \n\n\t\n", "empty"),
    ("abc\x00def", "NUL"),
    ("".join(chr(i % 31 + 1) for i in range(2000)), "not text"),
    ("x" * 1_000_001, "over 1,000,000 bytes"),
])
def test_unreadable_text_raises_a_clear_error(text, words):
    with pytest.raises(ProcedureFileError, match=words):
        parse_procedure(text, source="bad.md")


def test_not_a_string_raises():
    with pytest.raises(ProcedureFileError, match="expected text"):
        parse_procedure(b"# bytes")  # type: ignore[arg-type]


def test_a_5_mb_file_is_refused_quickly(tmp_path):
    path = tmp_path / "huge.md"
    path.write_text("## Phase\n### Step\n- by: brake\n" * 200_000)
    assert path.stat().st_size > 5_000_000
    started = time.perf_counter()
    with pytest.raises(ProcedureFileError, match="over 1,000,000 bytes"):
        load_procedure(path)
    assert time.perf_counter() - started < 1.0


@pytest.mark.parametrize("data, words", [
    (b"", "empty"),
    (b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR", "binary"),
    (b"Title: caf\xe9 lift\n", "not UTF-8"),
])
def test_unreadable_files_raise_a_clear_error(tmp_path, data, words):
    path = tmp_path / "bad.md"
    path.write_bytes(data)
    with pytest.raises(ProcedureFileError, match=words):
        load_procedure(path)


def test_missing_file_raises_a_clear_error(tmp_path):
    with pytest.raises(ProcedureFileError, match="cannot read"):
        load_procedure(tmp_path / "nope.md")


def test_a_large_but_readable_procedure_parses_fast():
    body = "".join(f"### Step {i}\n- by: brake\n- check: spotter\n- note: n\n\n" for i in range(8000))
    text = "Title: big\nRig: x\nRoles: brake, spotter\nSignal: arms\n\n## Phase\n" + body
    assert len(text.encode()) < 1_000_000
    started = time.perf_counter()
    findings = check_procedure(parse_procedure(text))
    assert time.perf_counter() - started < 5.0
    assert findings  # no stop phase, no completion call
