"""The frame solver against handbook closed forms for single members.

Sources (each check names its case):
- Roark's Formulas for Stress and Strain, 7th ed. (Young and Budynas, 2002), Table 8.1
  "Shear, moment, slope and deflection formulas for elastic straight beams": the
  cantilever with an end load, the simply supported beam with a uniform load and
  with a point load, the propped cantilever and the fixed-ended beam. Case numbers
  are not quoted because they were not checked against the edition; the formulas
  are the standard ones found in any such table (from memory).
- A pin-jointed member carries no bending: a two-force member (any statics text).
"""

from __future__ import annotations

import numpy as np
import pytest

from showops.rig.frame import (FrameModel, FrameModelError, Member, NodeLoad, PointLoad,
                               Support, UniformLoad, solve_frame, solve_frame_batch)

E, A, I = 210e9, 13.6e-4, 249e-8   # steel, a 120 x 60 x 4 hollow section (invented test data)
FIXED = (True, True, True)
PIN = (True, True, False)
ROLLER = (False, True, False)


def beam(length, start_support, end_support, *, n_inner=0, **loads):
    """A horizontal beam split into ``n_inner + 1`` members."""
    xs = np.linspace(0.0, length, n_inner + 2)
    names = tuple(f"n{i}" for i in range(len(xs)))
    members = tuple(Member(f"m{i}", i, i + 1, E, A, I) for i in range(len(xs) - 1))
    supports = []
    if start_support:
        supports.append(Support(0, *start_support))
    if end_support:
        supports.append(Support(len(xs) - 1, *end_support))
    return FrameModel(names, tuple((float(x), 0.0) for x in xs), members, tuple(supports), **loads)


@pytest.mark.parametrize("length,load", [(1.0, 500.0), (2.4, 1200.0), (3.0, 80.0)])
def test_cantilever_end_load(length, load):
    # Roark 7th ed. Table 8.1, cantilever, concentrated end load: y = -P L^3 / (3 E I),
    # slope -P L^2 / (2 E I), fixed-end moment P L.
    r = solve_frame(beam(length, FIXED, None, node_loads=(NodeLoad(1, 0, -load),)))
    assert r.displacements[0, 1, 1] == pytest.approx(-load * length ** 3 / (3 * E * I), rel=1e-9)
    assert r.displacements[0, 1, 2] == pytest.approx(-load * length ** 2 / (2 * E * I), rel=1e-9)
    assert r.reactions[0, 0, 1] == pytest.approx(load)
    assert r.reactions[0, 0, 2] == pytest.approx(load * length)      # anticlockwise on the beam
    _, shear, moment = r.internal_forces(0, [0.0, length / 2])
    assert moment == pytest.approx([-load * length, -load * length / 2])   # hogging


@pytest.mark.parametrize("length,w", [(4.0, 500.0), (2.0, 1500.0)])
def test_simply_supported_uniform_load(length, w):
    # Roark 7th ed. Table 8.1, simply supported, uniform load: M_max = w L^2 / 8 at
    # midspan, y_max = -5 w L^4 / (384 E I), reactions w L / 2.
    model = beam(length, PIN, ROLLER, n_inner=1,
                 uniform_loads=(UniformLoad(0, 0, -w), UniformLoad(1, 0, -w)))
    r = solve_frame(model)
    assert r.displacements[0, 1, 1] == pytest.approx(-5 * w * length ** 4 / (384 * E * I), rel=1e-9)
    assert r.reactions[0, 0, 1] == pytest.approx(w * length / 2)
    assert r.member_extremes(0)["moment_nm"] == pytest.approx(w * length ** 2 / 8)
    _, _, moment = r.internal_forces(0, length / 4)
    assert moment[0] == pytest.approx(w * (length / 4) * (length - length / 4) / 2)  # w x (L - x) / 2


@pytest.mark.parametrize("a_frac", [0.25, 0.5, 0.8])
def test_simply_supported_point_load_on_member(a_frac):
    # Roark 7th ed. Table 8.1, simply supported, intermediate load: R1 = P b / L,
    # M under the load = P a b / L, y under the load = -P a^2 b^2 / (3 E I L).
    length, load = 3.0, 900.0
    a, b = a_frac * length, (1 - a_frac) * length
    r = solve_frame(beam(length, PIN, ROLLER, point_loads=(PointLoad(0, a, 0, -load),)))
    assert r.reactions[0, 0, 1] == pytest.approx(load * b / length)
    _, _, moment = r.internal_forces(0, a)
    assert moment[0] == pytest.approx(load * a * b / length)
    # deflection under the load from a second model with a node there
    model = FrameModel(("s", "p", "e"), ((0, 0), (a, 0), (length, 0)),
                       (Member("m1", 0, 1, E, A, I), Member("m2", 1, 2, E, A, I)),
                       (Support(0, *PIN), Support(2, *ROLLER)), node_loads=(NodeLoad(1, 0, -load),))
    y = solve_frame(model).displacements[0, 1, 1]
    assert y == pytest.approx(-load * a ** 2 * b ** 2 / (3 * E * I * length), rel=1e-9)


