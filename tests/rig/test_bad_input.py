"""Bad rig files and bad riders: one line naming the file, the key and what was
expected; exit status 2; never a traceback. Then property-based tests: thousands of
generated rig files of both kinds (valid and broken) raise nothing but ShowopsError.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest
from click.testing import CliRunner
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from showops.cli import main
from showops.errors import ShowopsError
from showops.rig import parse_rig, solve_rig

ROOT = Path(__file__).resolve().parents[2]
LIFT = (ROOT / "docs" / "examples" / "example-lift.toml").read_text()
BOUGH = (ROOT / "procedures" / "rigs" / "bough-lever.toml").read_text()
RIDERS_X = "x = 1.6                # riders' combined centre of mass"


def cut(text: str, start: str, end: str) -> str:
    return text[:text.index(start)] + text[text.index(end):]


LINKAGE_CASES = [
    # (case, file text, key named, words expected)
    ("missing field", LIFT.replace("rear_arm = 1.1", "", 1), "geometry.rear_arm", "missing"),
    ("unknown kind", LIFT.replace('kind = "parallel-linkage"', 'kind = "crane"'), "kind", "unknown kind 'crane'"),
    ("missing kind", LIFT.replace('kind = "parallel-linkage"', ""), "kind", "missing"),
    ("unknown key", LIFT.replace("stroke = 1.1", "stroke = 1.1\nstrok = 2"), "geometry.strok", "unknown key"),
    ("unknown table", LIFT + "\n[extras]\na = 1\n", "extras", "unknown key"),
    ("negative arm", LIFT.replace("front_arm = 1.1", "front_arm = -1.1"), "geometry.front_arm", "greater than zero"),
    ("zero rear arm", LIFT.replace("rear_arm = 1.1", "rear_arm = 0"), "geometry.rear_arm", "greater than zero"),
    ("zero spacing", LIFT.replace("pivot_spacing = 0.45", "pivot_spacing = 0"), "geometry.pivot_spacing",
     "greater than zero"),
    ("zero stroke", LIFT.replace("stroke = 1.1 ", "stroke = 0 "), "geometry.stroke", "greater than zero"),
    ("negative mass", LIFT.replace("mass = 28", "mass = -28"), "load[1].mass", "greater than zero"),
    ("zero base mass", LIFT.replace("mass = 90", "mass = 0"), "base.mass", "greater than zero"),
    ("nan", LIFT.replace("front_arm = 1.1", "front_arm = nan"), "geometry.front_arm", "finite"),
    ("infinity", LIFT.replace("pivot_spacing = 0.45", "pivot_spacing = inf"), "geometry.pivot_spacing", "finite"),
    ("mass where a length belongs", LIFT.replace("front_arm = 1.1", 'front_arm = "20 kg"'), "geometry.front_arm",
     "is not a length"),
    ("force where a mass belongs", LIFT.replace("mass = 28", 'mass = "20 N"'), "load[1].mass", "is not a mass"),
    ("unreadable unit", LIFT.replace("front_arm = 1.1", 'front_arm = "lots"'), "geometry.front_arm", "cannot read"),
    ("boolean number", LIFT.replace("front_arm = 1.1", "front_arm = true"), "geometry.front_arm",
     "expected a number"),
    ("no rider position", LIFT.replace(RIDERS_X, ""), "riders.x", "missing"),
    ("no riders table", cut(LIFT, "[riders]", "[limits]"), "riders", "missing"),
    ("riders behind the stand", LIFT.replace(RIDERS_X, "x = -0.4"), "riders.x", "behind the pivot line"),
    ("stroke past vertical", LIFT.replace("stroke = 1.1 ", "stroke = 2.5 "), "geometry.stroke", "twice front_arm"),
    ("casters swapped", LIFT.replace("front_x = 0.6", "front_x = -0.9"), "base.front_x", "in front of"),
    ("handle in front", LIFT.replace("handle_x = -2.2", "handle_x = 0.5"), "geometry.handle_x", "negative"),
    ("beyond any machine", LIFT.replace("front_arm = 1.1", "front_arm = 1e300"), "geometry.front_arm",
     "beyond any stage machine"),
    ("bad mount", LIFT.replace('on = "platform"', 'on = "roof"'), "load[1].on", "expected one of"),
    ("not TOML", LIFT + "\n[[[", None, "not valid TOML"),
    ("operators zero", LIFT.replace("operators = 2", "operators = 0"), "limits.operators", "at least 1"),
    ("operators fraction", LIFT.replace("operators = 2", "operators = 1.5"), "limits.operators", "whole number"),
    ("tipping method", LIFT.replace('tipping = "EN 1990 EQU"', 'tipping = "by eye"'), "limits.tipping",
     "factor of safety"),
]

FRAME_CASES = [
    ("unknown node", BOUGH.replace('to = "seat"', 'to = "sete"'), "member[2].to", "no node called 'sete'"),
    ("unknown section", BOUGH.replace('section = "post tube"', 'section = "tube"'), "member[1].section",
     "no section called 'tube'"),
    ("lifters on a pinned node", BOUGH.replace('support = "vertical"', 'support = "pin"'), "operators.node",
     "support = \"vertical\""),
    ("mechanism", BOUGH.replace('pin = "to"', 'pin = "both"').replace('support = "fixed"', 'support = "pin"'),
     "member", "mechanism"),
    ("load beyond its member", BOUGH.replace("at = 1.4 ", "at = 2.4 "), "load[2].at", "beyond the end"),
    ("riders with no position", BOUGH.replace('[riders]\nnode = "seat"', "[riders]"), "riders.node", "missing"),
    ("riders node and member", BOUGH.replace('[riders]\nnode = "seat"', '[riders]\nnode = "seat"\nmember = "arm front"'),
     "riders.node", "not both"),
    ("modulus as a mass", BOUGH.replace('E = "210 GPa"', 'E = "210 kg"', 1), "section[1].E", "is not a pressure"),
    ("area too small", BOUGH.replace('A = "18.4 cm^2"', 'A = 1e-12'), "section[1].A", "too small"),
    ("two nodes in one place", BOUGH.replace("x = 1.8\ny = 1.3", "x = 0.0\ny = 1.3", 1), "node[3].x",
     "same place"),
    ("bad support", BOUGH.replace('support = "fixed"', 'support = "glued"'), "node[1].support", "expected one of"),
    ("negative self-weight", BOUGH.replace("mass_per_length = 14.4", "mass_per_length = -1"),
     "member[1].mass_per_length", "zero or more"),
    ("missing operators", cut(BOUGH, "[operators]", "[base]"), "operators", "missing"),
    ("tipping with no base", cut(BOUGH, "[base]", "[limits]"), "limits.tipping", "needs a [base]"),
]


@pytest.mark.parametrize("case,text,key,words", LINKAGE_CASES + FRAME_CASES, ids=lambda v: v if isinstance(v, str) and len(v) < 40 else None)
def test_bad_rig_file_is_one_line_exit_2(tmp_path, case, text, key, words):
    path = tmp_path / "rig.toml"
    path.write_text(text)
    result = CliRunner().invoke(main, ["rig", "solve", str(path), "--riders", "60"])
    assert result.exit_code == 2, result.output
    out = result.output.strip()
    assert "\n" not in out and "Traceback" not in out
    assert out.startswith(f"Error: {path}: ")
    if key:
        assert f": {key}: " in out, out
    assert words in out, out


@pytest.mark.parametrize("riders,words", [
    ("abc", "cannot read 'abc' as a mass"),
    ("60,-5", "rider 2: expected a mass in kg greater than zero"),
    ("60,0", "rider 2"),
    ("6000", "not a person's mass"),
    ("60,nan", "rider 2"),
    ("1.8 m", "cannot read '1.8 m' as a mass"),
])
def test_bad_riders_are_one_line_exit_2(riders, words):
    path = ROOT / "docs" / "examples" / "example-lift.toml"
    result = CliRunner().invoke(main, ["rig", "solve", str(path), "--riders", riders])
    assert result.exit_code == 2, result.output
    out = result.output.strip()
    assert out.startswith("Error: ") and "\n" not in out and words in out, out


def test_missing_file_is_one_line_exit_2(tmp_path):
    result = CliRunner().invoke(main, ["rig", "solve", str(tmp_path / "nope.toml")])
    assert result.exit_code == 2
    assert result.output.strip().startswith(f"Error: {tmp_path / 'nope.toml'}: cannot read the file")


def test_riders_in_pounds_are_accepted():
    path = ROOT / "docs" / "examples" / "example-lift.toml"
    kg = json.loads(CliRunner().invoke(main, ["rig", "solve", str(path), "--riders", "60", "--json"]).output)
    lb = json.loads(CliRunner().invoke(main, ["rig", "solve", str(path), "--riders", f"{60 / 0.45359237!r} lb",
                                              "--json"]).output)
    assert lb["operator_force_n"] == pytest.approx(kg["operator_force_n"])


# --------------------------------------------------------------------------- fuzzing

_JUNK = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True).map(lambda f: "nan" if math.isnan(f) else
                                                       ("inf" if f == math.inf else "-inf" if f == -math.inf else repr(f))),
    st.integers(min_value=-10**6, max_value=10**6).map(str),
    st.sampled_from(["true", "false", "[]", "{}", '""', '"1100 mm"', '"4 ft 6 in"', '"250 lb"', '"55 lbf"',
                     '"-3 m"', '"2 kg"', '"nan m"', '"1e400 m"', '"210 GPa"', '"18 cm^2"', '"271 cm^4"',
                     '"vertical"', '"pin"', '"fixed"', '"from"', '"both"', '"seat"', '"tail"', '"pivot"',
                     '"arm front"', '"platform"', '"rear-bar"', '"upper-beam"', '"EN 1990 EQU"', "0", "-0.0",
                     "1e-300", "1e300", '[1, "a"]', "[10, 5]", '"frame"', '"parallel-linkage"']),
    st.text(max_size=12).map(json.dumps),
)


def _mutate(text: str, data) -> str:
    lines = text.splitlines()
    for _ in range(data.draw(st.integers(min_value=1, max_value=4), label="mutations")):
        i = data.draw(st.integers(min_value=0, max_value=len(lines) - 1), label="line")
        action = data.draw(st.sampled_from(["value", "delete", "duplicate", "junk line"]), label="action")
        line = lines[i]
        if action == "value" and "=" in line:
            key = line.split("=", 1)[0]
            lines[i] = f"{key}= {data.draw(_JUNK, label='value')}"
        elif action == "delete":
            del lines[i]
        elif action == "duplicate":
            lines.insert(i, line)
        else:
            key = data.draw(st.sampled_from(["x", "mass", "node", "at", "name", "support", "pin", "zzz", "[riders]",
                                             "[[load]]", "[[node]]", "[base]"]), label="junk key")
            lines.insert(i, key if key.startswith("[") else f"{key} = {data.draw(_JUNK, label='junk value')}")
        if not lines:
            break
    return "\n".join(lines) + "\n"


def _exercise(text: str, riders) -> None:
    try:
        rig = parse_rig(text, source="fuzz.toml")
        result = solve_rig(rig, riders)
        json.dumps(result.to_dict(), default=str)
        if hasattr(result, "render_text"):
            result.render_text(imperial=True)
    except ShowopsError as exc:
        assert str(exc) and "\n" not in str(exc)


_RIDERS = st.lists(st.floats(min_value=1.0, max_value=150.0), max_size=3)
_FUZZ = settings(max_examples=1000, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@_FUZZ
@given(data=st.data(), riders=_RIDERS)
def test_generated_linkage_files_raise_only_showops_errors(data, riders):
    _exercise(_mutate(LIFT, data), riders)


@_FUZZ
@given(data=st.data(), riders=_RIDERS)
def test_generated_frame_files_raise_only_showops_errors(data, riders):
    _exercise(_mutate(BOUGH, data), riders)
