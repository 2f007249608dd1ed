"""The lift modelled in the frame solver, against the closed form and reference libraries.

Sources:
- the closed form (virtual work and the beam couples, showops.rig.linkage), itself
  checked against the trade worked example and the law of the lever in test_linkage.py;
- PyNiteFEA, a general-purpose frame analysis library, on the same models: every
  reaction, displacement, member axial force and end moment to 1e-6 relative;
- anaStruct 1.7.0 for the statically determinate figures only (pull, stand moment,
  horizontal pin forces, level beam axial forces): its 1.7.0 release changes which end
  of an element a hinge goes to with the order elements are added, and makes a member
  pinned at one end too stiff (about 25 % low deflection there), so its shear split
  and bending are not trusted;
- the check of the formulas in the project's domain notes (DOMAIN.md §2: a = b = 1.2,
  h = 0.4, rider 100 kg at 2.0, tare 20 kg at 1.7, counterweight 40 kg, handle -2.0),
  worked by hand there; here also reproduced by PyNite and anaStruct.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from rig_references import solve_with_anastruct, solve_with_pynite
from rig_texts import linkage_toml
from showops.rig import parse_rig
from showops.rig.frame import solve_frame_batch
from showops.rig.linkage import forces, rider_weight_n, solve_linkage, stand_moment
from showops.rig.linkage_frame import beam_swing_angles, build_linkage_frame, solve_linkage_frame
from showops.units import STANDARD_GRAVITY as G

CLOSED_FORM_KEYS = ("operator_force_n", "stand_moment_nm", "upper_beam_axial_front_n", "upper_beam_axial_rear_n",
                    "lower_beam_axial_front_n", "lower_beam_axial_rear_n", "upper_pivot_horizontal_n",
                    "lower_pivot_horizontal_n", "pivot_vertical_n")


def rig_text(*, a=1.2, b=1.2, h=0.4, handle_x=-2.0, handle_on="rear-bar", rider_x=2.0, loads=(),
             stroke=0.8):
    return linkage_toml(name="frame test lift", a=a, b=b, h=h, handle_x=handle_x, handle_on=handle_on,
                        rider_x=rider_x, loads=loads, stroke=stroke, rated=300, beam_axial=9000)


DOMAIN_EXAMPLE = rig_text(loads=[("platform tare", 20, "platform", 1.7), ("counterweight", 40, "rear-bar", -1.2)])


def random_rig(seed: int) -> str:
    """A seeded random lift (invented figures): arms, spacing, loads on every mount."""
    rng = np.random.default_rng(seed)
    a, b = rng.uniform(0.6, 1.6), rng.uniform(0.6, 1.8)
    handle_on = ("rear-bar", "upper-beam", "lower-beam")[seed % 3]
    handle_x = -b - rng.uniform(0.0, 0.8) if handle_on == "rear-bar" else -rng.uniform(0.3, b + 0.6)
    loads = [("tare", rng.uniform(5, 40), "platform", a + rng.uniform(0.0, 0.6)),
             ("cw", rng.uniform(5, 80), "rear-bar", -b - rng.uniform(0.0, 0.7)),
             ("upper beam", rng.uniform(3, 20), "upper-beam", rng.uniform(-b, a)),
             ("lower beam", rng.uniform(3, 20), "lower-beam", rng.uniform(-b, a))]
    return rig_text(a=round(a, 3), b=round(b, 3), h=round(rng.uniform(0.25, 0.7), 3),
                    handle_x=round(handle_x, 3), handle_on=handle_on,
                    rider_x=round(a + rng.uniform(0.1, 0.9), 3), loads=loads, stroke=round(a * 0.8, 3))


class TestDomainCheckExample:
    """DOMAIN.md §2's check of the formulas, worked by hand there (g = 9.80665)."""

    def setup_method(self):
        self.rig = parse_rig(DOMAIN_EXAMPLE)

    def test_closed_form(self):
        r = solve_linkage(self.rig, [100])
        assert r.operator_force_n == pytest.approx(784.5, abs=0.05)
        assert r.stand_moment_nm == pytest.approx(255.0, abs=0.05)
        assert r.upper_beam_axial_front_n == pytest.approx(2206.5, abs=0.05)
        assert r.upper_beam_axial_rear_n == pytest.approx(1569.1, abs=0.05)
        assert r.balanced_handle_x_m == pytest.approx(-2.325, abs=0.0005)
        assert r.empty_operator_force_n == pytest.approx(-196.1, abs=0.05)

    def test_frame_solver(self):
        f = solve_linkage_frame(self.rig, [100])
        assert f.operator_force_n[0] == pytest.approx(784.5, abs=0.05)
        assert f.stand_moment_nm[0] == pytest.approx(255.0, abs=0.05)
        assert f.upper_beam_axial_front_n[0] == pytest.approx(2206.5, abs=0.05)
        assert f.upper_beam_axial_rear_n[0] == pytest.approx(1569.1, abs=0.05)
        empty = solve_linkage_frame(self.rig, [])
        assert empty.operator_force_n[0] == pytest.approx(-196.1, abs=0.05)

    def _frame(self, riders=(100,)):
        _, rider_n = rider_weight_n(self.rig, riders, G)
        return build_linkage_frame(self.rig, rider_n, G)

    def test_pynite(self):
        frame = self._frame()
        reactions, _, axial, _ = solve_with_pynite(frame.model)
        assert -reactions[frame.handle, 1] == pytest.approx(784.5, abs=0.05)
        assert -reactions[frame.upper_pivot, 0] * 0.4 == pytest.approx(255.0, abs=0.05)
        assert axial[frame.upper_front, 0] == pytest.approx(2206.5, abs=0.05)
        assert axial[frame.upper_rear, 1] == pytest.approx(1569.1, abs=0.05)
        frame_empty = self._frame(())
        reactions, _, _, _ = solve_with_pynite(frame_empty.model)
        assert -reactions[frame_empty.handle, 1] == pytest.approx(-196.1, abs=0.05)

    def test_anastruct_determinate_figures(self):
        frame = self._frame()
        reactions, axial = solve_with_anastruct(frame.model)
        assert -reactions[frame.handle, 1] == pytest.approx(784.5, abs=0.05)
        assert -reactions[frame.upper_pivot, 0] * 0.4 == pytest.approx(255.0, abs=0.05)
        assert axial[frame.upper_front] == pytest.approx(2206.5, abs=0.05)
        assert axial[frame.upper_rear] == pytest.approx(1569.1, abs=0.05)


