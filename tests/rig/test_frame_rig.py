"""The frame rig kind on the demo's second rig (procedures/rigs/bough-lever.toml).

The bough is a lever: the lifters' force follows from moments about the pivot (law
of the lever, Archimedes, On the Equilibrium of Planes I.6-7), which these tests
work by hand from the file's figures and compare with the frame solve.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from showops.cli import main
from showops.rig import load_rig, solve_rig
from showops.units import STANDARD_GRAVITY as G

ROOT = Path(__file__).resolve().parents[2]
BOUGH = ROOT / "procedures" / "rigs" / "bough-lever.toml"


def hand_pull(rider_kg: float) -> float:
    """Moments about the pivot (x = 0), kg·m, from the figures in bough-lever.toml."""
    rider = (rider_kg + 4) * 1.2 * 1.8 if rider_kg else 0.0   # allowance 4 kg, dynamic 1.2
    seat = 18 * 1.8
    arm_front = 10.7 * 1.8 * 0.9
    arm_tail = -10.7 * 1.8 * 0.9
    counterweight = -115 * 1.4
    return (rider + seat + arm_front + arm_tail + counterweight) * G / 1.8


@pytest.mark.parametrize("rider", [50, 62, 80])
def test_bough_lifters_force_is_the_lever_balance(rider):
    result = solve_rig(load_rig(BOUGH), [rider])
    assert result.operator_force_n == pytest.approx(hand_pull(rider), rel=1e-9)
    assert result.empty_operator_force_n == pytest.approx(hand_pull(0), rel=1e-9)
    # the post's foot takes every weight minus the lifters' share (vertical equilibrium)
    foot = next(s for s in result.supports if s.node == "foot")
    total = ((rider + 4) * 1.2 + 18 + 10.7 * 3.6 + 14.4 * 1.3 + 115) * G
    assert foot.vertical_n - result.operator_force_n == pytest.approx(total, rel=1e-9)


@pytest.mark.parametrize("rider", [50, 65, 80])
def test_one_dancer_of_50_to_80_kg_is_ok(rider):
    assert solve_rig(load_rig(BOUGH), [rider]).verdict == "ok"


def test_two_riders_are_blocked():
    result = solve_rig(load_rig(BOUGH), [50, 50])
    assert result.verdict == "blocked"
    assert {r.limit for r in result.reasons} >= {"max_riders", "operator_force_per_person"}


def test_empty_bough_needs_the_brake_within_its_rating():
    result = solve_rig(load_rig(BOUGH), [])
    assert result.empty_operator_force_n < 0
    assert abs(result.empty_operator_force_n) < load_rig(BOUGH).limits.brake_holding_n
    assert any("brake must hold" in note for note in result.notes)


def test_rig_solve_cli_on_the_bough():
    result = CliRunner().invoke(main, ["rig", "solve", str(BOUGH), "--riders", "62"])
    assert result.exit_code == 0, result.output
    assert "Bough lever" in result.output and "Verdict: OK" in result.output
    assert "Caution:" in result.output
    data = json.loads(CliRunner().invoke(main, ["rig", "solve", str(BOUGH), "--riders", "62", "--json"]).output)
    assert data["operator_force_n"] == pytest.approx(hand_pull(62))
    assert data["verdict"] == "ok" and data["kind"] == "frame"
    assert {"rider_mass_kg", "operator_force_per_person_n", "empty_operator_force_n", "checks",
            "reasons", "states", "caution"} <= set(data)


@pytest.mark.parametrize("riders", [(), (62,), (80,)])
def test_bough_frame_matches_pynite(riders):
    # PyNiteFEA on the same model (member point loads and self-weight included): every
    # reaction, displacement, axial force and end moment to 1e-6 relative.
    import numpy as np
    from rig_references import solve_with_pynite

    from showops.rig.frame import solve_frame
    from showops.rig.frame_rig import build_model

    rig = load_rig(BOUGH)
    rider_n = sum(r + rig.rider_allowance_kg for r in riders) * G * rig.limits.dynamic_factor
    model = build_model(rig, rider_n, G)
    ours = solve_frame(model)
    reactions, displacements, axial, moment = solve_with_pynite(model)
    ef = ours.end_forces[0]
    scale = np.abs(reactions).max()
    np.testing.assert_allclose(ours.reactions[0], reactions, rtol=1e-6, atol=1e-6 * scale)
    np.testing.assert_allclose(ours.displacements[0], displacements, rtol=1e-6,
                               atol=1e-6 * np.abs(displacements).max())
    np.testing.assert_allclose(np.stack([-ef[:, 0], ef[:, 3]], 1), axial, rtol=1e-6, atol=1e-6 * scale)
    np.testing.assert_allclose(np.stack([-ef[:, 2], ef[:, 5]], 1), moment, rtol=1e-6,
                               atol=1e-6 * np.abs(moment).max())


def test_cli_rig_kinds_lists_both_kinds():
    result = CliRunner().invoke(main, ["rig", "kinds"])
    assert result.exit_code == 0, result.output
    names = [line.split()[0] for line in result.output.splitlines()]
    assert names == ["frame", "parallel-linkage"]
