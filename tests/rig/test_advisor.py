"""The balance advisor.

Outside reference: the trade worked example of such a lift (trade worked example, no
published source; g = 10 m/s²): with a 50 kg counterweight on the rear bar, pulling
1.3 m behind the rear bar brings the stand moment to zero. The advisor, allowed to
move the handle, must find that position. The rest checks the advisor against the
solver itself: whatever it advises, solved again, keeps every limit.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from showops.cli import main
from showops.rig import load_rig, parse_rig, solve_rig
from showops.rig.advisor import _Candidate, _variant, advise_balance

ROOT = Path(__file__).resolve().parents[2]
ORCHARD = ROOT / "procedures" / "rigs" / "orchard-lift.toml"
BOUGH = ROOT / "procedures" / "rigs" / "bough-lever.toml"


def trade_rig(*, plates="[]", handle_x=-1.8, stand_moment=300, per_person=1000, extra_advisor="",
              rated=200, operators=2):
    return f"""
kind = "parallel-linkage"
name = "trade example lift"
[geometry]
front_arm = 1.0
rear_arm = 1.0
pivot_spacing = 0.5
handle_x = {handle_x}
stroke = 0.8
[base]
front_x = 2.5
rear_x = -2.5
mass = 400
[[load]]
name = "counterweight"
mass = 50
on = "rear-bar"
x = -1.0
counterweight = true
[riders]
x = 1.8
[limits]
rated_payload = {rated}
operators = {operators}
operator_force_per_person = {per_person}
stand_moment = {stand_moment}
beam_axial = 5000
brake_holding = 3000
[advisor]
plates = {plates}
handle_min_x = -2.6
handle_max_x = -1.6
handle_step = 0.1
{extra_advisor}
"""


def test_trade_example_handle_that_zeroes_the_stand_moment():
    # Trade worked example: 130 kg riders, 50 kg counterweight, pull 1.3 m behind the
    # rear bar (x = -2.3) and the stand moment is zero. At -1.8 it is 400 N·m (g = 10).
    rig = parse_rig(trade_rig())
    assert solve_rig(rig, [130], g=10.0).stand_moment_nm == pytest.approx(400.0)
    advice = advise_balance(rig, [130], g=10.0)
    assert advice.feasible and advice.changed
    assert advice.handle_x_m == pytest.approx(-2.3)
    assert advice.result.stand_moment_nm == pytest.approx(0.0, abs=1e-9)
    assert advice.handle_move_m == pytest.approx(-0.5)
    assert "move the handle 0.50 m further back" in advice.text.lower()


def test_advice_for_a_light_rider_takes_plates_off():
    rig = load_rig(ORCHARD)
    assert solve_rig(rig, [40]).verdict == "blocked"
    advice = advise_balance(rig, [40])
    assert advice.feasible
    assert advice.counterweight_change_kg == pytest.approx(-20.0)
    assert advice.plates_removed_kg == (20.0,)
    assert advice.text.startswith("Take 20 kg off the counterweight (one 20 kg plate)")
    assert advice.result.verdict != "blocked"


def test_rated_payload_is_not_fixable_by_balance():
    advice = advise_balance(load_rig(ORCHARD), [70, 70])
    assert not advice.feasible and advice.unfixable == ("rated_payload",)
    assert advice.text.startswith("Balance cannot fix this: riders with allowance 148 kg")
    assert advice.text.endswith("Change the riders.")


def test_a_third_lifter_when_nothing_else_can_change():
    # no plates, no handle range: only lifters; 130 kg needs 1300 N (g = 10) less 500 N
    # of counterweight = 800 N; at 300 N each that takes three lifters.
    text = trade_rig(per_person=300, stand_moment=5000, extra_advisor="max_operators = 3")
    text = text.replace("handle_min_x = -2.6\nhandle_max_x = -1.6\n", "")
    advice = advise_balance(parse_rig(text), [130], g=10.0)
    assert advice.feasible and advice.extra_operators == 1 and advice.operators == 3
    assert advice.text.startswith("Add a third lifter: pull 267 N per lifter")
    assert advice.result.operator_force_per_person_n == pytest.approx(800.0 / 3)


def test_says_plainly_when_nothing_works():
    text = trade_rig(per_person=150, stand_moment=5000).replace("handle_min_x = -2.6\nhandle_max_x = -1.6\n", "")
    advice = advise_balance(parse_rig(text), [130], g=10.0)
    assert not advice.feasible and advice.result is None
    assert advice.text.startswith("No ")
    assert "keeps every limit with these riders" in advice.text and advice.text.endswith("change the riders.")


def test_no_change_when_the_rig_is_fine():
    advice = advise_balance(load_rig(ORCHARD), [45, 45])
    assert advice.feasible and not advice.changed
    assert advice.text == "No change needed: every limit holds with the rig as it is."


@pytest.mark.parametrize("riders", [(30,), (40,), (50, 45), (58, 64), (66,), (62, 70), (20, 20)])
def test_whatever_is_advised_solves_within_every_limit(riders):
    rig = load_rig(ORCHARD)
    advice = advise_balance(rig, riders)
    if not advice.feasible:
        assert advice.result is None
        return
    again = solve_rig(_variant(rig, _Candidate(advice.counterweight_kg, advice.handle_x_m, advice.operators)), riders)
    assert again.verdict == advice.result.verdict != "blocked"
    assert again.operator_force_n == pytest.approx(advice.result.operator_force_n)
    lo, hi = rig.advisor.handle_min_x_m, rig.advisor.handle_max_x_m
    assert lo - 1e-9 <= advice.handle_x_m <= hi + 1e-9 or advice.handle_x_m == rig.geometry.handle_x_m


def test_frame_rig_advice_adds_plates_and_refuses_a_second_rider():
    rig = load_rig(BOUGH)
    advice = advise_balance(rig, [83])
    assert advice.feasible and advice.counterweight_change_kg > 0
    assert advice.result.verdict == "ok"
    two = advise_balance(rig, [50, 50])
    assert not two.feasible and "max_riders" in two.unfixable


def test_cli_advise():
    result = CliRunner().invoke(main, ["rig", "advise", str(ORCHARD), "--riders", "40"])
    assert result.exit_code == 0, result.output
    assert result.output.startswith("Take 20 kg off the counterweight")
    assert "Caution:" in result.output
    data = json.loads(CliRunner().invoke(main, ["rig", "advise", str(ORCHARD), "--riders", "40", "--json"]).output)
    assert data["feasible"] is True and data["counterweight_change_kg"] == -20.0
    assert data["result"]["verdict"] in ("ok", "caution")
