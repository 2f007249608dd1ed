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

from showops.errors import RigFileError, ValidationError
from showops.rig.fields import TableReader
from showops.rig.kinds import RigKind, register
from showops.rig.model import (EQU, HANDLE_MOUNTS, MOUNTS, Advisor, Base, Geometry,
                               LinkageRig, Limits, Load, Riders)
from showops.units import STANDARD_GRAVITY
from showops.verdict import Reason, Verdict, verdict_of

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
        loads.append(Load(name=lt.text("name"), mass_kg=lt.quantity("mass", "mass", positive=True),
                          on=lt.choice("on", MOUNTS), x_m=lt.quantity("x", "length"),
                          counterweight=lt.boolean("counterweight", False)))
        lt.finish()

    if not top.has("riders"):
        raise top.error("riders", "missing: give [riders] with x, the riders' combined centre of mass")
    rt = top.sub("riders")
    if not rt.has("x"):
        raise rt.error("x", "missing: the riders' combined centre of mass, in m from the pivot line")
    riders = Riders(x_m=rt.quantity("x", "length"),
                    allowance_kg=rt.quantity("allowance", "mass", 0.0, nonnegative=True))
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
                          max_operators=at.integer("max_operators", None))
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
class StateResult:
    """The whole machine on its casters in one state of the ride."""

    state: str
    description: str
    front_reaction_n: float
    rear_reaction_n: float
    tipping_margin: float | None   # >= 1 passes; None when nothing can tip it
    tipping_about: str             # "front" or "rear" caster line, the critical one

    def to_dict(self) -> dict[str, Any]:
        return {"state": self.state, "description": self.description,
                "front_reaction_n": self.front_reaction_n, "rear_reaction_n": self.rear_reaction_n,
                "tipping_margin": self.tipping_margin, "tipping_about": self.tipping_about}


@dataclass(frozen=True)
class Check:
    """One limit against its figure: ``usage`` is figure / limit (1.0 = at the limit)."""

    limit: str
    label: str
    value: float
    allowed: float
    unit: str
    usage: float
    level: Verdict

    def to_dict(self) -> dict[str, Any]:
        return dict(self.__dict__)


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
        out: dict[str, Any] = {}
        for name in self.__dataclass_fields__:
            value = getattr(self, name)
            if name in ("states", "checks"):
                value = [item.to_dict() for item in value]
            elif name == "reasons":
                value = [reason.to_dict() for reason in value]
            elif name == "notes":
                value = list(value)
            out[name] = value
        return out


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


