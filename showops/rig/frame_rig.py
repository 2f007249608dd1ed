"""``kind = "frame"``: any hand-worked machine described as a plane frame.

The rig file lists nodes (with supports), sections, members (with pinned ends and
self-weight), weights at nodes or along members, where the riders' weight goes, and
which node the lifters hold: that node has a vertical support, and its reaction is
the lifters' force (positive = they pull down). The brake, when on, holds the
machine at the same point, so the force it holds is the same reaction with nobody
pulling. An optional ``[base]`` gives caster lines for the tipping check, as for the
parallel-linkage lift.

The solve runs the frame twice (riders aboard with their design weight, and empty)
with :mod:`showops.rig.frame`, then checks every limit the file gives.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Literal, Sequence

from showops.errors import RigFileError
from showops.rig.checks import (EQU, Check, StateResult, check, reason_for, stability,
                                tipping_checks)
from showops.rig.fields import TableReader
from showops.rig.frame import (FrameModel, FrameModelError, Member, PointLoad, Support,
                               UniformLoad, NodeLoad, solve_frame)
from showops.rig.kinds import RigKind, register, result_to_dict
from showops.rig.linkage import validate_riders
from showops.rig.model import Advisor, Base, RigFile
from showops.units import STANDARD_GRAVITY, format_quantity
from showops.verdict import Reason, Verdict, verdict_of

SupportKind = Literal["fixed", "pin", "vertical", "horizontal"]
#: What each support holds: horizontal, vertical, rotation.
SUPPORTS: dict[str, tuple[bool, bool, bool]] = {
    "fixed": (True, True, True),
    "pin": (True, True, False),
    "vertical": (False, True, False),     # a vertical force only (rests on a level surface)
    "horizontal": (True, False, False),   # a horizontal force only
}
PINS = ("from", "to", "both")


@dataclass(frozen=True)
class FrameNode:
    name: str
    x_m: float
    y_m: float
    support: str | None


@dataclass(frozen=True)
class Section:
    name: str
    e_pa: float
    area_m2: float
    inertia_m4: float


@dataclass(frozen=True)
class FrameMember:
    name: str
    start: str
    end: str
    section: str
    pin: str | None
    mass_per_length_kg_m: float


@dataclass(frozen=True)
class Place:
    """A point of the frame: a node, or a distance along a member from its ``from`` node."""

    node: str | None = None
    member: str | None = None
    at_m: float = 0.0

    def describe(self) -> str:
        return f"node {self.node}" if self.node else f"member {self.member}, {self.at_m:g} m from its start"


@dataclass(frozen=True)
class FrameLoad:
    name: str
    mass_kg: float
    place: Place
    counterweight: bool = False


@dataclass(frozen=True)
class FrameLimits:
    rated_payload_kg: float
    operators: int
    operator_force_per_person_n: float
    brake_holding_n: float
    dynamic_factor: float
    caution_at: float
    tipping: str | float
    operator_force_source: str = ""
    member_axial_n: float | None = None
    member_moment_nm: float | None = None
    support_moment_nm: float | None = None
    max_riders: int | None = None


@dataclass(frozen=True)
class FrameRig(RigFile):
    """A machine of ``kind = "frame"`` read from a rig file (SI units)."""

    name: str
    nodes: tuple[FrameNode, ...]
    sections: tuple[Section, ...]
    members: tuple[FrameMember, ...]
    loads: tuple[FrameLoad, ...]
    riders: Place
    rider_allowance_kg: float
    operators_node: str
    limits: FrameLimits
    base: Base | None = None
    advisor: Advisor = field(default_factory=Advisor)
    text: str = ""
    source: str = "<rig>"
    kind: str = "frame"


# --------------------------------------------------------------------------- reading

def read_frame(top: TableReader, text: str) -> FrameRig:
    """Build a :class:`FrameRig` from the rig file's top-level table.

    :raises RigFileError: naming the key, for any missing, unknown or bad field, a
        reference to a node, section or member that does not exist, or a frame that
        cannot be solved (a mechanism).
    """
    name = top.text("name")
    nodes: list[FrameNode] = []
    for nt in top.array("node"):
        node = FrameNode(nt.text("name"), nt.quantity("x", "length"), nt.quantity("y", "length"),
                         nt.choice("support", tuple(SUPPORTS), None) if nt.has("support") else None)
        if any(other.name == node.name for other in nodes):
            raise nt.error("name", f"a second node called {node.name!r}; node names must differ")
        if any(math.hypot(other.x_m - node.x_m, other.y_m - node.y_m) < 1e-6 for other in nodes):
            raise nt.error("x", f"node {node.name!r} is at the same place as another node")
        nt.finish()
        nodes.append(node)
    if len(nodes) < 2:
        raise top.error("node", "a frame needs at least two [[node]] tables")
    node_names = {n.name for n in nodes}

    sections: list[Section] = []
    for st in top.array("section"):
        section = Section(st.text("name"), st.quantity("E", "pressure", positive=True),
                          st.quantity("A", "area", positive=True),
                          st.quantity("I", "second_moment", positive=True))
        if any(other.name == section.name for other in sections):
            raise st.error("name", f"a second section called {section.name!r}")
        st.finish()
        sections.append(section)
    section_names = {s.name for s in sections}

    members: list[FrameMember] = []
    for mt in top.array("member"):
        member = FrameMember(
            name=mt.text("name"), start=_ref(mt, "from", node_names, "node"),
            end=_ref(mt, "to", node_names, "node"), section=_ref(mt, "section", section_names, "section"),
            pin=mt.choice("pin", PINS, None) if mt.has("pin") else None,
            mass_per_length_kg_m=mt.quantity("mass_per_length", "linear_mass", 0.0, nonnegative=True))
        if member.start == member.end:
            raise mt.error("to", f"member {member.name!r} starts and ends at node {member.start!r}")
        if any(other.name == member.name for other in members):
            raise mt.error("name", f"a second member called {member.name!r}")
        mt.finish()
        members.append(member)
    lengths = {m.name: _length(nodes, m) for m in members}

    loads = []
    for lt in top.array("load", required=False):
        loads.append(FrameLoad(lt.text("name"), lt.quantity("mass", "mass", positive=True),
                               _place(lt, node_names, lengths), lt.boolean("counterweight", False)))
        lt.finish()

    if not top.has("riders"):
        raise top.error("riders", "missing: give [riders] with node (or member and at), where the riders sit")
    rt = top.sub("riders")
    if not (rt.has("node") or rt.has("member")):
        raise rt.error("node", "missing: the riders' position, as node = \"...\" or member = \"...\" and at = <m>")
    riders = _place(rt, node_names, lengths)
    allowance = rt.quantity("allowance", "mass", 0.0, nonnegative=True)
    rt.finish()

    ot = top.sub("operators")
    operators_node = _ref(ot, "node", node_names, "node")
    ot.finish()
    op = next(n for n in nodes if n.name == operators_node)
    if op.support != "vertical":
        raise ot.error("node", f"node {operators_node!r} is where the lifters hold the machine: give it "
                               f"support = \"vertical\" (its reaction is their force), not {op.support!r}")

    base = None
    bt = top.sub("base", required=False)
    if bt is not None:
        base = Base(front_x_m=bt.quantity("front_x", "length"), rear_x_m=bt.quantity("rear_x", "length"),
                    mass_kg=bt.quantity("mass", "mass", positive=True), x_m=bt.quantity("x", "length", 0.0))
        if not base.front_x_m > base.rear_x_m:
            raise bt.error("front_x", f"the front caster line ({base.front_x_m:g} m) must be in front of "
                                      f"the rear one ({base.rear_x_m:g} m)")
        bt.finish()

    limits = _read_limits(top.sub("limits"), base is not None)
    advisor = Advisor()
    at = top.sub("advisor", required=False)
    if at is not None:
        advisor = Advisor(plates_kg=at.list_of_quantities("plates", "mass"),
                          max_operators=at.integer("max_operators", None))
        at.finish()
    top.finish()
    rig = FrameRig(name=name, nodes=tuple(nodes), sections=tuple(sections), members=tuple(members),
                   loads=tuple(loads), riders=riders, rider_allowance_kg=allowance,
                   operators_node=operators_node, limits=limits, base=base, advisor=advisor, text=text,
                   source=top.source)
    try:  # refuse a frame that cannot be solved now, naming the file, not at the cue
        solve_frame(build_model(rig, rider_n=1.0, g=STANDARD_GRAVITY))
    except FrameModelError as exc:
        raise RigFileError(top.source, "member", str(exc)) from None
    return rig


def _read_limits(lt: TableReader, has_base: bool) -> FrameLimits:
    tipping: str | float = EQU
    if lt.has("tipping"):
        if not has_base:
            raise lt.error("tipping", "needs a [base] table (caster lines) to check tipping against")
        raw = lt.raw("tipping")
        if isinstance(raw, str):
            if raw.strip().upper() != EQU.upper():
                raise lt.error("tipping", f"expected \"{EQU}\" or a factor of safety such as 1.5, got {raw!r}")
        else:
            tipping = lt.quantity("tipping", "dimensionless")
            if tipping < 1:
                raise lt.error("tipping", f"a factor of safety must be at least 1, got {tipping:g}")
    caution_at = lt.quantity("caution_at", "dimensionless", 0.8, positive=True)
    if caution_at > 1:
        raise lt.error("caution_at", f"a fraction of a limit between 0 and 1, got {caution_at:g}")
    dynamic_factor = lt.quantity("dynamic_factor", "dimensionless", 1.0)
    if dynamic_factor < 1:
        raise lt.error("dynamic_factor", f"must be at least 1 (it multiplies the riders' weight), got {dynamic_factor:g}")
    limits = FrameLimits(
        rated_payload_kg=lt.quantity("rated_payload", "mass", positive=True),
        operators=lt.integer("operators"),
        operator_force_per_person_n=lt.quantity("operator_force_per_person", "force", positive=True),
        brake_holding_n=lt.quantity("brake_holding", "force", positive=True),
        dynamic_factor=dynamic_factor, caution_at=caution_at, tipping=tipping,
        operator_force_source=lt.text("operator_force_source", ""),
        member_axial_n=lt.quantity("member_axial", "force", None, positive=True),
        member_moment_nm=lt.quantity("member_moment", "moment", None, positive=True),
        support_moment_nm=lt.quantity("support_moment", "moment", None, positive=True),
        max_riders=lt.integer("max_riders", None),
    )
    lt.finish()
    return limits


def _ref(table: TableReader, key: str, names: set[str], what: str) -> str:
    value = table.text(key)
    if value not in names:
        known = ", ".join(sorted(names)) or "none"
        raise table.error(key, f"no {what} called {value!r} (known: {known})")
    return value


def _length(nodes: Sequence[FrameNode], member: FrameMember) -> float:
    a = next(n for n in nodes if n.name == member.start)
    b = next(n for n in nodes if n.name == member.end)
    return math.hypot(b.x_m - a.x_m, b.y_m - a.y_m)


def _place(table: TableReader, node_names: set[str], lengths: dict[str, float]) -> Place:
    if table.has("node"):
        if table.has("member") or table.has("at"):
            raise table.error("node", "give either node, or member and at, not both")
        return Place(node=_ref(table, "node", node_names, "node"))
    if not table.has("member"):
        raise table.error("node", "missing: where this weight goes, as node = \"...\" or member = \"...\" and at = <m>")
    member = _ref(table, "member", set(lengths), "member")
    at = table.quantity("at", "length", nonnegative=True)
    if at > lengths[member] + 1e-9:
        raise table.error("at", f"{at:g} m is beyond the end of member {member!r} ({lengths[member]:.3f} m long)")
    return Place(member=member, at_m=at)


# --------------------------------------------------------------------------- model

def build_model(rig: FrameRig, rider_n: float, g: float, *, with_fixed_loads: bool = True) -> FrameModel:
    """Return the :class:`FrameModel` of ``rig`` with the riders' design weight ``rider_n``."""
    index = {n.name: i for i, n in enumerate(rig.nodes)}
    mindex = {m.name: i for i, m in enumerate(rig.members)}
    sections = {s.name: s for s in rig.sections}
    members = []
    for m in rig.members:
        sec = sections[m.section]
        members.append(Member(m.name, index[m.start], index[m.end], sec.e_pa, sec.area_m2, sec.inertia_m4,
                              release_start=m.pin in ("from", "both"), release_end=m.pin in ("to", "both")))
    supports = tuple(Support(index[n.name], *SUPPORTS[n.support]) for n in rig.nodes if n.support)
    node_loads, point_loads = [], []
    uniform = []
    weights = [(load.place, load.mass_kg * g) for load in rig.loads] if with_fixed_loads else []
    if rider_n:
        weights.append((rig.riders, rider_n))
    for place, weight in weights:
        if place.node:
            node_loads.append(NodeLoad(index[place.node], 0.0, -weight))
        else:
            point_loads.append(PointLoad(mindex[place.member], place.at_m, 0.0, -weight))
    if with_fixed_loads:
        for i, m in enumerate(rig.members):
            if m.mass_per_length_kg_m:
                uniform.append(UniformLoad(i, 0.0, -m.mass_per_length_kg_m * g))
    return FrameModel(tuple(n.name for n in rig.nodes), tuple((n.x_m, n.y_m) for n in rig.nodes),
                      tuple(members), supports, tuple(node_loads), tuple(point_loads), tuple(uniform))