def test_propped_cantilever_uniform_load():
    # Roark 7th ed. Table 8.1, fixed at one end, supported at the other, uniform load:
    # prop reaction 3 w L / 8, fixed-end moment w L^2 / 8.
    length, w = 3.0, 700.0
    r = solve_frame(beam(length, FIXED, ROLLER, uniform_loads=(UniformLoad(0, 0, -w),)))
    assert r.reactions[0, 1, 1] == pytest.approx(3 * w * length / 8)
    assert r.reactions[0, 0, 2] == pytest.approx(w * length ** 2 / 8)


def test_fixed_ended_beam_centre_load():
    # Roark 7th ed. Table 8.1, both ends fixed, centre load: end moments P L / 8,
    # centre moment P L / 8, centre deflection -P L^3 / (192 E I).
    length, load = 2.0, 1000.0
    r = solve_frame(beam(length, FIXED, FIXED, n_inner=1, node_loads=(NodeLoad(1, 0, -load),)))
    assert r.reactions[0, 0, 2] == pytest.approx(load * length / 8)
    assert r.displacements[0, 1, 1] == pytest.approx(-load * length ** 3 / (192 * E * I), rel=1e-9)
    _, _, moment = r.internal_forces(0, length / 2)
    assert moment[0] == pytest.approx(load * length / 8)


def test_axial_bar_extension():
    # Hooke's law for a bar: delta = N L / (E A).
    r = solve_frame(beam(2.0, FIXED, None, node_loads=(NodeLoad(1, 5000.0, 0),)))
    assert r.displacements[0, 1, 0] == pytest.approx(5000.0 * 2.0 / (E * A), rel=1e-9)
    assert r.member_extremes(0)["tension_n"] == pytest.approx(5000.0)


def test_pinned_ends_carry_no_moment():
    # A member pinned at both ends and loaded only there is a two-force member.
    model = FrameModel(("a", "b", "c"), ((0, 0), (2, 0), (1, 1.5)),
                       (Member("ab", 0, 1, E, A, I, True, True), Member("bc", 1, 2, E, A, I, True, True),
                        Member("ca", 2, 0, E, A, I, True, True)),
                       (Support(0, *PIN), Support(1, *ROLLER)), node_loads=(NodeLoad(2, 0, -1000.0),))
    r = solve_frame(model)
    for i in range(3):
        assert r.member_extremes(i)["moment_nm"] == pytest.approx(0.0, abs=1e-9)
    # symmetric truss: each support takes half; each rafter carries (P/2)/sin(angle)
    assert r.reactions[0, 0, 1] == pytest.approx(500.0)
    sin = 1.5 / np.hypot(1.0, 1.5)
    assert r.member_extremes(1)["compression_n"] == pytest.approx(500.0 / sin)


def test_a_mechanism_is_refused_naming_a_node():
    model = beam(2.0, PIN, None, node_loads=(NodeLoad(1, 0, -100.0),))
    model = FrameModel(model.node_names, model.coords_m,
                       (Member("m0", 0, 1, E, A, I, True, False),), model.supports, model.node_loads)
    with pytest.raises(FrameModelError, match="mechanism: node 'n1'"):
        solve_frame(model)


def test_batch_matches_single_solves():
    rng = np.random.default_rng(7)
    model = beam(3.0, PIN, ROLLER, n_inner=2, node_loads=(NodeLoad(1, 0, -400.0),),
                 uniform_loads=(UniformLoad(2, 0, -200.0),))
    base = np.asarray(model.coords_m)
    coords = np.stack([base + rng.normal(0, 0.05, base.shape) for _ in range(5)])
    batch = solve_frame_batch(model, coords)
    for b in range(5):
        single = solve_frame(FrameModel(model.node_names, tuple(map(tuple, coords[b])), model.members,
                                        model.supports, model.node_loads, (), model.uniform_loads))
        np.testing.assert_allclose(batch.reactions[b], single.reactions[0], rtol=1e-9, atol=1e-6)
        np.testing.assert_allclose(batch.end_forces[b], single.end_forces[0], rtol=1e-9, atol=1e-6)