def solve_linkage(rig: LinkageRig, rider_masses_kg: Sequence[float] = (), g: float = STANDARD_GRAVITY) -> LinkageResult:
    """Solve the lift at the level position for these riders.

    :param rider_masses_kg: each rider's own mass; the file's allowance is added per rider
        and the dynamic factor applied to their weight.
    :param g: gravity in m/s² (standard gravity unless a worked example says otherwise).
    :raises ValidationError: for a rider mass that is not a positive number.
    """
    geo, lim = rig.geometry, rig.limits
    a, b, h = geo.front_arm_m, geo.rear_arm_m, geo.pivot_spacing_m
    rider_mass, rider_n = rider_weight_n(rig, rider_masses_kg, g)
    loaded = forces(rig, rider_n, g)
    empty = forces(rig, 0.0, g, riders=False)

    pull = pull_for(rig, loaded)
    pull_empty = pull_for(rig, empty)
    moment = stand_moment(rig, loaded, pull)

    # Beam couples at level: front bracket, then rear bar (with the pull if it hangs there).
    front = sum(f.force_n * (f.x_m - a) for f in loaded if f.on == "platform") / h
    rear_items = [(f.force_n, f.x_m) for f in loaded if f.on == "rear-bar"]
    if geo.handle_on == "rear-bar":
        rear_items.append((pull, geo.handle_x_m))
    rear = sum(force * (-x - b) for force, x in rear_items) / h

    # The stand on the linkage: R_upper = -M/h, R_lower = +M/h; reported as the
    # force of the linkage on the stand (positive towards the platform).
    total_vertical = sum(f.force_n for f in loaded) + pull
    if geo.handle_on == "rear-bar":
        balanced = -sum(f.force_n * f.x_m for f in loaded) / pull if pull > 0 else None
    else:
        balanced = None  # with the pull on a beam, M does not depend on the handle position

    brake = sum(f.force_n * lever(rig, f.on, f.x_m) for f in loaded) / b
    brake_empty = sum(f.force_n * lever(rig, f.on, f.x_m) for f in empty) / b
    swing = beam_swing_rad(rig)
    states = _states(rig, loaded, empty, pull, pull_empty, swing, g)

    axial = {"upper_beam_axial_front_n": front, "upper_beam_axial_rear_n": rear,
             "lower_beam_axial_front_n": -front, "lower_beam_axial_rear_n": -rear}
    checks = _checks(rig, rider_mass, pull, moment, axial, brake, brake_empty, states)
    reasons = tuple(_reason(c, rig) for c in checks if c.level != "ok")
    notes = []
    if pull_empty < 0:
        notes.append(f"With nobody aboard the counterweight lifts the platform: the brake must hold "
                     f"{abs(brake_empty):.0f} N and nobody may step on or off with the brake off.")
    if pull < 0:
        notes.append("With these riders the counterweight outweighs them: the lifters hold the "
                     "platform down rather than pull it up.")
    if balanced is None and geo.handle_on != "rear-bar":
        notes.append("The handle is on a beam: moving it changes the pull, not the stand moment.")
    return LinkageResult(
        rig_name=rig.name, rig_version=rig.version, gravity=g, rider_count=len(rider_masses_kg),
        rider_mass_kg=rider_mass, dynamic_factor=lim.dynamic_factor, operators=lim.operators,
        operator_force_n=pull, operator_force_per_person_n=pull / lim.operators,
        stand_moment_nm=moment, **axial,
        upper_pivot_horizontal_n=moment / h, lower_pivot_horizontal_n=-moment / h,
        pivot_vertical_n=total_vertical, balanced_handle_x_m=balanced,
        empty_operator_force_n=pull_empty, brake_force_n=brake, empty_brake_force_n=brake_empty,
        handle_travel_m=geo.stroke_m * handle_lever(rig) / a, beam_swing_deg=math.degrees(swing),
        states=states, checks=checks, verdict=verdict_of(reasons), reasons=reasons,
        operator_force_source=lim.operator_force_source, notes=tuple(notes),
    )


# --------------------------------------------------------------------------- stability

# EN 1990:2002 Annex A1, Table A1.2(A) (EQU): partial factors for static equilibrium.
# Secondary source for the values: common structural-design teaching; checked from memory.
GAMMA_G_DST, GAMMA_G_STB, GAMMA_Q_DST, GAMMA_Q_STB = 1.1, 0.9, 1.5, 0.0


def _states(rig, loaded, empty, pull, pull_empty, swing, g) -> tuple[StateResult, ...]:
    base = Force("base", rig.base.mass_kg * g, "base", rig.base.x_m, False)
    hx = rig.geometry.handle_x_m

    def positioned(items, angle, pull_n):
        out = [(f.force_n, x_at(rig, f.on, f.x_m, angle), f.variable) for f in items]
        if pull_n:
            out.append((pull_n, x_at(rig, "handle", hx, angle), True))
        out.append((base.force_n, base.x_m, False))
        return out

    layouts = {
        "boarding": positioned(loaded, -swing, 0.0),
        "lifting": positioned(loaded, 0.0, pull),
        "at height": positioned(loaded, swing, pull),
        "empty, brake on": positioned(empty, 0.0, 0.0),
        "empty, brake off": positioned(empty, 0.0, pull_empty),
    }
    return tuple(_stability(rig, name, desc, layouts[name]) for name, desc in STATES)


def _stability(rig: LinkageRig, name: str, description: str, items) -> StateResult:
    xf, xr = rig.base.front_x_m, rig.base.rear_x_m
    total = sum(force for force, _, _ in items)
    front = sum(force * (x - xr) for force, x, _ in items) / (xf - xr)
    margins = {"front": _margin(rig, [(force * (x - xf), var) for force, x, var in items]),
               "rear": _margin(rig, [(force * (xr - x), var) for force, x, var in items])}
    critical = min(margins, key=lambda k: math.inf if margins[k] is None else margins[k])
    return StateResult(name, description, front, total - front, margins[critical], critical)