@pytest.mark.parametrize("seed", range(9))
def test_frame_reproduces_the_closed_form_at_level(seed):
    rig = parse_rig(random_rig(seed))
    closed = solve_linkage(rig, [70, 55])
    frame = solve_linkage_frame(rig, [70, 55])
    for key in CLOSED_FORM_KEYS:
        assert getattr(frame, key)[0] == pytest.approx(getattr(closed, key), rel=1e-6, abs=1e-6), key


@pytest.mark.parametrize("seed", range(6))
def test_pull_and_stand_moment_hold_over_the_stroke(seed):
    # Virtual work at angle θ scales every lever by cos θ, so the pull does not change;
    # the stand moment at θ is Σ F·x(θ) with each point where the closed form puts it.
    rig = parse_rig(random_rig(seed))
    closed = solve_linkage(rig, [80])
    angles = beam_swing_angles(rig, 7)
    frame = solve_linkage_frame(rig, [80], angles_rad=angles)
    np.testing.assert_allclose(frame.operator_force_n, closed.operator_force_n, rtol=1e-6)
    _, rider_n = rider_weight_n(rig, [80], G)
    loads = forces(rig, rider_n, G)
    expected = [stand_moment(rig, loads, closed.operator_force_n, angle) for angle in angles]
    np.testing.assert_allclose(frame.stand_moment_nm, expected, rtol=1e-6, atol=1e-6)


@pytest.mark.parametrize("seed", range(4))
@pytest.mark.parametrize("angle_deg", [0.0, -17.0, 23.0])
def test_frame_matches_pynite_everywhere(seed, angle_deg):
    rig = parse_rig(random_rig(seed))
    _, rider_n = rider_weight_n(rig, [65], G)
    frame = build_linkage_frame(rig, rider_n, G)
    coords = frame.coords_at([math.radians(angle_deg)])
    ours = solve_frame_batch(frame.model, coords)
    reactions, displacements, axial, moment = solve_with_pynite(frame.model, coords[0])
    ef = ours.end_forces[0]
    scale_f = np.abs(reactions).max()
    np.testing.assert_allclose(ours.reactions[0], reactions, rtol=1e-6, atol=1e-6 * scale_f)
    np.testing.assert_allclose(ours.displacements[0], displacements, rtol=1e-6,
                               atol=1e-6 * np.abs(displacements).max())
    np.testing.assert_allclose(np.stack([-ef[:, 0], ef[:, 3]], 1), axial, rtol=1e-6, atol=1e-6 * scale_f)
    np.testing.assert_allclose(np.stack([-ef[:, 2], ef[:, 5]], 1), moment, rtol=1e-6,
                               atol=1e-6 * np.abs(moment).max())