def place_x(rig: FrameRig, place: Place) -> float:
    """Return the horizontal position of a point of the frame (m)."""
    nodes = {n.name: n for n in rig.nodes}
    if place.node:
        return nodes[place.node].x_m
    m = next(mb for mb in rig.members if mb.name == place.member)
    a, b = nodes[m.start], nodes[m.end]
    length = math.hypot(b.x_m - a.x_m, b.y_m - a.y_m)
    return a.x_m + (b.x_m - a.x_m) * place.at_m / length


def weights_with_x(rig: FrameRig, g: float) -> list[tuple[str, float, float, bool]]:
    """Return ``(name, weight_n, x_m, counterweight)`` for every fixed weight (loads and members)."""
    nodes = {n.name: n for n in rig.nodes}
    out = [(load.name, load.mass_kg * g, place_x(rig, load.place), load.counterweight) for load in rig.loads]
    for m in rig.members:
        if m.mass_per_length_kg_m:
            a, b = nodes[m.start], nodes[m.end]
            length = math.hypot(b.x_m - a.x_m, b.y_m - a.y_m)
            out.append((f"{m.name} (self-weight)", m.mass_per_length_kg_m * length * g,
                        (a.x_m + b.x_m) / 2, False))
    return out


# --------------------------------------------------------------------------- solving

