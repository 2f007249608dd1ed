"""The parallel-linkage lift as a plane frame, at any beam angle.

The closed form (:mod:`showops.rig.linkage`) gives what statics alone gives. This
model gives the rest: how the vertical shear splits between the two beams, the
bending in them, and the forces at any beam angle over the stroke. It also
cross-checks the closed form.

The linkage is a mechanism with one degree of freedom, so the lifters are modelled as
a vertical support at the handle (its reaction is their pull). The layout:

- two beams, each a continuous chain of members through its pivot (a pin support on
  the stand) with a node at every station: the bracket pin (``a``), the rear-bar pin
  (``-b``), the pivot (0), each load fixed to that beam and a handle on it;
- the front bracket, a bar pinned to both beams' front ends (its two halves carry a
  moment release at the pins), with the platform as stiff arms from the bracket's
  middle to each platform load and to the riders;
- the rear bar, pinned the same way to the beams' rear ends, with stiff arms to its
  loads and to a handle on it.

Only vertical loads act, so the height of an arm does not change any force. The
beams get one section (``BEAM_SECTION``, or the rig's own if it ever gives one); the
bracket, rear bar and arms are 100 times stiffer in bending, 10 times in extension,
so they act as the rigid parts they are.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from showops.rig.frame import (FrameModel, FrameSolution, Member, NodeLoad, Support,
                               solve_frame_batch)
from showops.rig.linkage import rider_weight_n
from showops.rig.model import LinkageRig
from showops.units import STANDARD_GRAVITY

#: E (Pa), A (m²), I (m⁴) of each beam: steel, a 120 x 60 x 4 hollow section on edge
#: (invented default; equal beams share the shear evenly whatever the section).
BEAM_SECTION = (210e9, 13.6e-4, 249e-8)
STIFF_AXIAL, STIFF_BENDING = 10.0, 100.0
_TOL = 1e-9


@dataclass(frozen=True)
class LinkageFrame:
    """The frame model of a lift and how to place its nodes at a beam angle.

    :ivar model: the frame at level (node coordinates of the level position).
    :ivar kinds: per node, how it moves with the beam angle: ``("beam", x, y0)`` for a
        point on a beam (``x`` its level station, ``y0`` the beam's pivot height),
        ``("front", x, y)`` for a point rigid with the front bracket,
        ``("rear", x, y)`` for one rigid with the rear bar, ``("fixed", x, y)``.
    :ivar handle: index of the handle node (its vertical reaction is the pull).
    :ivar upper_front / upper_rear / lower_front / lower_rear: the beam members
        next to each pivot, in front of it and behind it.
    :ivar upper_bracket / lower_bracket: the beam members that end at the bracket pins.
    """

    model: FrameModel
    kinds: tuple[tuple[str, float, float], ...]
    handle: int
    upper_pivot: int
    lower_pivot: int
    upper_front: int
    upper_rear: int
    lower_front: int
    lower_rear: int
    upper_bracket: int
    lower_bracket: int
    beam_members: tuple[int, ...]
    front_arm_m: float
    rear_arm_m: float
    pivot_spacing_m: float

    def coords_at(self, angles_rad: np.ndarray) -> np.ndarray:
        """Return node positions ``(len(angles), nodes, 2)`` at each beam angle (front up +)."""
        angles = np.atleast_1d(np.asarray(angles_rad, dtype=float))
        c, s = np.cos(angles)[:, None], np.sin(angles)[:, None]
        a, b = self.front_arm_m, self.rear_arm_m
        kinds = np.array([k for k, _, _ in self.kinds])
        xs = np.array([x for _, x, _ in self.kinds])[None, :]
        ys = np.array([y for _, _, y in self.kinds])[None, :]
        beam, front, rear = kinds == "beam", kinds == "front", kinds == "rear"
        x = np.where(beam, xs * c, xs)
        y = np.where(beam, ys + xs * s, ys)
        # the bracket and rear bar translate with their pins: by (a cos - a, a sin), (-b cos + b, -b sin)
        x = np.where(front, xs + a * (c - 1), x)
        y = np.where(front, ys + a * s, y)
        x = np.where(rear, xs - b * (c - 1), x)
        y = np.where(rear, ys - b * s, y)
        return np.stack([x, y], axis=-1)


def build_linkage_frame(rig: LinkageRig, rider_n: float, g: float = STANDARD_GRAVITY,
                        *, beam_section: tuple[float, float, float] = BEAM_SECTION) -> LinkageFrame:
    """Return the frame model of ``rig`` with the riders' design weight ``rider_n`` (N)."""
    geo = rig.geometry
    a, b, h = geo.front_arm_m, geo.rear_arm_m, geo.pivot_spacing_m
    e, area, inertia = beam_section
    stiff = (e, area * STIFF_AXIAL, inertia * STIFF_BENDING)
    names: list[str] = []
    kinds: list[tuple[str, float, float]] = []
    loads: dict[int, float] = {}

    def node(name: str, kind: str, x: float, y: float) -> int:
        names.append(name)
        kinds.append((kind, x, y))
        return len(names) - 1

    def add_load(index: int, force_n: float) -> None:
        loads[index] = loads.get(index, 0.0) + force_n

    members: list[Member] = []

    def member(name: str, i: int, j: int, section, release_start=False, release_end=False) -> int:
        members.append(Member(name, i, j, *section, release_start=release_start, release_end=release_end))
        return len(members) - 1

    # Beams: stations along each, a chain of members through the pivot.
    beam_nodes: dict[str, dict[float, int]] = {}
    for beam_name, y0 in (("upper", h), ("lower", 0.0)):
        stations = {-b, 0.0, a}
        stations |= {ld.x_m for ld in rig.loads if ld.on == f"{beam_name}-beam"}
        if geo.handle_on == f"{beam_name}-beam":
            stations.add(geo.handle_x_m)
        ordered = _dedupe(sorted(stations))
        beam_nodes[beam_name] = {x: node(f"{beam_name} beam at {x:g}", "beam", x, y0) for x in ordered}
    chain: dict[str, list[int]] = {}
    for beam_name, stations in beam_nodes.items():
        xs = sorted(stations)
        chain[beam_name] = [member(f"{beam_name} beam {x0:g} to {x1:g}", stations[x0], stations[x1], beam_section)
                            for x0, x1 in zip(xs, xs[1:])]

    def station(beam_name: str, x: float) -> int:
        for sx, index in beam_nodes[beam_name].items():
            if abs(sx - x) <= _TOL:
                return index
        raise KeyError(x)

    # Front bracket and rear bar: bars pinned to both beams, each a pair of halves
    # meeting at a middle node that carries the platform (or the rear bar's loads).
    bracket_mid = node("front bracket", "front", a, h / 2)
    member("bracket upper half", station("upper", a), bracket_mid, stiff, release_start=True)
    member("bracket lower half", bracket_mid, station("lower", a), stiff, release_end=True)
    rear_mid = node("rear bar", "rear", -b, h / 2)
    member("rear bar upper half", station("upper", -b), rear_mid, stiff, release_start=True)
    member("rear bar lower half", rear_mid, station("lower", -b), stiff, release_end=True)

    # The platform and the rear bar's arms: one continuous stiff chain each way from the
    # middle node through every station where a load (or the handle) sits.
    front_x = [ld.x_m for ld in rig.loads if ld.on == "platform"] + ([rig.riders.x_m] if rider_n else [])
    rear_x = [ld.x_m for ld in rig.loads if ld.on == "rear-bar"]
    if geo.handle_on == "rear-bar":
        rear_x.append(geo.handle_x_m)
    arm_nodes = {"front": _arm_chain(a, h / 2, bracket_mid, "front", front_x, node, member, stiff),
                 "rear": _arm_chain(-b, h / 2, rear_mid, "rear", rear_x, node, member, stiff)}

    def arm(side: str, x: float) -> int:
        for ax, index in arm_nodes[side]:
            if abs(ax - x) <= _TOL:
                return index
        raise KeyError(x)

    for ld in rig.loads:
        weight = ld.mass_kg * g
        if ld.on == "platform":
            add_load(arm("front", ld.x_m), weight)
        elif ld.on == "rear-bar":
            add_load(arm("rear", ld.x_m), weight)
        else:
            add_load(station(ld.on.split("-")[0], ld.x_m), weight)
    if rider_n:
        add_load(arm("front", rig.riders.x_m), rider_n)
    if geo.handle_on == "rear-bar":
        handle = arm("rear", geo.handle_x_m)
    else:
        handle = station(geo.handle_on.split("-")[0], geo.handle_x_m)

    upper_pivot, lower_pivot = station("upper", 0.0), station("lower", 0.0)
    supports = (Support(upper_pivot, True, True, False), Support(lower_pivot, True, True, False),
                Support(handle, False, True, False))
    model = FrameModel(tuple(names), tuple((x, y) for _, x, y in kinds), tuple(members), supports,
                       tuple(NodeLoad(i, 0.0, -f) for i, f in sorted(loads.items())))

    def next_to(beam_name: str, node_index: int, ahead: bool) -> int:
        for mi in chain[beam_name]:
            mb = members[mi]
            if (mb.start if ahead else mb.end) == node_index:
                return mi
        raise KeyError(node_index)

    upper_a, lower_a = station("upper", a), station("lower", a)
    return LinkageFrame(
        model=model, kinds=tuple(kinds), handle=handle, upper_pivot=upper_pivot, lower_pivot=lower_pivot,
        upper_front=next_to("upper", upper_pivot, True), upper_rear=next_to("upper", upper_pivot, False),
        lower_front=next_to("lower", lower_pivot, True), lower_rear=next_to("lower", lower_pivot, False),
        upper_bracket=next_to("upper", upper_a, False), lower_bracket=next_to("lower", lower_a, False),
        beam_members=tuple(chain["upper"] + chain["lower"]),
        front_arm_m=a, rear_arm_m=b, pivot_spacing_m=h)


def _arm_chain(anchor_x: float, anchor_y: float, anchor: int, side: str, xs: Sequence[float], node, member,
               stiff) -> list[tuple[float, int]]:
    """Build a stiff chain from ``anchor`` outwards (both ways) through the stations ``xs``.

    :returns: ``(x, node index)`` for the anchor and every station.
    """
    out = [(anchor_x, anchor)]
    ahead = _dedupe(sorted(x for x in xs if x > anchor_x + _TOL))
    behind = _dedupe(sorted((x for x in xs if x < anchor_x - _TOL), reverse=True))
    for stations in (ahead, behind):
        previous = anchor
        for x in stations:
            index = node(f"{side} arm at {x:g}", side, x, anchor_y)
            member(f"{side} arm to {x:g}", previous, index, stiff)
            out.append((x, index))
            previous = index
    return out


def _dedupe(values: Sequence[float]) -> list[float]:
    out: list[float] = []
    for v in values:
        if not out or abs(v - out[-1]) > _TOL:
            out.append(v)
    return out


@dataclass(frozen=True)
class LinkageFrameResult:
    """The lift solved as a frame at each of a set of beam angles (arrays, one per angle).

    Forces in N, moments in N·m; signs as in :class:`~showops.rig.linkage.LinkageResult`:
    pull positive down, stand moment positive towards the platform, axial tension positive.
    The shear shares are the upper beam's part of the vertical force the bracket (or rear
    bar) passes to the beams.
    """

    angles_rad: np.ndarray
    operator_force_n: np.ndarray
    stand_moment_nm: np.ndarray
    upper_pivot_horizontal_n: np.ndarray
    lower_pivot_horizontal_n: np.ndarray
    pivot_vertical_n: np.ndarray
    upper_beam_axial_front_n: np.ndarray
    upper_beam_axial_rear_n: np.ndarray
    lower_beam_axial_front_n: np.ndarray
    lower_beam_axial_rear_n: np.ndarray
    upper_shear_share_front: np.ndarray
    beam_moment_max_nm: np.ndarray
    solution: FrameSolution


def solve_linkage_frame(rig: LinkageRig, rider_masses_kg: Sequence[float] = (), g: float = STANDARD_GRAVITY,
                        angles_rad: Sequence[float] | np.ndarray = (0.0,),
                        frame: LinkageFrame | None = None) -> LinkageFrameResult:
    """Solve the lift as a frame at each beam angle in one batched solve.

    :param angles_rad: beam angles, front up positive; 0 is level.
    :param frame: a frame already built for these riders (sweeps reuse it).
    :raises ValidationError: for a rider mass that is not a positive number.
    """
    if frame is None:
        _, rider_n = rider_weight_n(rig, rider_masses_kg, g)
        frame = build_linkage_frame(rig, rider_n, g)
    angles = np.atleast_1d(np.asarray(angles_rad, dtype=float))
    sol = solve_frame_batch(frame.model, frame.coords_at(angles))
    h = frame.pivot_spacing_m
    r = sol.reactions
    upper_h = -r[:, frame.upper_pivot, 0]      # force of the linkage on the stand, towards the platform
    lower_h = -r[:, frame.lower_pivot, 0]
    ef = sol.end_forces
    # member axes run from lower station to higher: tension = -N1 (start end force)
    upper_front_axial = -ef[:, frame.upper_front, 0]
    upper_rear_axial = -ef[:, frame.upper_rear, 0]
    lower_front_axial = -ef[:, frame.lower_front, 0]
    lower_rear_axial = -ef[:, frame.lower_rear, 0]
    # vertical shear each beam takes at the bracket pin (end force of the member ending there)
    shear_u = _vertical_end_force(sol, frame.upper_bracket)
    shear_l = _vertical_end_force(sol, frame.lower_bracket)
    total = shear_u + shear_l
    share = np.divide(shear_u, total, out=np.full_like(total, np.nan), where=np.abs(total) > 1e-9)
    moment_max = _end_moment_max(sol, frame.beam_members)
    return LinkageFrameResult(
        angles_rad=angles, operator_force_n=-r[:, frame.handle, 1], stand_moment_nm=upper_h * h,
        upper_pivot_horizontal_n=upper_h, lower_pivot_horizontal_n=lower_h,
        pivot_vertical_n=r[:, frame.upper_pivot, 1] + r[:, frame.lower_pivot, 1],
        upper_beam_axial_front_n=upper_front_axial, upper_beam_axial_rear_n=upper_rear_axial,
        lower_beam_axial_front_n=lower_front_axial, lower_beam_axial_rear_n=lower_rear_axial,
        upper_shear_share_front=share, beam_moment_max_nm=moment_max, solution=sol)


def _vertical_end_force(sol: FrameSolution, member: int) -> np.ndarray:
    """Return the global vertical force the end node puts on a member's end (N, up +)."""
    n2, v2 = sol.end_forces[:, member, 3], sol.end_forces[:, member, 4]
    c, s = sol.cosines[:, member], sol.sines[:, member]
    return n2 * s + v2 * c


def _end_moment_max(sol: FrameSolution, members: Sequence[int]) -> np.ndarray:
    """Largest |end moment| over the beam members.

    The beams carry loads only at their nodes, so the moment along each member is
    linear and its largest value is at an end.
    """
    ends = np.abs(sol.end_forces[:, members][:, :, [2, 5]])
    return ends.reshape(ends.shape[0], -1).max(axis=1)


def beam_swing_angles(rig: LinkageRig, count: int) -> np.ndarray:
    """Return ``count`` beam angles evenly over the stroke (stroke centred on level)."""
    swing = math.asin(rig.geometry.stroke_m / (2 * rig.geometry.front_arm_m))
    return np.linspace(-swing, swing, count)
