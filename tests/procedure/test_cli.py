"""`showops procedure check|render|rules` through click's CliRunner."""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner

from showops.cli import main
from showops.procedure import RULE_SET_VERSION

from .conftest import REPO, SAFE, line_of, linkage_rig_text

ORCHARD = REPO / "procedures" / "orchard-lift.md"
ORCHARD_RIG = REPO / "procedures" / "rigs" / "orchard-lift.toml"


@pytest.fixture
def runner():
    return CliRunner()


def test_check_clean_exits_0(runner):
    result = runner.invoke(main, ["procedure", "check", str(ORCHARD), "--rig", str(ORCHARD_RIG), "--riders", "62,55"])
    assert result.exit_code == 0, result.output
    assert "clean: 14 steps and 7 stop steps" in result.output
    assert RULE_SET_VERSION in result.output
    assert "Caution:" in result.output


def test_check_finds_the_rig_beside_the_procedure(runner):
    result = runner.invoke(main, ["procedure", "check", str(ORCHARD), "--riders", "62"])
    assert result.exit_code == 0, result.output
    assert "orchard-lift.toml" in result.output


def test_check_with_findings_exits_1_with_one_line_each(runner, tmp_path):
    text = SAFE.replace('- reply: "Rider aboard, strap fastened"', '- reply: "OK"')
    proc = tmp_path / "p.md"
    proc.write_text(text)
    rig = tmp_path / "test-lift.toml"
    rig.write_text(linkage_rig_text(counterweight_kg=60))
    result = runner.invoke(main, ["procedure", "check", str(proc), "--rig", str(rig), "--riders", "60"])
    assert result.exit_code == 1, result.output
    line = line_of(text, '- reply: "OK"')
    assert result.output.splitlines()[0] == (
        f'{proc}:{line}: step "Rider boards": reply "OK" names no state or value: answer with what is observed '
        '(e.g. "Brake on, handle locked") (OK)')
    assert "1 finding:" in result.output


def test_check_against_the_wrong_rig_is_a_finding(runner, tmp_path):
    proc = tmp_path / "p.md"
    proc.write_text(SAFE)
    result = runner.invoke(main, ["procedure", "check", str(proc), "--rig", str(ORCHARD_RIG), "--riders", "60"])
    assert result.exit_code == 1, result.output
    assert 'written for rig "test-lift" but checked against rig "orchard-lift"' in result.output


def test_check_json(runner):
    result = runner.invoke(main, ["procedure", "check", str(ORCHARD), "--riders", "62", "--json"])
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    assert data["findings"] == [] and data["rule_set_version"] == RULE_SET_VERSION
    assert len(data["procedure_version"]) == 64 and data["caution"]


@pytest.mark.parametrize("content, words", [
    (b"", "the file is empty"),
    (b"\x00\x01\x02binary", "binary"),
    (b"x" * 1_500_000, "over 1,000,000 bytes"),
])
def test_check_unreadable_exits_2(runner, tmp_path, content, words):
    proc = tmp_path / "p.md"
    proc.write_bytes(content)
    result = runner.invoke(main, ["procedure", "check", str(proc)])
    assert result.exit_code == 2, result.output
    assert result.output.startswith("Error: ") and words in result.output
    assert "Traceback" not in result.output


def test_check_missing_file_exits_2(runner, tmp_path):
    result = runner.invoke(main, ["procedure", "check", str(tmp_path / "none.md")])
    assert result.exit_code == 2 and "cannot read" in result.output


def test_check_bad_riders_exits_2(runner):
    result = runner.invoke(main, ["procedure", "check", str(ORCHARD), "--riders", "sixty"])
    assert result.exit_code == 2 and "--riders" in result.output


def test_render_writes_a_sanitised_page(runner, tmp_path):
    out = tmp_path / "lift.html"
    result = runner.invoke(main, ["procedure", "render", str(ORCHARD), "--riders", "58,64", "--rider-names",
                                  "Ines,<b>Tomas</b>", "--crew", "brake=Jo", "--crew", "lifters=Sam,Ade",
                                  "--out", str(out)])
    assert result.exit_code == 0, result.output
    page = out.read_text()
    assert page.startswith("<!doctype html>")
    assert "Ines, &lt;b&gt;Tomas&lt;/b&gt;" in page
    assert "lifters <span class=\"placeholder\">Sam, Ade</span>" in page
    assert "[nobody cast as caller]" in page  # shown, not hidden
    assert "Caution:" in page


def test_render_reports_an_unbound_placeholder(runner, tmp_path):
    proc = tmp_path / "p.md"
    text = SAFE.replace("{{ load.operator_force_per_person_n|round|int }}", "{{ crew.brak }}")
    proc.write_text(text)
    out = tmp_path / "p.html"
    result = runner.invoke(main, ["procedure", "render", str(proc), "--out", str(out)])
    assert result.exit_code == 0, result.output
    assert f"{proc}:{line_of(text, 'Each lifter pulls {{ crew.brak }} N.')}:" in result.output
    assert "not bound: {{crew.brak}}" in out.read_text()


def test_render_bad_crew_option_exits_2(runner, tmp_path):
    result = runner.invoke(main, ["procedure", "render", str(ORCHARD), "--crew", "Jo", "--out", str(tmp_path / "x")])
    assert result.exit_code == 2 and "ROLE=NAME" in result.output


def test_rules_lists_all_twelve_with_sources(runner):
    result = runner.invoke(main, ["procedure", "rules"])
    assert result.exit_code == 0, result.output
    assert RULE_SET_VERSION in result.output
    assert result.output.count("Source:") == 12
    assert "12. emergency_signal_and_lowering_path" in result.output


@pytest.mark.parametrize("command", ["check", "render", "rules"])
def test_each_command_has_an_example(runner, command):
    result = runner.invoke(main, ["procedure", command, "--help"])
    assert result.exit_code == 0 and "Example:" in result.output