@pytest.mark.parametrize("seed", range(4))
def test_anastruct_agrees_on_the_determinate_figures(seed):
    rig = parse_rig(random_rig(seed))
    closed = solve_linkage(rig, [75])
    _, rider_n = rider_weight_n(rig, [75], G)
    frame = build_linkage_frame(rig, rider_n, G)
    reactions, axial = solve_with_anastruct(frame.model)
    assert -reactions[frame.handle, 1] == pytest.approx(closed.operator_force_n, rel=1e-6)
    assert -reactions[frame.upper_pivot, 0] == pytest.approx(closed.upper_pivot_horizontal_n, rel=1e-6, abs=1e-6)
    assert -reactions[frame.lower_pivot, 0] == pytest.approx(closed.lower_pivot_horizontal_n, rel=1e-6, abs=1e-6)
    assert axial[frame.upper_front] == pytest.approx(closed.upper_beam_axial_front_n, rel=1e-6, abs=1e-6)
    assert axial[frame.upper_rear] == pytest.approx(closed.upper_beam_axial_rear_n, rel=1e-6, abs=1e-6)
    assert axial[frame.lower_front] == pytest.approx(closed.lower_beam_axial_front_n, rel=1e-6, abs=1e-6)


def test_equal_beams_share_the_shear_evenly_at_level():
    # DOMAIN.md §2: for pin-ended parallel beams of equal section the split is even at
    # level; PyNite gives the same split.
    rig = parse_rig(DOMAIN_EXAMPLE)
    result = solve_linkage_frame(rig, [100])
    assert result.upper_shear_share_front[0] == pytest.approx(0.5, rel=1e-6)
    _, rider_n = rider_weight_n(rig, [100], G)
    frame = build_linkage_frame(rig, rider_n, G)
    _, _, _, moment = solve_with_pynite(frame.model)
    # equal shear means equal bending at the pivots in the two beams
    assert moment[frame.upper_front, 0] == pytest.approx(moment[frame.lower_front, 0], rel=1e-6)


def test_bending_at_the_pivot_is_the_shear_times_the_front_arm():
    # Each beam is a lever between the bracket pin and the pivot: its moment at the pivot
    # is the vertical force it takes at the pin times a (statics of one member).
    rig = parse_rig(DOMAIN_EXAMPLE)
    result = solve_linkage_frame(rig, [100])
    total_front = (100 + 20) * G
    assert result.beam_moment_max_nm[0] == pytest.approx(max(
        0.5 * total_front * 1.2, 0.5 * (result.operator_force_n[0] + 40 * G) * 1.2), rel=1e-6)


@pytest.mark.parametrize("seed", range(3))
def test_batched_sweep_equals_solving_each_angle_alone(seed):
    # The batch path condenses the bracket and arms out once (their stiffness does not
    # change as the beams swing); it must give what a solve of each geometry gives.
    rig = parse_rig(random_rig(seed))
    _, rider_n = rider_weight_n(rig, [60], G)
    frame = build_linkage_frame(rig, rider_n, G)
    angles = beam_swing_angles(rig, 5)
    coords = frame.coords_at(angles)
    batch = solve_frame_batch(frame.model, coords)
    for b in range(len(angles)):
        one = solve_frame_batch(frame.model, coords[b:b + 1])
        scale = np.abs(one.reactions).max()
        np.testing.assert_allclose(batch.reactions[b], one.reactions[0], rtol=1e-9, atol=1e-9 * scale)
        np.testing.assert_allclose(batch.end_forces[b], one.end_forces[0], rtol=1e-9, atol=1e-9 * scale)
        np.testing.assert_allclose(batch.displacements[b], one.displacements[0], rtol=1e-9,
                                   atol=1e-9 * np.abs(one.displacements).max())
