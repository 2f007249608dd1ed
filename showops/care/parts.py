"""The equipment register against the rig solver's figures.

Each part names the solver figure it carries (:data:`FIGURES`) and the share of it
on this one part. Its allowed working force is its rated working load limit, and
for a part that carries people the rating is re-derived with the people-carrying
factor: minimum breaking force (rating x design factor) / people factor.

Published machinery rules give working coefficients for lifting accessories used on
goods and say they are "as a general rule doubled" for lifting persons (EU Machinery
Directive 2006/42/EC, Annex I §6.1.1, from memory). So where the rig file sets no
people-carrying factor, the factor required of a people-carrying part is twice the
design factor it was rated at, and its allowed force is half its rating. German stage
practice asks 10:1 for load-bearing ropes and belts over people (DGUV Vorschrift 17
§9, from memory): a rig file that sets ``people_factor = 10`` applies that instead.
"""

from __future__ import annotations

import math
from typing import Any, Mapping

from showops.care.model import Part
from showops.verdict import Reason

#: Machinery Directive 2006/42/EC Annex I §6.1.1: working coefficients "as a general
#: rule doubled" for lifting persons (from memory).
PEOPLE_DOUBLING = 2.0

#: The figures a part can carry, each derived from the rig solver's result.
FIGURES: dict[str, str] = {
    "brake_n": "the force the brake holds, loaded or empty, whichever is larger",
    "pivot_n": "the resultant on one pivot pin (vertical shared evenly by the two pivots)",
    "beam_axial_n": "the largest beam force (beam end pins)",
    "caster_line_n": "the largest floor reaction at one caster line, over every state of the ride",
    "riders_n": "the riders' weight with allowance and dynamic factor",
    "platform_n": "the riders' design weight plus the platform's own weight",
    "counterweight_n": "the counterweight's weight",
}


def part_figures(load: Mapping[str, Any], rig: Any = None) -> dict[str, float]:
    """Return the figures a part can carry, from a solver result's ``to_dict()``.

    :param load: the rig solver's ``to_dict()`` for tonight's riders.
    :param rig: the rig model, for the platform's tare and the counterweight (optional).
    :returns: a dict keyed as :data:`FIGURES`; a figure the result does not give is absent.
    """
    out: dict[str, float] = {}
    g = float(load.get("gravity") or 9.80665)
    if "brake_force_n" in load:
        out["brake_n"] = max(abs(load["brake_force_n"]), abs(load.get("empty_brake_force_n") or 0.0))
    if "pivot_vertical_n" in load and "upper_pivot_horizontal_n" in load:
        # Pin-ended parallel beams of equal section share the vertical evenly (statics of the
        # parallelogram; the frame solver shows the split where sections differ).
        out["pivot_n"] = math.hypot(load["pivot_vertical_n"] / 2, load["upper_pivot_horizontal_n"])
    axial = [abs(load[k]) for k in ("upper_beam_axial_front_n", "upper_beam_axial_rear_n",
                                    "lower_beam_axial_front_n", "lower_beam_axial_rear_n") if k in load]
    if axial:
        out["beam_axial_n"] = max(axial)
    states = load.get("states") or ()
    reactions = [max(abs(s["front_reaction_n"]), abs(s["rear_reaction_n"])) for s in states
                 if "front_reaction_n" in s and "rear_reaction_n" in s]
    if reactions:
        out["caster_line_n"] = max(reactions)
    if "rider_mass_kg" in load:
        out["riders_n"] = load["rider_mass_kg"] * g * float(load.get("dynamic_factor") or 1.0)
    loads = getattr(rig, "loads", None) if rig is not None else None
    if loads:
        # A linkage names where each load is fixed ("platform"); a frame names nodes,
        # so it gives no platform figure.
        if "riders_n" in out and all(hasattr(ld, "on") for ld in loads):
            out["platform_n"] = out["riders_n"] + sum(ld.mass_kg for ld in loads if ld.on == "platform") * g
        out["counterweight_n"] = sum(ld.mass_kg for ld in loads if getattr(ld, "counterweight", False)) * g
    return out


def people_factor_of(rig: Any) -> float | None:
    """Return the rig file's people-carrying factor (``limits.people_factor``), if it sets one."""
    limits = getattr(rig, "limits", None)
    value = getattr(limits, "people_factor", None) if limits is not None else None
    return float(value) if value else None


def allowed_force(part: Part, people_factor: float | None = None) -> tuple[float, str]:
    """Return (allowed working force in N, how it was derived) for a rated part.

    :raises ValueError: for a part with no rating (the register refuses those for
        parts that see a figure, so this is a programming error).
    """
    if part.rating_n is None:
        raise ValueError(f"part {part.name!r} has no rating")
    if not part.carries_people:
        return part.rating_n, f"rated {part.rating_n:,.0f} N"
    factor = part.design_factor or 1.0
    if people_factor:
        allowed = min(part.rating_n, part.rating_n * factor / people_factor)
        how = (f"rated {part.rating_n:,.0f} N at {factor:g}:1, re-rated at the rig's people-carrying "
               f"factor {people_factor:g}:1")
    else:
        allowed = part.rating_n * factor / (PEOPLE_DOUBLING * factor)
        how = (f"rated {part.rating_n:,.0f} N at {factor:g}:1, halved for carrying people "
               "(2006/42/EC Annex I §6.1.1: coefficients doubled for lifting persons)")
    return allowed, how


def check_part(part: Part, figures: Mapping[str, float], *, caution_at: float = 0.8,
               people_factor: float | None = None) -> Reason | None:
    """Return a reason when ``part`` is at or over its allowed force, else None.

    A part that names a figure the solver does not give for this rig is a caution
    (it cannot be checked), never silently passed.
    """
    if part.sees is None or part.rating_n is None or part.retired_on is not None:
        return None
    if part.sees not in figures:
        return Reason(text=f"{part.rig}: {part.name} cannot be checked: the rig's result has no "
                           f"{part.sees.replace('_', ' ')}", level="caution", limit="equipment",
                      fix="name a figure this rig's solver gives: " + ", ".join(sorted(figures)))
    value = abs(figures[part.sees]) * part.share
    allowed, how = allowed_force(part, people_factor)
    usage = value / allowed if allowed > 0 else math.inf
    if usage < caution_at:
        return None
    level = "blocked" if usage > 1.0 + 1e-12 else "caution"
    text = (f"{part.rig}: {part.name} carries {value:,.0f} N, {100 * usage:.0f}% of the {allowed:,.0f} N "
            f"it may carry ({how})")
    fix = (f"fit a {part.kind} rated for at least {value / allowed * part.rating_n:,.0f} N "
           "at the same design factor, or reduce the load" if level == "blocked" else "")
    return Reason(text=text, level=level, limit="equipment", value=value, allowed=allowed, fix=fix)
