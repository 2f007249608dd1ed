"""Limit checks and stability on the floor, shared by every rig kind.

A :class:`Check` is one limit against its figure; :func:`reason_for` turns a check
that is not ``ok`` into a :class:`~showops.verdict.Reason` a crew understands. The
stability of a machine on its caster lines is the same arithmetic for every kind:
vertical forces at horizontal positions, a floor reaction at each caster line, and a
margin against tipping about each line by the method the rig file names.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Iterable, NamedTuple

from showops.verdict import Reason, Verdict

#: The tipping method names a rig file may give (besides a plain factor of safety).
EQU = "EN 1990 EQU"

# EN 1990:2002 Annex A1, Table A1.2(A) (EQU, static equilibrium): 1.1 on destabilising
# and 0.9 on stabilising permanent actions, 1.5 on destabilising variable actions and
# 0 on stabilising ones (a favourable variable action gets no credit). Values as the
# table is commonly quoted in design teaching (secondary source, from memory).
GAMMA_G_DST, GAMMA_G_STB, GAMMA_Q_DST, GAMMA_Q_STB = 1.1, 0.9, 1.5, 0.0


class Check(NamedTuple):
    """One limit against its figure: ``usage`` is figure / limit (1.0 = at the limit).

    A named tuple rather than a frozen dataclass: as immutable, and several times
    cheaper to build, which matters in a solve that builds a dozen of them.
    """

    limit: str
    label: str
    value: float
    allowed: float
    unit: str
    usage: float
    level: Verdict

    def to_dict(self) -> dict[str, Any]:
        return {"limit": self.limit, "label": self.label, "value": self.value,
                "allowed": self.allowed, "unit": self.unit, "usage": self.usage,
                "level": self.level}


def level_for(usage: float, caution_at: float) -> Verdict:
    """Return ``blocked`` above the limit, ``caution`` from ``caution_at`` of it, else ``ok``."""
    if usage > 1.0 + 1e-12:
        return "blocked"
    if usage >= caution_at:
        return "caution"
    return "ok"


def check(limit: str, label: str, value: float, allowed: float, unit: str, caution_at: float) -> Check:
    """Return the :class:`Check` of a magnitude ``value`` against ``allowed``."""
    usage = value / allowed
    level = "blocked" if usage > 1.0 + 1e-12 else "caution" if usage >= caution_at else "ok"
    return Check(limit, label, value, allowed, unit, usage, level)


def reason_for(item: Check, caution_at: float, source_note: str = "") -> Reason:
    """Return the reason a crew reads for a check that is not ``ok``.

    A limit's reason names the figure, the limit and the margin; a tipping check's
    names the stability margin (1.00 is the edge).
    """
    if item.limit.startswith("tipping:"):
        if item.level == "blocked":
            tail = "is below 1.00: the machine can tip"
        else:
            tail = f"is below {1 / caution_at:.2f}, close to tipping (1.00 is the edge)"
        return Reason(text=f"{item.label}: stability margin {item.value:.2f} {tail}",
                      level=item.level, limit=item.limit, value=item.value, allowed=1.0)
    if item.limit == "max_riders":
        return Reason(text=f"{item.value:.0f} riders aboard; this rig takes at most {item.allowed:.0f}",
                      level=item.level, limit=item.limit, value=item.value, allowed=item.allowed)
    diff = item.allowed - item.value
    margin = f"{-diff:,.0f} {item.unit} over" if diff < 0 else f"{diff:,.0f} {item.unit} to spare"
    text = (f"{item.label} {item.value:,.0f} {item.unit} is {100 * item.usage:.0f}% of the "
            f"{item.allowed:,.0f} {item.unit} limit ({margin})")
    if source_note:
        text += f"; limit from {source_note}"
    return Reason(text=text, level=item.level, limit=item.limit, value=item.value, allowed=item.allowed)


# --------------------------------------------------------------------------- stability

class StateResult(NamedTuple):
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
class PermanentSums:
    """The permanent actions of one state about the caster lines, summed once.

    ``moment_rear_nm`` is ``Σ F·(x - rear_x)``; the ``*_dst``/``*_stb`` are the
    destabilising and stabilising moments about the front and rear lines (all >= 0).
    """

    total_n: float
    moment_rear_nm: float
    front_dst: float
    front_stb: float
    rear_dst: float
    rear_stb: float

    def scaled(self, factor: float) -> "PermanentSums":
        """Return the sums for forces ``factor`` times larger (masses to weights)."""
        return PermanentSums(self.total_n * factor, self.moment_rear_nm * factor, self.front_dst * factor,
                             self.front_stb * factor, self.rear_dst * factor, self.rear_stb * factor)


def permanent_sums(items: Iterable[tuple[float, float]], front_x_m: float, rear_x_m: float) -> PermanentSums:
    """Sum permanent vertical forces ``(force_n, x_m)`` about the caster lines."""
    total = moment = f_dst = f_stb = r_dst = r_stb = 0.0
    for force, x in items:
        total += force
        moment += force * (x - rear_x_m)
        about_front = force * (x - front_x_m)   # > 0 turns the machine over the front line
        about_rear = force * (rear_x_m - x)     # > 0 turns it over the rear line
        if about_front > 0:
            f_dst += about_front
        else:
            f_stb -= about_front
        if about_rear > 0:
            r_dst += about_rear
        else:
            r_stb -= about_rear
    return PermanentSums(total, moment, f_dst, f_stb, r_dst, r_stb)


def state_from_parts(name: str, description: str, permanent: PermanentSums,
                     variable: Iterable[tuple[float, float]], front_x_m: float, rear_x_m: float,
                     tipping: str | float) -> StateResult:
    """Return one state's floor reactions and tipping margin.

    :param permanent: the summed permanent actions (self-weight, counterweight, base).
    :param variable: ``(force_n, x_m)`` of each variable action (riders, the lifters'
        pull), positive downwards.
    """
    xf, xr = front_x_m, rear_x_m
    total, moment = permanent.total_n, permanent.moment_rear_nm
    f_dst_q = f_stb_q = r_dst_q = r_stb_q = 0.0
    for force, x in variable:
        total += force
        moment += force * (x - xr)
        about_front = force * (x - xf)
        about_rear = force * (xr - x)
        if about_front > 0:
            f_dst_q += about_front
        else:
            f_stb_q -= about_front
        if about_rear > 0:
            r_dst_q += about_rear
        else:
            r_stb_q -= about_rear
    front = moment / (xf - xr)
    # the margins, written out (this runs five times in every linkage solve): see _margin
    if tipping == EQU:
        f_dst = GAMMA_G_DST * permanent.front_dst + GAMMA_Q_DST * f_dst_q
        f_stb = GAMMA_G_STB * permanent.front_stb + GAMMA_Q_STB * f_stb_q
        r_dst = GAMMA_G_DST * permanent.rear_dst + GAMMA_Q_DST * r_dst_q
        r_stb = GAMMA_G_STB * permanent.rear_stb + GAMMA_Q_STB * r_stb_q
        factor = 1.0
    else:
        f_dst, f_stb = permanent.front_dst + f_dst_q, permanent.front_stb + f_stb_q
        r_dst, r_stb = permanent.rear_dst + r_dst_q, permanent.rear_stb + r_stb_q
        factor = float(tipping)
    m_front = f_stb / f_dst / factor if f_dst > 1e-9 else None
    m_rear = r_stb / r_dst / factor if r_dst > 1e-9 else None
    if m_rear is not None and (m_front is None or m_rear < m_front):
        return StateResult(name, description, front, total - front, m_rear, "rear")
    return StateResult(name, description, front, total - front, m_front, "front")


def stability(name: str, description: str, items: Iterable[tuple[float, float, bool]],
              front_x_m: float, rear_x_m: float, tipping: str | float) -> StateResult:
    """Return the floor reactions and the tipping margin of one state.

    :param items: ``(force_n, x_m, variable)``: each vertical force on the machine
        (positive downwards) at its horizontal position; ``variable`` for riders and
        the lifters' pull (variable actions in EN 1990), false for self-weight and
        counterweight (permanent).
    :param tipping: :data:`EQU` or a plain factor of safety.
    :returns: the reactions at the front and rear caster lines (positive up) and the
        smaller margin of the two lines (``None`` when nothing can tip the machine).
    """
    items = list(items)
    permanent = permanent_sums(((f, x) for f, x, var in items if not var), front_x_m, rear_x_m)
    return state_from_parts(name, description, permanent, ((f, x) for f, x, var in items if var),
                            front_x_m, rear_x_m, tipping)


def _margin(dst_g: float, dst_q: float, stb_g: float, stb_q: float, tipping: str | float) -> float | None:
    """Return the design stabilising over destabilising moment, or None if nothing destabilises."""
    if tipping == EQU:
        dst = GAMMA_G_DST * dst_g + GAMMA_Q_DST * dst_q
        stb = GAMMA_G_STB * stb_g + GAMMA_Q_STB * stb_q
        factor = 1.0
    else:
        dst = dst_g + dst_q
        stb = stb_g + stb_q
        factor = float(tipping)
    if dst <= 1e-9:
        return None
    return stb / dst / factor


def tipping_checks(states: Iterable[StateResult], tipping: str | float, caution_at: float) -> list[Check]:
    """Return one check per state that can tip (usage = 1 / margin)."""
    method = EQU if tipping == EQU else f"factor {float(tipping):g}"
    out = []
    for state in states:
        margin = state.tipping_margin
        if margin is None:
            continue
        usage = 1.0 / margin if margin > 0 else math.inf
        level = "blocked" if usage > 1.0 + 1e-12 else "caution" if usage >= caution_at else "ok"
        out.append(Check("tipping:" + state.state, f"tipping {state.tipping_about}wards, {state.state} ({method})",
                         margin, 1.0, "", usage, level))
    return out