FRAME_STATES: tuple[tuple[str, str], ...] = (
    ("boarding", "riders aboard, brake on, nobody pulling"),
    ("lifting", "riders aboard, brake off, lifters holding"),
    ("empty, brake on", "nobody aboard, brake on, nobody pulling"),
    ("empty, brake off", "nobody aboard, brake off, lifters holding"),
)


@dataclass(frozen=True)
class MemberForces:
    """The largest forces along one member with the riders aboard."""

    name: str
    tension_n: float
    compression_n: float
    shear_n: float
    moment_nm: float

    def to_dict(self) -> dict[str, Any]:
        return {"name": self.name, "tension_n": self.tension_n, "compression_n": self.compression_n,
                "shear_n": self.shear_n, "moment_nm": self.moment_nm}


@dataclass(frozen=True)
class SupportReaction:
    """The force of a support on the frame (x towards the front, y up; moment anticlockwise)."""

    node: str
    support: str
    horizontal_n: float
    vertical_n: float
    moment_nm: float

    def to_dict(self) -> dict[str, Any]:
        return {"node": self.node, "support": self.support, "horizontal_n": self.horizontal_n,
                "vertical_n": self.vertical_n, "moment_nm": self.moment_nm}


@dataclass(frozen=True)
class FrameResult:
    """Every figure of one solve of a frame rig (the ``rig solve --json`` keys)."""

    rig_name: str
    rig_version: str
    kind: str
    gravity: float
    rider_count: int
    rider_mass_kg: float
    dynamic_factor: float
    operators: int
    operator_force_n: float
    operator_force_per_person_n: float
    empty_operator_force_n: float
    brake_force_n: float
    empty_brake_force_n: float
    supports: tuple[SupportReaction, ...]
    members: tuple[MemberForces, ...]
    states: tuple[StateResult, ...]
    checks: tuple[Check, ...]
    verdict: Verdict
    reasons: tuple[Reason, ...]
    operator_force_source: str = ""
    notes: tuple[str, ...] = field(default=())

    def to_dict(self) -> dict[str, Any]:
        """Return the JSON-ready result."""
        return result_to_dict(self)

    def render_text(self, imperial: bool = False) -> str:
        """Return the figures as text for ``showops rig solve``."""
        def f(value, dim="force"):
            return format_quantity(value, dim, imperial=imperial)

        lines = [
            f"{self.rig_name}  (frame rig, version {self.rig_version[:12]})",
            f"Riders: {self.rider_count}, {format_quantity(self.rider_mass_kg, 'mass', imperial=imperial)} "
            f"with allowance; weight x {self.dynamic_factor:g} (dynamic factor) in every figure below",
            "",
            f"  Lifters' force, total          {f(self.operator_force_n):>14}   (positive = pull down)",
            f"  Lifters' force, per lifter     {f(self.operator_force_per_person_n):>14}   ({self.operators} lifters)",
            f"  Force with nobody aboard       {f(self.empty_operator_force_n):>14}   "
            + ("(negative: the empty machine moves by itself when the brake is off)"
               if self.empty_operator_force_n < 0 else ""),
            f"  Brake holds (aboard / empty)   {f(self.brake_force_n):>14} / {f(self.empty_brake_force_n)}",
            "",
            "  Supports (force on the frame)      horizontal       vertical        moment",
        ]
        for s in self.supports:
            lines.append(f"    {s.node + ' (' + s.support + ')':<30} {f(s.horizontal_n):>12} {f(s.vertical_n):>14} "
                         f"{f(s.moment_nm, 'moment'):>13}")
        lines += ["", "  Members (largest along each)       tension    compression        shear       moment"]
        for m in self.members:
            lines.append(f"    {m.name:<30} {f(m.tension_n):>10} {f(m.compression_n):>14} {f(m.shear_n):>12} "
                         f"{f(m.moment_nm, 'moment'):>12}")
        if self.states:
            lines += ["", "  Stability on the casters       front        rear   margin (>= 1 passes)"]
            for s in self.states:
                margin = "cannot tip" if s.tipping_margin is None else f"{s.tipping_margin:.2f} ({s.tipping_about})"
                lines.append(f"    {s.state:<26} {f(s.front_reaction_n):>11} {f(s.rear_reaction_n):>11}   {margin}")
        lines += ["", f"Verdict: {self.verdict.upper()}"]
        lines += [f"  - [{r.level}] {r.text}" for r in self.reasons]
        lines += [f"  * {note}" for note in self.notes]
        return "\n".join(lines)


