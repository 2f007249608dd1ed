"""The parallel-linkage lift: read from a rig file and solved in closed form.

The four pins make a parallelogram, so the front bracket and the rear bar only
translate. Rotating the linkage by a small angle δθ raises every point of the front
bracket by ``a·δθ``, lowers every point of the rear bar by ``b·δθ`` and raises a point
of a beam at ``x`` by ``x·δθ``. Virtual work then gives the operators' pull ``P`` from
``P·k_P = Σ F·k`` with ``k = a`` (platform), ``-b`` (rear bar), ``x`` (beam), and
``k_P = b`` for a handle on the rear bar or ``|handle_x|`` for one on a beam's tail.
This is the principle of the Roberval balance: where on the platform the riders
stand does not change the pull.

The whole linkage is a free body held by the two pivots; their horizontal reactions
form the couple ``M = Σ F·x`` (pull included) that the stand must resist. At the
level position the front bracket's moment ``Σ F·(x - a)`` is carried by the two
beams as a couple, upper beam in tension, lower in compression, ``/h`` each; the same
holds behind the pivots for the rear bar (pull included).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Sequence

from showops.errors import ValidationError
from showops.rig.checks import (Check, PermanentSums, StateResult, check, permanent_sums,
                                reason_for, state_from_parts, tipping_checks)
from showops.rig.fields import TableReader
from showops.rig.kinds import RigKind, register, result_to_dict
from showops.rig.model import (EQU, HANDLE_MOUNTS, MOUNTS, Advisor, Base, Geometry,
                               LinkageRig, Limits, Load, Riders)
from showops.units import STANDARD_GRAVITY
from showops.verdict import Reason, Verdict, verdict_of  # noqa: F401

# --------------------------------------------------------------------------- reading


def read_linkage(top: TableReader, text: str) -> LinkageRig:
    """Build a :class:`LinkageRig` from the rig file's top-level table.

    :raises RigFileError: naming the key, for any missing, unknown or bad field.
    """
    name = top.text("name")
    g = top.sub("geometry")
    a = g.quantity("front_arm", "length", positive=True)
    b = g.quantity("rear_arm", "length", positive=True)
    h = g.quantity("pivot_spacing", "length", positive=True)
    handle_x = g.quantity("handle_x", "length", negative=True)
    handle_on = g.choice("handle_on", HANDLE_MOUNTS, "rear-bar")
    stroke = g.quantity("stroke", "length", positive=True)
    if stroke >= 2 * a:
        raise g.error("stroke", f"a rise of {stroke:g} m needs beams swinging past vertical with a "
                                f"front arm of {a:g} m; the stroke must be less than twice front_arm")
    if math.degrees(math.asin(stroke / (2 * a))) > 60:
        raise g.error("stroke", f"{stroke:g} m swings the beams more than 60 degrees either side of "
                                "level; check the stroke and front_arm")
    g.finish()
    geometry = Geometry(a, b, h, handle_x, handle_on, stroke)

    bt = top.sub("base")
    base = Base(front_x_m=bt.quantity("front_x", "length"),
                rear_x_m=bt.quantity("rear_x", "length"),
                mass_kg=bt.quantity("mass", "mass", positive=True),
                x_m=bt.quantity("x", "length", 0.0))
    if not base.front_x_m > base.rear_x_m:
        raise bt.error("front_x", f"the front caster line ({base.front_x_m:g} m) must be in front of "
                                  f"the rear one ({base.rear_x_m:g} m)")
    bt.finish()

    loads = []
    for lt in top.array("load", required=False):
        load = Load(name=lt.text("name"), mass_kg=lt.quantity("mass", "mass", positive=True),
                    on=lt.choice("on", MOUNTS), x_m=lt.quantity("x", "length"),
                    counterweight=lt.boolean("counterweight", False))
        if load.on == "platform" and not load.x_m > 0:
            raise lt.error("x", f"{load.x_m:g} m puts a platform load behind the pivot line; the platform "
                                "is in front of it (x > 0)")
        if load.on == "rear-bar" and not load.x_m < 0:
            raise lt.error("x", f"{load.x_m:g} m puts a rear-bar load in front of the pivot line; the rear "
                                "bar is behind it (x < 0)")
        lt.finish()
        loads.append(load)

    if not top.has("riders"):
        raise top.error("riders", "missing: give [riders] with x, the riders' combined centre of mass")
    rt = top.sub("riders")
    if not rt.has("x"):
        raise rt.error("x", "missing: the riders' combined centre of mass, in m from the pivot line")
    riders = Riders(x_m=rt.quantity("x", "length"),
                    allowance_kg=rt.quantity("allowance", "mass", 0.0, nonnegative=True))
    if not riders.x_m > 0:
        raise rt.error("x", f"{riders.x_m:g} m puts the riders behind the pivot line; they stand on the "
                            "platform, in front of it (x > 0)")
    rt.finish()

    lt = top.sub("limits")
    tipping = lt.raw("tipping", EQU)
    if isinstance(tipping, str):
        if tipping.strip().upper() != EQU.upper():
            raise lt.error("tipping", f"expected \"{EQU}\" or a factor of safety such as 1.5, got {tipping!r}")
        tipping = EQU
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
    limits = Limits(
        rated_payload_kg=lt.quantity("rated_payload", "mass", positive=True),
        operators=lt.integer("operators"),
        operator_force_per_person_n=lt.quantity("operator_force_per_person", "force", positive=True),
        stand_moment_nm=lt.quantity("stand_moment", "moment", positive=True),
        beam_axial_n=lt.quantity("beam_axial", "force", positive=True),
        brake_holding_n=lt.quantity("brake_holding", "force", positive=True),
        dynamic_factor=dynamic_factor, caution_at=caution_at, tipping=tipping,
        operator_force_source=lt.text("operator_force_source", ""),
    )
    lt.finish()

    at = top.sub("advisor", required=False)
    advisor = Advisor()
    if at is not None:
        advisor = Advisor(plates_kg=at.list_of_quantities("plates", "mass"),
                          handle_min_x_m=at.quantity("handle_min_x", "length", None, negative=True),
                          handle_max_x_m=at.quantity("handle_max_x", "length", None, negative=True),
                          max_operators=at.integer("max_operators", None),
                          handle_step_m=at.quantity("handle_step", "length", None, positive=True))
        if (advisor.handle_min_x_m is not None and advisor.handle_max_x_m is not None
                and advisor.handle_min_x_m > advisor.handle_max_x_m):
            raise at.error("handle_min_x", "must be further back (more negative) than handle_max_x")
        at.finish()
    top.finish()
    return LinkageRig(name=name, geometry=geometry, base=base, loads=tuple(loads), riders=riders,
                      limits=limits, advisor=advisor, text=text, source=top.source)


# --------------------------------------------------------------------------- solving

STATES: tuple[tuple[str, str], ...] = (
    ("boarding", "riders stepping on at the bottom, brake on, nobody pulling"),
    ("lifting", "riders aboard at level, brake off, lifters pulling"),
    ("at height", "riders aboard at the top of the stroke, brake off, lifters holding"),
    ("empty, brake on", "nobody aboard, counterweight hung, brake on, nobody pulling"),
    ("empty, brake off", "nobody aboard, brake off, lifters holding the platform"),
)


@dataclass(frozen=True)
class Force:
    """A vertical force on the lift (positive downwards) and where it is fixed."""

    name: str
    force_n: float
    on: str          # a Mount, "handle" or "base"
    x_m: float       # at the level position
    variable: bool   # riders and operators: a variable action for EN 1990 EQU


@dataclass(frozen=True)
class LinkageResult:
    """Every figure of one solve. Keys of :meth:`to_dict` are the ``rig solve --json`` contract."""

    rig_name: str
    rig_version: str
    gravity: float
    rider_count: int
    rider_mass_kg: float
    dynamic_factor: float
    operators: int
    operator_force_n: float
    operator_force_per_person_n: float
    stand_moment_nm: float
    upper_beam_axial_front_n: float
    upper_beam_axial_rear_n: float
    lower_beam_axial_front_n: float
    lower_beam_axial_rear_n: float
    upper_pivot_horizontal_n: float
    lower_pivot_horizontal_n: float
    pivot_vertical_n: float
    balanced_handle_x_m: float | None
    empty_operator_force_n: float
    brake_force_n: float
    empty_brake_force_n: float
    handle_travel_m: float
    beam_swing_deg: float
    states: tuple[StateResult, ...]
    checks: tuple[Check, ...]
    verdict: Verdict
    reasons: tuple[Reason, ...]
    operator_force_source: str = ""
    notes: tuple[str, ...] = field(default=())

    def to_dict(self) -> dict[str, Any]:
        """Return the JSON-ready result (the documented keys plus a few extra)."""
        return result_to_dict(self)


def rider_weight_n(rig: LinkageRig, rider_masses_kg: Sequence[float], g: float) -> tuple[float, float]:
    """Return (riders' mass with allowance in kg, their design weight in N with the dynamic factor)."""
    masses = validate_riders(rider_masses_kg)
    mass = sum(masses) + rig.riders.allowance_kg * len(masses)
    return mass, mass * g * rig.limits.dynamic_factor


def validate_riders(rider_masses_kg: Sequence[float]) -> list[float]:
    """Return the riders' masses as floats.

    :raises ValidationError: for a mass that is not a positive finite number.
    """
    out = []
    for i, mass in enumerate(rider_masses_kg):
        if isinstance(mass, bool) or not isinstance(mass, (int, float)) or not math.isfinite(mass) or mass <= 0:
            raise ValidationError("riders", f"rider {i + 1}: expected a mass in kg greater than zero, got {mass!r}")
        if mass > 500:
            raise ValidationError("riders", f"rider {i + 1}: {mass:g} kg is not a person's mass (give kg)")
        out.append(float(mass))
    return out


def lever(rig: LinkageRig, on: str, x_m: float) -> float:
    """Return the virtual-work lever ``k`` of a point fixed to ``on`` at ``x_m``."""
    geo = rig.geometry
    if on == "platform":
        return geo.front_arm_m
    if on == "rear-bar":
        return -geo.rear_arm_m
    return x_m  # fixed to a beam


def handle_lever(rig: LinkageRig) -> float:
    """Return the lever of the operators' pull (how far the handle falls per radian)."""
    geo = rig.geometry
    return geo.rear_arm_m if geo.handle_on == "rear-bar" else -geo.handle_x_m


def forces(rig: LinkageRig, rider_n: float, g: float, *, riders: bool = True) -> list[Force]:
    """Return the linkage's vertical loads (riders included unless ``riders`` is false)."""
    out = [Force(load.name, load.mass_kg * g, load.on, load.x_m, False) for load in rig.loads]
    if riders and rider_n > 0:
        out.append(Force("riders", rider_n, "platform", rig.riders.x_m, True))
    return out


def pull_for(rig: LinkageRig, loads: Sequence[Force]) -> float:
    """Return the operators' total pull (positive down) that holds ``loads`` in balance."""
    return sum(f.force_n * lever(rig, f.on, f.x_m) for f in loads) / handle_lever(rig)


def x_at(rig: LinkageRig, on: str, x_m: float, angle_rad: float) -> float:
    """Return the horizontal position at beam angle ``angle_rad`` of a point at ``x_m`` when level.

    The front bracket and rear bar translate (their pins lie on circles of radius
    ``a`` and ``b``); a point on a beam turns with it.
    """
    geo = rig.geometry
    c = math.cos(angle_rad)
    if on == "platform":
        return x_m - geo.front_arm_m * (1 - c)
    if on == "rear-bar" or (on == "handle" and geo.handle_on == "rear-bar"):
        return x_m + geo.rear_arm_m * (1 - c)
    return x_m * c  # on a beam (or a handle on a beam's tail)


def stand_moment(rig: LinkageRig, loads: Sequence[Force], pull_n: float, angle_rad: float = 0.0) -> float:
    """Return ``Σ F·x`` of the loads and the pull at beam angle ``angle_rad`` (N·m)."""
    moment = sum(f.force_n * x_at(rig, f.on, f.x_m, angle_rad) for f in loads)
    return moment + pull_n * x_at(rig, "handle", rig.geometry.handle_x_m, angle_rad)


def beam_swing_rad(rig: LinkageRig) -> float:
    """Return the beams' angle either side of level for the stroke (stroke centred on level)."""
    return math.asin(rig.geometry.stroke_m / (2 * rig.geometry.front_arm_m))


@dataclass(frozen=True)
class LinkageConstants:
    """What a solve needs that does not depend on the riders or on g (masses in kg).

    Computed once per rig (:attr:`LinkageRig.constants`) so the solve for a list of
    riders is a handful of multiplications.
    """

    handle_lever_m: float
    lever_kgm: float             # Σ m·k of the fixed loads (virtual-work levers)
    mass_kg: float               # Σ m of the fixed loads
    moment_kgm: float            # Σ m·x of the fixed loads at level
    platform_couple_kgm: float   # Σ m·(x - a) of the loads on the platform
    rear_couple_kgm: float       # Σ m·(-x - b) of the loads on the rear bar
    swing_rad: float
    rider_x_m: tuple[float, float, float]    # at -swing, level, +swing
    handle_x_m: tuple[float, float, float]
    permanent_kg: tuple[PermanentSums, PermanentSums, PermanentSums]  # loads and base, in kg
    _by_g: dict = field(default_factory=dict, compare=False, repr=False)

    def permanent_n(self, g: float) -> tuple[PermanentSums, PermanentSums, PermanentSums]:
        """Return :attr:`permanent_kg` as weights for gravity ``g`` (cached per g)."""
        sums = self._by_g.get(g)
        if sums is None:
            sums = self._by_g[g] = tuple(p.scaled(g) for p in self.permanent_kg)
        return sums


def linkage_constants(rig: LinkageRig) -> LinkageConstants:
    """Return the rider-independent sums of ``rig`` (see :class:`LinkageConstants`)."""
    geo = rig.geometry
    a, b = geo.front_arm_m, geo.rear_arm_m
    swing = beam_swing_rad(rig)
    angles = (-swing, 0.0, swing)
    base = rig.base
    permanent = tuple(
        permanent_sums([(load.mass_kg, x_at(rig, load.on, load.x_m, angle)) for load in rig.loads]
                       + [(base.mass_kg, base.x_m)], base.front_x_m, base.rear_x_m)
        for angle in angles)
    return LinkageConstants(
        handle_lever_m=handle_lever(rig),
        lever_kgm=sum(load.mass_kg * lever(rig, load.on, load.x_m) for load in rig.loads),
        mass_kg=sum(load.mass_kg for load in rig.loads),
        moment_kgm=sum(load.mass_kg * load.x_m for load in rig.loads),
        platform_couple_kgm=sum(load.mass_kg * (load.x_m - a) for load in rig.loads if load.on == "platform"),
        rear_couple_kgm=sum(load.mass_kg * (-load.x_m - b) for load in rig.loads if load.on == "rear-bar"),
        swing_rad=swing,
        rider_x_m=tuple(x_at(rig, "platform", rig.riders.x_m, angle) for angle in angles),
        handle_x_m=tuple(x_at(rig, "handle", geo.handle_x_m, angle) for angle in angles),
        permanent_kg=permanent,
    )


def solve_linkage(rig: LinkageRig, rider_masses_kg: Sequence[float] = (), g: float = STANDARD_GRAVITY) -> LinkageResult:
    """Solve the lift at the level position for these riders.

    Every figure is linear in the weights, so the solve combines the rig's
    rider-independent sums (:func:`linkage_constants`, computed once per rig) with
    the riders' design weight. The states of the ride put the riders and the pull at
    their positions for the beam angle of each state (bottom, level, top).

    :param rider_masses_kg: each rider's own mass; the file's allowance is added per rider
        and the dynamic factor applied to their weight.
    :param g: gravity in m/s² (standard gravity unless a worked example says otherwise).
    :raises ValidationError: for a rider mass that is not a positive number.
    """
    geo, lim, const = rig.geometry, rig.limits, rig.constants
    a, b, h = geo.front_arm_m, geo.rear_arm_m, geo.pivot_spacing_m
    rider_mass, rider_n = rider_weight_n(rig, rider_masses_kg, g)
    rider_x = rig.riders.x_m
    on_rear_bar = geo.handle_on == "rear-bar"

    # Virtual work: P·k_P = Σ F·k, riders on the platform with k = a.
    lever_empty = const.lever_kgm * g
    lever_loaded = lever_empty + rider_n * a
    pull = lever_loaded / const.handle_lever_m
    pull_empty = lever_empty / const.handle_lever_m
    loads_moment = const.moment_kgm * g + rider_n * rider_x
    moment = loads_moment + pull * geo.handle_x_m

    # Beam couples at level: front bracket, then rear bar (with the pull if it hangs there).
    front = (const.platform_couple_kgm * g + rider_n * (rider_x - a)) / h
    rear = const.rear_couple_kgm * g
    if on_rear_bar:
        rear += pull * (-geo.handle_x_m - b)
    rear /= h
    total_vertical = const.mass_kg * g + rider_n + pull
    # With the pull on a beam, M does not depend on the handle position.
    balanced = -loads_moment / pull if on_rear_bar and pull > 0 else None
    brake = lever_loaded / b
    brake_empty = lever_empty / b

    states = _states(rig, const, rider_n, pull, pull_empty, g)
    axial = {"upper_beam_axial_front_n": front, "upper_beam_axial_rear_n": rear,
             "lower_beam_axial_front_n": -front, "lower_beam_axial_rear_n": -rear}
    checks = _checks(rig, rider_mass, pull, moment, front, rear, brake, brake_empty, states)
    c = lim.caution_at
    reasons = tuple(reason_for(item, c, lim.operator_force_source if item.limit == "operator_force_per_person" else "")
                    for item in checks if item.level != "ok")
    notes = []
    if pull_empty < 0:
        notes.append(f"With nobody aboard the counterweight lifts the platform: the brake must hold "
                     f"{abs(brake_empty):.0f} N and nobody may step on or off with the brake off.")
    if pull < 0:
        notes.append("With these riders the counterweight outweighs them: the lifters hold the "
                     "platform down rather than pull it up.")
    if not on_rear_bar:
        notes.append("The handle is on a beam: moving it changes the pull, not the stand moment.")
    return LinkageResult(
        rig_name=rig.name, rig_version=rig.version, gravity=g, rider_count=len(rider_masses_kg),
        rider_mass_kg=rider_mass, dynamic_factor=lim.dynamic_factor, operators=lim.operators,
        operator_force_n=pull, operator_force_per_person_n=pull / lim.operators,
        stand_moment_nm=moment, **axial,
        upper_pivot_horizontal_n=moment / h, lower_pivot_horizontal_n=-moment / h,
        pivot_vertical_n=total_vertical, balanced_handle_x_m=balanced,
        empty_operator_force_n=pull_empty, brake_force_n=brake, empty_brake_force_n=brake_empty,
        handle_travel_m=geo.stroke_m * const.handle_lever_m / a, beam_swing_deg=math.degrees(const.swing_rad),
        states=states, checks=checks, verdict=verdict_of(reasons), reasons=reasons,
        operator_force_source=lim.operator_force_source, notes=tuple(notes),
    )


# --------------------------------------------------------------------------- stability

def _states(rig: LinkageRig, const: LinkageConstants, rider_n: float, pull: float, pull_empty: float,
            g: float) -> tuple[StateResult, ...]:
    """Return the machine on its casters in each state of :data:`STATES`.

    The riders' weight and the lifters' pull are variable actions (EN 1990): with
    ``EN 1990 EQU`` they get 1.5 where they turn the machine over and no credit where
    they steady it.
    """
    base, tipping = rig.base, rig.limits.tipping
    xf, xr = base.front_x_m, base.rear_x_m
    bottom, level, top = const.permanent_n(g)
    rx, hx = const.rider_x_m, const.handle_x_m
    riders = rider_n > 0
    layouts = (
        (bottom, ((rider_n, rx[0]),) if riders else ()),
        (level, ((rider_n, rx[1]), (pull, hx[1])) if riders else ((pull, hx[1]),)),
        (top, ((rider_n, rx[2]), (pull, hx[2])) if riders else ((pull, hx[2]),)),
        (level, ()),
        (level, ((pull_empty, hx[1]),)),
    )
    return tuple(state_from_parts(name, desc, permanent, variable, xf, xr, tipping)
                 for (name, desc), (permanent, variable) in zip(STATES, layouts))


# --------------------------------------------------------------------------- limits

def _checks(rig, rider_mass, pull, moment, front, rear, brake, brake_empty, states) -> tuple[Check, ...]:
    lim = rig.limits
    c = lim.caution_at
    if abs(front) >= abs(rear):
        axial_label, axial_value = "upper beam axial front", abs(front)
    else:
        axial_label, axial_value = "upper beam axial rear", abs(rear)
    empty_governs = abs(brake_empty) >= abs(brake)
    checks = [
        check("rated_payload", "riders with allowance", rider_mass, lim.rated_payload_kg, "kg", c),
        check("operator_force_per_person", f"pull per lifter ({lim.operators} lifters)",
              abs(pull) / lim.operators, lim.operator_force_per_person_n, "N", c),
        check("stand_moment", "moment on the stand", abs(moment), lim.stand_moment_nm, "N·m", c),
        check("beam_axial", f"largest beam force ({axial_label})", axial_value, lim.beam_axial_n, "N", c),
        check("brake_holding", "force the brake holds" + (" with nobody aboard" if empty_governs else ""),
              abs(brake_empty) if empty_governs else abs(brake), lim.brake_holding_n, "N", c),
    ]
    checks += tipping_checks(states, lim.tipping, c)
    return tuple(checks)


LINKAGE = register(RigKind(
    name="parallel-linkage",
    read=read_linkage,
    solve=solve_linkage,
    summary="a stand with two pivots, two parallel beams, a level platform in front and a rear bar the lifters pull",
))
