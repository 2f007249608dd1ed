"""The closed-form linkage against worked figures from outside this project.

Sources:
- the trade worked example of such a lift (a trade worked example with no
  published source; g = 10 m/s² as it is worked);
- the law of the lever, Archimedes, *On the Equilibrium of Planes*, Book I,
  Propositions 6-7: weights balance at distances inversely proportional to them;
- the Roberval balance: on a parallelogram linkage the load's position on the
  platform does not change the balancing force (common textbook fact);
- standard gravity 9.80665 m/s², 3rd CGPM (1901).
"""

from __future__ import annotations

import math

import pytest

from showops.rig import parse_rig, solve_rig
from showops.rig.linkage import solve_linkage
from showops.units import STANDARD_GRAVITY
from rig_texts import linkage_toml


def test_standard_gravity_is_the_cgpm_value():
    # 3rd CGPM (1901): standard acceleration of gravity 980.665 cm/s².
    assert STANDARD_GRAVITY == 9.80665


class TestTradeWorkedExample:
    """130 kg riders 0.8 m in front of the bracket pins, arms 1.0 m, pivots 0.5 m apart, g = 10.

    Trade worked example, no published source.
    """

    def solve(self, handle_behind_rear_bar, counterweight=0.0):
        loads = [("counterweight", counterweight, "rear-bar", -1.0)] if counterweight else []
        rig = parse_rig(linkage_toml(handle_x=-(1.0 + handle_behind_rear_bar), loads=loads))
        return solve_linkage(rig, [130], g=10.0)

    def test_pull_08_behind_rear_bar_takes_13_kn_with_no_stand_moment(self):
        result = self.solve(0.8)
        assert result.operator_force_n == pytest.approx(1300.0)
        assert result.stand_moment_nm == pytest.approx(0.0, abs=1e-9)

    def test_pull_14_behind_leaves_780_nm(self):
        assert abs(self.solve(1.4).stand_moment_nm) == pytest.approx(780.0)

    def test_50_kg_counterweight_drops_pull_to_800_and_puts_400_nm_on_stand(self):
        result = self.solve(0.8, counterweight=50)
        assert result.operator_force_n == pytest.approx(800.0)
        assert result.stand_moment_nm == pytest.approx(400.0)

    def test_pulling_13_behind_brings_moment_to_zero_with_208_kn_in_beams(self):
        result = self.solve(1.3, counterweight=50)
        assert result.stand_moment_nm == pytest.approx(0.0, abs=1e-9)
        assert result.upper_beam_axial_front_n == pytest.approx(2080.0)
        assert result.upper_beam_axial_rear_n == pytest.approx(2080.0)
        assert result.lower_beam_axial_front_n == pytest.approx(-2080.0)
        # and the balanced handle the solver proposes is that same position
        assert self.solve(0.8, counterweight=50).balanced_handle_x_m == pytest.approx(-2.3)


@pytest.mark.parametrize("rider_x", [1.0, 1.3, 1.8, 2.4])
def test_roberval_rider_position_does_not_change_the_pull(rider_x):
    # Roberval balance (1669): on a parallelogram the load's place on the pan does not matter.
    rig = parse_rig(linkage_toml(rider_x=rider_x))
    assert solve_rig(rig, [80]).operator_force_n == pytest.approx(80 * STANDARD_GRAVITY)


@pytest.mark.parametrize("a,b,mass", [(1.0, 1.0, 60), (1.2, 0.8, 75), (0.9, 1.5, 100)])
def test_law_of_the_lever_on_the_arms(a, b, mass):
    # Archimedes, On the Equilibrium of Planes I.6-7: W·a = P·b.
    rig = parse_rig(linkage_toml(a=a, b=b, handle_x=-b - 0.5, stroke=0.5))
    result = solve_rig(rig, [mass])
    assert result.operator_force_n * b == pytest.approx(mass * STANDARD_GRAVITY * a)


def test_handle_on_a_beam_has_lever_of_its_own_distance():
    # Virtual work: a handle on a beam's tail falls |handle_x|·δθ, not b·δθ.
    rig = parse_rig(linkage_toml(handle_x=-1.8, handle_on="upper-beam"))
    assert solve_rig(rig, [90]).operator_force_n == pytest.approx(90 * STANDARD_GRAVITY * 1.0 / 1.8)


def test_allowance_and_dynamic_factor():
    rig = parse_rig(linkage_toml(allowance=5, dynamic=1.25))
    result = solve_rig(rig, [60, 50])
    assert result.rider_mass_kg == pytest.approx(120.0)
    assert result.operator_force_n == pytest.approx(120 * 1.25 * STANDARD_GRAVITY)


def test_stand_moment_equals_spacing_times_beam_force_difference():
    # Equilibrium of the free linkage: M = h·(T_front - T_rear) when only the platform
    # and rear bar carry loads (derived from the pivots' horizontal couple).
    rig = parse_rig(linkage_toml(h=0.4, handle_x=-2.1, loads=[("cw", 30, "rear-bar", -1.1)]))
    r = solve_rig(rig, [70])
    assert r.stand_moment_nm == pytest.approx(0.4 * (r.upper_beam_axial_front_n - r.upper_beam_axial_rear_n))
    assert r.upper_pivot_horizontal_n == pytest.approx(r.stand_moment_nm / 0.4)


def test_stroke_gives_handle_travel_and_beam_swing():
    rig = parse_rig(linkage_toml(a=1.0, b=1.5, handle_x=-2.0, stroke=1.0))
    r = solve_rig(rig, [50])
    assert r.handle_travel_m == pytest.approx(1.5)
    assert r.beam_swing_deg == pytest.approx(math.degrees(math.asin(0.5)))