def _margin(rig: LinkageRig, moments: list[tuple[float, bool]]) -> float | None:
    """Return stabilising over destabilising design moment about one caster line, or None."""
    if rig.limits.tipping == EQU:
        dst = sum(m * (GAMMA_Q_DST if var else GAMMA_G_DST) for m, var in moments if m > 0)
        stb = sum(-m * (GAMMA_Q_STB if var else GAMMA_G_STB) for m, var in moments if m < 0)
        factor = 1.0
    else:
        dst = sum(m for m, _ in moments if m > 0)
        stb = sum(-m for m, _ in moments if m < 0)
        factor = float(rig.limits.tipping)
    if dst <= 1e-9:
        return None
    return stb / dst / factor


# --------------------------------------------------------------------------- limits

def _level(usage: float, caution_at: float) -> Verdict:
    if usage > 1.0 + 1e-12:
        return "blocked"
    if usage >= caution_at:
        return "caution"
    return "ok"


def _checks(rig, rider_mass, pull, moment, axial, brake, brake_empty, states) -> tuple[Check, ...]:
    lim = rig.limits
    c = lim.caution_at
    per_person = abs(pull) / lim.operators
    axial_name, axial_value = max(axial.items(), key=lambda kv: abs(kv[1]))
    brake_value = max(abs(brake), abs(brake_empty))
    rows = [
        ("rated_payload", "riders with allowance", rider_mass, lim.rated_payload_kg, "kg"),
        ("operator_force_per_person", f"pull per lifter ({lim.operators} lifters)", per_person,
         lim.operator_force_per_person_n, "N"),
        ("stand_moment", "moment on the stand", abs(moment), lim.stand_moment_nm, "N·m"),
        ("beam_axial", "largest beam force (" + axial_name.replace("_n", "").replace("_", " ") + ")",
         abs(axial_value), lim.beam_axial_n, "N"),
        ("brake_holding", "force the brake holds" + (" with nobody aboard" if abs(brake_empty) >= abs(brake) else ""),
         brake_value, lim.brake_holding_n, "N"),
    ]
    checks = [Check(key, label, value, allowed, unit, value / allowed, _level(value / allowed, c))
              for key, label, value, allowed, unit in rows]
    for state in states:
        if state.tipping_margin is None:
            continue
        usage = 1.0 / state.tipping_margin if state.tipping_margin > 0 else math.inf
        method = "EN 1990 EQU" if lim.tipping == EQU else f"factor {float(lim.tipping):g}"
        checks.append(Check(f"tipping:{state.state}", f"tipping {state.tipping_about}wards, {state.state} ({method})",
                            state.tipping_margin, 1.0, "", usage, _level(usage, c)))
    return tuple(checks)


def _reason(check: Check, rig: LinkageRig) -> Reason:
    if check.limit.startswith("tipping:"):
        text = (f"{check.label}: stability margin {check.value:.2f} "
                + ("is below 1.00, the machine can tip" if check.level == "blocked"
                   else f"is within {1 / rig.limits.caution_at:.2f} of tipping"))
        return Reason(text=text, level=check.level, limit=check.limit, value=check.value, allowed=1.0)
    pct = 100 * check.usage
    diff = check.allowed - check.value
    margin = (f"{-diff:,.0f} {check.unit} over" if diff < 0 else f"{diff:,.0f} {check.unit} to spare")
    text = (f"{check.label} {check.value:,.0f} {check.unit} is {pct:.0f}% of the "
            f"{check.allowed:,.0f} {check.unit} limit ({margin})")
    if check.limit == "operator_force_per_person" and rig.limits.operator_force_source:
        text += f"; limit from {rig.limits.operator_force_source}"
    return Reason(text=text, level=check.level, limit=check.limit, value=check.value, allowed=check.allowed)


LINKAGE = register(RigKind(
    name="parallel-linkage",
    read=read_linkage,
    solve=solve_linkage,
    summary="a stand with two pivots, two parallel beams, a level platform in front and a rear bar the lifters pull",
))
