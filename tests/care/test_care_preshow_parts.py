"""Pre-show answers and the equipment register's ratings.

Sources:
- an answer states the observed condition, never "OK" or "checked": Degani and Wiener,
  NASA CR-177549 (1990), on flight-deck checklist responses;
- a check before each use includes a trial in motion: DGUV Grundsatz 315-390 (from memory);
- working coefficients "as a general rule doubled" for lifting persons: EU Machinery
  Directive 2006/42/EC Annex I §6.1.1 (from memory);
- webbing slings 7:1 (EN 1492-1) and wire rope slings 5:1 (EN 13414-1) (secondary source,
  /work DOMAIN notes); load-bearing ropes and belts over people 10:1 (DGUV Vorschrift 17 §9,
  from memory);
- the law of the lever (Archimedes, On the Equilibrium of Planes, I, 6-7) for the brake's figure.
"""

from __future__ import annotations

import math

import pytest

from showops.care.model import ChecklistItem, Part
from showops.care.parts import PEOPLE_DOUBLING, allowed_force, check_part, part_figures
from showops.care.preshow import validate_observation
from showops.errors import ValidationError
from showops.rig import parse_rig, solve_rig
from showops.units import STANDARD_GRAVITY

TRIAL = ChecklistItem("Trial/Load trial", "Load trial", "lifters", load_trial=True)


@pytest.mark.parametrize("answer", ["OK", "ok.", "Checked", "done", "Yes", "✓", "all good", "fine", "OK, checked",
                                    "", "   ", "n/a", "as normal", "looks fine", "it was ok"])
def test_content_free_answers_are_refused(answer):
    with pytest.raises(ValidationError) as err:
        validate_observation(answer)
    assert err.value.field == "observation"


@pytest.mark.parametrize("answer", ["brake holds with 40 kg on the rear bar", "strap webbing intact, buckle locks",
                                    "Pads 4 mm", "caster 3 wobbles: replace"])
def test_observations_are_taken(answer):
    assert validate_observation(f"  {answer} ") == answer


def test_single_word_is_refused():
    with pytest.raises(ValidationError):
        validate_observation("intact")


def test_load_trial_must_name_the_test_load():
    with pytest.raises(ValidationError) as err:
        validate_observation("rose and lowered smoothly", TRIAL)
    assert "load trial" in str(err.value)
    assert validate_observation("80 kg sandbags aboard, rose and lowered smoothly", TRIAL)


# --------------------------------------------------------------------------- parts

def part(**kw):
    base = dict(id=1, rig="orchard-lift", name="rider strap", kind="strap", carries_people=True,
                rating_n=10000.0, design_factor=7.0, sees="riders_n")
    base.update(kw)
    return Part(**base)


def test_people_carrying_part_is_halved_by_the_machinery_directive_doubling():
    # 2006/42/EC Annex I §6.1.1: coefficients doubled for persons: a 7:1 webbing sling
    # (EN 1492-1) rated 10 kN keeps 14:1 on its 70 kN breaking force when carrying people: 5 kN.
    allowed, how = allowed_force(part())
    assert PEOPLE_DOUBLING == 2.0
    assert allowed == pytest.approx(70000 / 14)
    assert "2006/42/EC" in how


def test_rig_people_factor_re_rates_from_breaking_force():
    # DGUV Vorschrift 17 §9 (from memory): belts over people 10:1. 10 kN at 7:1 -> 70 kN / 10 = 7 kN.
    allowed, _ = allowed_force(part(), people_factor=10)
    assert allowed == pytest.approx(7000)
    # A wire rope sling at 5:1 (EN 13414-1) re-rated at 10:1 keeps half its rating.
    assert allowed_force(part(design_factor=5.0), people_factor=10)[0] == pytest.approx(5000)
    # A factor lower than the maker's never raises the rating.
    assert allowed_force(part(), people_factor=4)[0] == pytest.approx(10000)


def test_goods_part_keeps_its_rating():
    assert allowed_force(part(carries_people=False))[0] == 10000


@pytest.mark.parametrize("value, level", [(3000, None), (4000, "caution"), (5000, "caution"), (5001, "blocked")])
def test_check_part_levels(value, level):
    reason = check_part(part(), {"riders_n": value}, caution_at=0.8)
    assert (reason.level if reason else None) == level
    if level == "blocked":
        assert reason.limit == "equipment" and reason.allowed == pytest.approx(5000) and reason.fix


def test_share_splits_the_figure():
    assert check_part(part(share=0.5), {"riders_n": 7000}) is None  # 3.5 kN of 5 kN: under caution_at 0.8
    assert check_part(part(share=0.5), {"riders_n": 12000}).level == "blocked"


def test_part_with_unknown_figure_is_a_caution_not_a_pass():
    reason = check_part(part(sees="pivot_n"), {"riders_n": 10.0})
    assert reason.level == "caution" and "cannot be checked" in reason.text


ORCHARD = """
kind = "parallel-linkage"
name = "lever test"
[geometry]
front_arm = 1.2
rear_arm = 1.2
pivot_spacing = 0.4
handle_x = -2.0
handle_on = "rear-bar"
stroke = 0.6
[base]
front_x = 2.5
rear_x = -2.5
mass = 300
x = 0
[[load]]
name = "platform"
mass = 20
on = "platform"
x = 1.7
[[load]]
name = "counterweight"
mass = 40
on = "rear-bar"
x = -1.2
counterweight = true
[riders]
x = 2.0
allowance = 0
[limits]
rated_payload = 200
operators = 2
operator_force_per_person = 400
stand_moment = 1000
beam_axial = 10000
brake_holding = 2000
dynamic_factor = 1.0
caution_at = 0.8
tipping = "EN 1990 EQU"
"""


def test_part_figures_from_the_solver():
    rig = parse_rig(ORCHARD, "lever.toml")
    load = solve_rig(rig, [100]).to_dict()
    figures = part_figures(load, rig)
    g = STANDARD_GRAVITY
    # Law of the lever with equal arms (a = b): the brake at the rear bar holds the
    # platform's load less the counterweight: (100 + 20 - 40) kg of weight.
    assert figures["brake_n"] == pytest.approx(80 * g)
    assert figures["riders_n"] == pytest.approx(100 * g)
    assert figures["platform_n"] == pytest.approx(120 * g)
    assert figures["counterweight_n"] == pytest.approx(40 * g)
    assert figures["pivot_n"] == pytest.approx(math.hypot(load["pivot_vertical_n"] / 2, load["upper_pivot_horizontal_n"]))
    assert figures["caster_line_n"] >= figures["pivot_n"] / 2
    # Empty: the counterweight (40 kg) outweighs the 20 kg platform: the brake holds 20 kg.
    empty = part_figures(solve_rig(rig, []).to_dict(), rig)
    assert empty["brake_n"] == pytest.approx(20 * g)


def test_part_figures_of_a_frame_rig():
    # The bough lever (kind "frame"): the brake's figure comes from its solver, the
    # counterweight from its loads; a frame names no platform, so no platform figure.
    from pathlib import Path

    from showops.rig import load_rig

    rig = load_rig(Path(__file__).resolve().parents[2] / "procedures" / "rigs" / "bough-lever.toml")
    load = solve_rig(rig, [55]).to_dict()
    figures = part_figures(load, rig)
    assert figures["brake_n"] == pytest.approx(max(abs(load["brake_force_n"]), abs(load["empty_brake_force_n"])))
    assert figures["counterweight_n"] == pytest.approx(115 * STANDARD_GRAVITY)  # the rig file's 115 kg box
    assert "platform_n" not in figures and "pivot_n" not in figures
