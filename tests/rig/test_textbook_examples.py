"""Published statics worked examples of frames and levers, solved by the frame solver.

- R. C. Hibbeler, *Engineering Mechanics: Statics*, §6.6 "Frames and Machines", the
  section's first worked example: a frame of a two-force strut AB (3 m, at 60° to the
  horizontal) pinned to a horizontal member BC (4 m) that carries 2000 N at its middle
  and is pinned to the wall at C. Answers: the pin at C exerts Cx = 577 N and
  Cy = 1000 N on BC. Example number from memory (6.14 in the 12th and 13th editions),
  not checked against a copy; the figures were checked against a published
  restatement of the problem.
- OpenStax, *College Physics* (2012), Chapter 9, Example 9.1 "She Saw Torques On A
  Seesaw": children of 26.0 kg at 1.60 m and 32.0 kg balance on a seesaw of negligible
  mass; the second sits 1.30 m from the pivot, which pushes up with 568 N (g = 9.80).
  Checked against a published restatement of the example.
- The same book, Chapter 9, Problem 5 (Problems & Exercises): Example 9.1 again with a
  12.0 kg seesaw whose centre of mass is 0.160 m from the pivot on the lighter child's
  side. Published answers: 1.36 m and 686 N.

A lever needs the balancing force modelled as a support (as the lifters are on a
rig): a vertical support where the second child sits carries exactly the weight that
balances the lever there, so "child 2 balances at r2" reads "the support at r2 takes
child 2's weight".
"""

from __future__ import annotations

import math

import pytest

from showops.rig.frame import (FrameModel, Member, NodeLoad, PointLoad, Support, solve_frame)

E, A, I = 200e9, 1e-3, 1e-5   # any stiffness: these structures are statically determinate
PIN = dict(ux=True, uy=True, rz=False)
VERTICAL = dict(ux=False, uy=True, rz=False)


def test_hibbeler_frame_pin_forces_at_c():
    ab, bc, load = 3.0, 4.0, 2000.0
    b = (0.0, 0.0)
    c = (bc, 0.0)
    a = (ab * math.cos(math.radians(60)), -ab * math.sin(math.radians(60)))
    model = FrameModel(
        ("A", "B", "C"), (a, b, c),
        (Member("AB", 0, 1, E, A, I, release_start=True, release_end=True),   # two-force member
         Member("BC", 1, 2, E, A, I)),
        (Support(0, **PIN), Support(2, **PIN)),
        point_loads=(PointLoad(1, bc / 2, 0.0, -load),))
    r = solve_frame(model)
    cx, cy = r.reactions[0, 2, 0], r.reactions[0, 2, 1]
    assert abs(cx) == pytest.approx(577, rel=1e-3)     # Hibbeler: Cx = 577 N
    assert cy == pytest.approx(1000, rel=1e-3)         # Hibbeler: Cy = 1000 N
    # and AB carries only axial force: F_AB = 1000 / sin 60 = 1155 N in compression
    assert r.member_extremes(0)["compression_n"] == pytest.approx(1000 / math.sin(math.radians(60)), rel=1e-9)
    assert r.member_extremes(0)["moment_nm"] == pytest.approx(0.0, abs=1e-6)


def seesaw(r2: float, *, board_kg: float = 0.0, board_x: float = 0.0):
    g = 9.80   # the book works with g = 9.80 m/s²
    names = ("child 1", "board", "pivot", "child 2")
    coords = ((-1.60, 0.0), (board_x, 0.0), (0.0, 0.0), (r2, 0.0))
    if board_x == 0.0:
        names, coords = ("child 1", "pivot", "child 2"), ((-1.60, 0.0), (0.0, 0.0), (r2, 0.0))
    members = tuple(Member(f"m{i}", i, i + 1, E, A, I) for i in range(len(names) - 1))
    pivot = names.index("pivot")
    loads = [NodeLoad(0, 0.0, -26.0 * g)]
    if board_kg:
        loads.append(NodeLoad(names.index("board") if board_x else pivot, 0.0, -board_kg * g))
    model = FrameModel(names, coords, members,
                       (Support(pivot, **PIN), Support(len(names) - 1, **VERTICAL)), tuple(loads))
    r = solve_frame(model)
    # the support at r2 pulls the board down as child 2's weight would: that weight is
    # minus its reaction; the pivot's reaction is the force it pushes up with
    return -r.reactions[0, len(names) - 1, 1], r.reactions[0, pivot, 1]


def test_openstax_example_9_1_seesaw():
    child2, pivot = seesaw(1.30)
    assert child2 == pytest.approx(32.0 * 9.80, rel=1e-9)   # child 2 (32.0 kg) balances at 1.30 m
    assert pivot == pytest.approx(568, rel=1e-3)            # F_p = 568 N


def test_openstax_chapter_9_problem_5_seesaw_with_its_own_mass():
    child2, pivot = seesaw(1.36, board_kg=12.0, board_x=-0.160)
    assert child2 == pytest.approx(32.0 * 9.80, rel=1e-9)   # child 2 balances at 1.36 m
    assert pivot == pytest.approx(686, rel=1e-3)            # F_p = 686 N


@pytest.mark.parametrize("r2", [1.0, 1.2, 1.5])
def test_archimedes_law_of_the_lever(r2):
    # Archimedes, On the Equilibrium of Planes I.6-7: weights balance at distances
    # inversely proportional to them.
    child2, _ = seesaw(r2)
    assert child2 * r2 == pytest.approx(26.0 * 9.80 * 1.60, rel=1e-9)
