"""Unit strings against their exact definitions.

Sources:
- the international yard and pound agreement of 1959: 1 yard = 0.9144 m exactly, so
  1 ft = 0.3048 m and 1 in = 0.0254 m; 1 lb = 0.45359237 kg exactly;
- the pound-force: the weight of one pound under standard gravity, 9.80665 m/s²
  (3rd CGPM, 1901), so 1 lbf = 4.4482216152605 N exactly;
- SI prefixes (BIPM SI Brochure, 9th ed., 2019): milli 1e-3, kilo 1e3, giga 1e9.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from showops.cli import main
from showops.errors import UnitError
from showops.units import STANDARD_GRAVITY, format_quantity, to_si

FT, INCH, LB = 0.3048, 0.0254, 0.45359237
LBF = LB * STANDARD_GRAVITY


@pytest.mark.parametrize("text,dimension,expected", [
    ("1100 mm", "length", 1.1),
    ("4 ft 6 in", "length", 4 * FT + 6 * INCH),           # 1.3716 m
    ("4 ft", "length", 4 * FT),
    ("6 in", "length", 6 * INCH),
    ("250 lb", "mass", 250 * LB),                         # 113.3980925 kg
    ("55 lbf", "force", 55 * LBF),                        # 244.652... N
    ("1 lbf", "force", 4.4482216152605),
    ("2 kN", "force", 2000.0),
    ("300 N*m", "moment", 300.0),
    ("100 lbf*ft", "moment", 100 * LBF * FT),
    ("210 GPa", "pressure", 210e9),
    ("18.4 cm^2", "area", 18.4e-4),
    ("271 cm^4", "second_moment", 271e-8),
    ("10.7 kg/m", "linear_mass", 10.7),
    ("1.5", "length", 1.5),                               # a bare number in a string is SI
])
def test_unit_strings(text, dimension, expected):
    assert to_si(text, dimension) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("value", [1.25, 3, 0, -2.5])
def test_plain_numbers_are_si(value):
    assert to_si(value, "length") == float(value)


@pytest.mark.parametrize("value,dimension,words", [
    ("20 kg", "length", "is not a length"),
    ("4 ft 6 in", "mass", "is not a mass"),
    ("5 N", "mass", "is not a mass"),
    ("lots", "length", "cannot read"),
    ("", "length", "empty string"),
    (True, "length", "expected a number"),
    ([1, 2], "mass", "expected a number"),
    (float("nan"), "length", "finite"),
    (float("inf"), "force", "finite"),
    ("nan m", "length", "finite"),
])
def test_bad_quantities(value, dimension, words):
    with pytest.raises(UnitError, match=words):
        to_si(value, dimension, what="geometry.front_arm")


def test_error_names_the_field():
    with pytest.raises(UnitError, match=r"^geometry\.front_arm: "):
        to_si("20 kg", "length", what="geometry.front_arm")


@pytest.mark.parametrize("value,dimension,imperial,expected", [
    (784.5, "force", False, "784.5 N"),
    (4.4482216152605, "force", True, "1.0 lbf"),
    (0.3048, "length", True, "1.0 ft"),
    (LB, "mass", True, "1.0 lb"),
    (LBF * FT, "moment", True, "1.0 lbf·ft"),
    (-0.04, "force", False, "0.0 N"),            # never "-0.0"
    (2206.5, "force", False, "2,206.5 N"),
])
def test_format_quantity(value, dimension, imperial, expected):
    assert format_quantity(value, dimension, imperial=imperial) == expected


def test_rig_solve_imperial_shows_pound_force_and_feet():
    path = Path(__file__).resolve().parents[1] / "docs" / "examples" / "example-lift.toml"
    si = json.loads(CliRunner().invoke(main, ["rig", "solve", str(path), "--riders", "60", "--json"]).output)
    result = CliRunner().invoke(main, ["rig", "solve", str(path), "--riders", "60", "--imperial"])
    assert result.exit_code == 0, result.output
    pull_lbf = si["operator_force_n"] / LBF
    assert f"{pull_lbf:,.1f} lbf" in result.output
    assert f"{si['stand_moment_nm'] / (LBF * FT):,.1f} lbf·ft" in result.output
    # the figures are all imperial; the reasons under the verdict stay in SI, as the
    # night's records store them
    figures = result.output.split("Verdict:")[0]
    assert " ft" in figures and " N " not in figures and " N·m" not in figures


def test_frame_rig_imperial():
    path = Path(__file__).resolve().parents[1] / "procedures" / "rigs" / "bough-lever.toml"
    si = json.loads(CliRunner().invoke(main, ["rig", "solve", str(path), "--riders", "60", "--json"]).output)
    result = CliRunner().invoke(main, ["rig", "solve", str(path), "--riders", "60", "--imperial"])
    assert result.exit_code == 0, result.output
    assert f"{si['operator_force_n'] / LBF:,.1f} lbf" in result.output


@pytest.mark.parametrize("text", ["(" * 400 + "1 m" + ")" * 400, "1e999999 m", "(1+2j) m", "m " * 60])
def test_pathological_strings_are_refused_with_a_unit_error(text):
    # Found by fuzzing: deep brackets, an overflowing exponent (once read as a
    # compound "1 e ... m" and split forever) must be refused, never crash.
    with pytest.raises(UnitError):
        to_si(text, "length", what="geometry.front_arm")