def solve_frame_rig(rig: FrameRig, rider_masses_kg: Sequence[float] = (), g: float = STANDARD_GRAVITY) -> FrameResult:
    """Solve a frame rig for these riders (kg each, before the allowance).

    :raises ValidationError: for a rider mass that is not a positive number.
    """
    lim = rig.limits
    masses = validate_riders(rider_masses_kg)
    rider_mass = sum(masses) + rig.rider_allowance_kg * len(masses)
    rider_n = rider_mass * g * lim.dynamic_factor
    loaded = solve_frame(build_model(rig, rider_n, g))
    empty = solve_frame(build_model(rig, 0.0, g))
    op_index = next(i for i, n in enumerate(rig.nodes) if n.name == rig.operators_node)
    pull = -float(loaded.reactions[0, op_index, 1])        # the lifters pull down on the frame
    pull_empty = -float(empty.reactions[0, op_index, 1])

    supports = tuple(
        SupportReaction(n.name, n.support, *(float(v) for v in loaded.reactions[0, i]))
        for i, n in enumerate(rig.nodes) if n.support)
    members = []
    for i, m in enumerate(rig.members):
        ext = loaded.member_extremes(i)
        members.append(MemberForces(m.name, ext["tension_n"], ext["compression_n"], ext["shear_n"], ext["moment_nm"]))

    states: tuple[StateResult, ...] = ()
    if rig.base is not None:
        states = _frame_states(rig, rider_n, pull, pull_empty, g)

    c = lim.caution_at
    checks = [
        check("rated_payload", "riders with allowance", rider_mass, lim.rated_payload_kg, "kg", c),
        check("operator_force_per_person", f"force per lifter ({lim.operators} lifters)",
              abs(pull) / lim.operators, lim.operator_force_per_person_n, "N", c),
        check("brake_holding", "force the brake holds" + (" with nobody aboard" if abs(pull_empty) >= abs(pull) else ""),
              max(abs(pull), abs(pull_empty)), lim.brake_holding_n, "N", c),
    ]
    if lim.max_riders is not None:
        # a count: over it is blocked, at it is simply full (no caution)
        checks.append(check("max_riders", "riders aboard", len(masses), lim.max_riders, "riders", math.inf))
    if lim.member_axial_n is not None:
        worst = max(members, key=lambda m: max(m.tension_n, m.compression_n))
        checks.append(check("member_axial", f"largest member axial force ({worst.name})",
                            max(worst.tension_n, worst.compression_n), lim.member_axial_n, "N", c))
    if lim.member_moment_nm is not None:
        worst = max(members, key=lambda m: m.moment_nm)
        checks.append(check("member_moment", f"largest bending moment ({worst.name})",
                            worst.moment_nm, lim.member_moment_nm, "N·m", c))
    if lim.support_moment_nm is not None:
        fixed = [s for s in supports if s.support == "fixed"]
        if fixed:
            worst_s = max(fixed, key=lambda s: abs(s.moment_nm))
            checks.append(check("support_moment", f"moment at the {worst_s.node} support",
                                abs(worst_s.moment_nm), lim.support_moment_nm, "N·m", c))
    checks += tipping_checks(states, lim.tipping, c)
    reasons = tuple(reason_for(item, c, lim.operator_force_source if item.limit == "operator_force_per_person" else "")
                    for item in checks if item.level != "ok")
    notes = []
    if pull_empty < 0:
        notes.append(f"With nobody aboard the counterweight moves the machine: the brake must hold "
                     f"{abs(pull_empty):.0f} N and nobody may get on or off with the brake off.")
    if pull < 0:
        notes.append("With these riders the counterweight outweighs them: the lifters hold the "
                     "machine back rather than pull.")
    return FrameResult(
        rig_name=rig.name, rig_version=rig.version, kind=rig.kind, gravity=g, rider_count=len(masses),
        rider_mass_kg=rider_mass, dynamic_factor=lim.dynamic_factor, operators=lim.operators,
        operator_force_n=pull, operator_force_per_person_n=pull / lim.operators,
        empty_operator_force_n=pull_empty, brake_force_n=pull, empty_brake_force_n=pull_empty,
        supports=supports, members=tuple(members), states=states, checks=tuple(checks),
        verdict=verdict_of(reasons), reasons=reasons, operator_force_source=lim.operator_force_source,
        notes=tuple(notes))


def _frame_states(rig: FrameRig, rider_n: float, pull: float, pull_empty: float, g: float) -> tuple[StateResult, ...]:
    base = rig.base
    fixed = [(w, x, False) for _, w, x, _ in weights_with_x(rig, g)] + [(base.mass_kg * g, base.x_m, False)]
    riders = [(rider_n, place_x(rig, rig.riders), True)] if rider_n else []
    op_x = next(n.x_m for n in rig.nodes if n.name == rig.operators_node)
    layouts = {
        "boarding": fixed + riders,
        "lifting": fixed + riders + [(pull, op_x, True)],
        "empty, brake on": fixed,
        "empty, brake off": fixed + [(pull_empty, op_x, True)],
    }
    return tuple(stability(name, desc, layouts[name], base.front_x_m, base.rear_x_m, rig.limits.tipping)
                 for name, desc in FRAME_STATES)


FRAME = register(RigKind(
    name="frame",
    read=read_frame,
    solve=solve_frame_rig,
    summary="any machine as a plane frame: nodes, members, pins, supports; the lifters hold one vertical support",
))
