"""Sweeps against the closed form and the trade worked example.

Outside reference: the trade worked example (no published source; g = 10 m/s²): with
a 50 kg counterweight and 130 kg riders the stand moment is 400 N·m with the handle
0.8 m behind the rear bar and zero 1.3 m behind it, and the pull (800 N) does not
depend on where the handle is. A handle sweep must pass through both points.
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from showops.cli import main
from showops.rig import load_rig, parse_rig, solve_rig
from showops.rig.sweep import SweepError, sweep_angle, sweep_handle
from rig_texts import linkage_toml

ROOT = Path(__file__).resolve().parents[2]
ORCHARD = ROOT / "procedures" / "rigs" / "orchard-lift.toml"
BOUGH = ROOT / "procedures" / "rigs" / "bough-lever.toml"

# The trade worked example's lift (arms 1.0 m, pivots 0.5 m, 50 kg counterweight).
TRADE = linkage_toml(name="trade example lift", base_mass=400, loads=[("counterweight", 50, "rear-bar", -1.0)])


def test_handle_sweep_passes_through_the_trade_example_points():
    sweep = sweep_handle(parse_rig(TRADE), [130], g=10.0, points=11, span=(-2.8, -1.8))
    np.testing.assert_allclose(sweep.handle_x_m, np.linspace(-2.8, -1.8, 11))
    np.testing.assert_allclose(sweep.operator_force_n, 800.0)                 # pull 800 N everywhere
    assert sweep.stand_moment_nm[-1] == pytest.approx(400.0)                  # 0.8 m behind: 400 N·m
    assert sweep.stand_moment_nm[5] == pytest.approx(0.0, abs=1e-9)           # 1.3 m behind: zero
    assert sweep.balanced_handle_x_m == pytest.approx(-2.3)


@pytest.mark.parametrize("handle_on,handle_x", [("rear-bar", -1.95), ("upper-beam", -1.2)])
def test_handle_sweep_agrees_with_the_solve_at_every_point(handle_on, handle_x):
    text = ORCHARD.read_text().replace('handle_on = "rear-bar"', f'handle_on = "{handle_on}"')
    text = text.replace("handle_x = -1.95", f"handle_x = {handle_x}")
    rig = parse_rig(text)
    sweep = sweep_handle(rig, [58, 64], points=7)
    for hx, pull, moment in zip(sweep.handle_x_m, sweep.operator_force_n, sweep.stand_moment_nm):
        moved = parse_rig(text.replace(f"handle_x = {handle_x}", f"handle_x = {float(hx)!r}"))
        solved = solve_rig(moved, [58, 64])
        assert pull == pytest.approx(solved.operator_force_n)
        assert moment == pytest.approx(solved.stand_moment_nm, abs=1e-9)


def test_angle_sweep_keeps_pull_and_moment_and_matches_the_solve_at_level():
    rig = load_rig(ORCHARD)
    level = solve_rig(rig, [58, 64])
    sweep = sweep_angle(rig, [58, 64], points=9)
    np.testing.assert_allclose(sweep.operator_force_n, level.operator_force_n, rtol=1e-6)
    np.testing.assert_allclose(sweep.stand_moment_nm, level.stand_moment_nm, rtol=1e-6)
    assert sweep.upper_beam_axial_front_n[4] == pytest.approx(level.upper_beam_axial_front_n, rel=1e-6)
    # the platform rises a·sin θ: the sweep spans the stroke, centred on level
    assert sweep.platform_rise_m[-1] - sweep.platform_rise_m[0] == pytest.approx(rig.geometry.stroke_m)
    assert sweep.beam_angle_deg[-1] == pytest.approx(level.beam_swing_deg)


def test_sweep_refuses_a_frame_rig():
    with pytest.raises(SweepError, match="parallel-linkage"):
        sweep_handle(load_rig(BOUGH), [60])


def test_cli_sweep_writes_csv_and_a_png(tmp_path):
    result = CliRunner().invoke(main, ["rig", "sweep", str(ORCHARD), "--riders", "58,64",
                                       "--out", str(tmp_path / "out"), "--points", "21"])
    assert result.exit_code == 0, result.output
    assert "Caution:" in result.output
    with open(tmp_path / "out" / "orchard-lift-handle.csv", newline="") as handle:
        rows = list(csv.DictReader(handle))
    assert len(rows) == 21 and float(rows[0]["operator_force_n"]) == pytest.approx(
        solve_rig(load_rig(ORCHARD), [58, 64]).operator_force_n, rel=1e-5)
    with open(tmp_path / "out" / "orchard-lift-stroke.csv", newline="") as handle:
        assert len(list(csv.DictReader(handle))) == 21
    png = (tmp_path / "out" / "orchard-lift-sweep.png").read_bytes()
    assert png[:8] == b"\x89PNG\r\n\x1a\n" and len(png) > 50_000


def test_cli_sweep_on_a_frame_rig_is_a_one_line_error(tmp_path):
    result = CliRunner().invoke(main, ["rig", "sweep", str(BOUGH), "--riders", "60", "--out", str(tmp_path)])
    assert result.exit_code == 2
    assert result.output.strip().startswith("Error: ") and "parallel-linkage" in result.output
    assert "Traceback" not in result.output
