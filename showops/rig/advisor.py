"""The balance advisor: what to change on the rig tonight so every limit holds.

Given tonight's riders, :func:`advise_balance` tries the counterweight with any
combination of the venue's plates (``[advisor] plates``) hung on it or taken off it, handle positions between ``handle_min_x`` and
``handle_max_x`` (on a ``handle_step`` grid, since a handle is bolted at a hole, not
anywhere), and extra lifters up to ``max_operators``. It solves the rig for each and
keeps the configuration that clears every limit with the least change, preferring a
stand moment near zero and an empty platform the brake can hold (both are limits the
solve checks).

The order of preference, most important first: a verdict of ``ok`` over ``caution``;
no extra lifter over one (a person is the hardest thing to find at the half); fewer
cautions that balance can clear; a stand moment within a tenth of its limit; the fewest plates moved and the handle left where
it is; the smallest stand moment.

Some limits no balance can fix: the rated payload (the riders weigh what they weigh)
and a count of riders. The advice says so plainly.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Any, Sequence

from showops.units import STANDARD_GRAVITY

#: Limits that changing the counterweight, handle or lifters cannot clear.
UNFIXABLE = ("rated_payload", "max_riders")
#: Default spacing of the handle positions tried, m (common practice, no source).
HANDLE_STEP_M = 0.05
_RANK = {"ok": 0, "caution": 1, "blocked": 2}
_WORDS = {1: "one", 2: "two", 3: "three", 4: "four", 5: "five", 6: "six", 7: "seven", 8: "eight"}
_ORDINAL = {2: "second", 3: "third", 4: "fourth", 5: "fifth", 6: "sixth"}


@dataclass(frozen=True)
class Advice:
    """What the advisor recommends (or that nothing works).

    :ivar text: one line a stage manager can read out.
    :ivar feasible: whether a configuration clears every limit.
    :ivar changed: whether anything needs changing (false when the rig is fine as it is).
    :ivar result: the solve of the advised configuration (``None`` when nothing works).
    """

    text: str
    feasible: bool
    changed: bool
    counterweight_kg: float
    counterweight_change_kg: float
    plates_added_kg: tuple[float, ...]
    plates_removed_kg: tuple[float, ...]
    handle_x_m: float | None
    handle_move_m: float
    operators: int
    extra_operators: int
    unfixable: tuple[str, ...]
    result: Any = None

    def to_dict(self) -> dict[str, Any]:
        """Return a JSON-ready dict (the advised configuration's solve under ``result``)."""
        out = {k: getattr(self, k) for k in self.__dataclass_fields__ if k != "result"}
        for key in ("plates_added_kg", "plates_removed_kg", "unfixable"):
            out[key] = list(out[key])
        out["result"] = self.result.to_dict() if self.result is not None else None
        return out


@dataclass(frozen=True)
class _Candidate:
    counterweight_kg: float
    handle_x_m: float | None
    operators: int


def advise_balance(rig, rider_masses_kg: Sequence[float], g: float = STANDARD_GRAVITY) -> Advice:
    """Return the least change to counterweight, handle and lifters that clears every limit.

    :param rig: a rig of any kind that has counterweight loads or a handle (the
        parallel-linkage lift; a frame rig's counterweight and lifters).
    :param rider_masses_kg: tonight's riders, each without the allowance.
    :param g: gravity, m/s².
    :returns: an :class:`Advice`; ``feasible`` is false, with a plain sentence, when no
        combination works or a limit cannot be fixed by balance.
    :raises ValidationError: for a rider mass that is not a positive number.
    """
    from showops.rig import solve_rig

    current = solve_rig(rig, rider_masses_kg, g)
    adv = getattr(rig, "advisor", None)
    plates = tuple(sorted(getattr(adv, "plates_kg", ()) or (), reverse=True))
    cw_now = rig.counterweight_kg
    ops_now = rig.limits.operators
    ops_max = max(ops_now, getattr(adv, "max_operators", None) or ops_now)
    handle_now = _handle_x(rig)

    unfixable = tuple(r.limit for r in current.reasons if r.limit in UNFIXABLE and r.level == "blocked")
    if unfixable:
        what = "; ".join(r.text for r in current.reasons if r.limit in unfixable)
        return _nothing(rig, current, cw_now, handle_now, ops_now, unfixable,
                        f"Balance cannot fix this: {what}. Change the riders.")

    if current.verdict == "ok":
        return Advice(text="No change needed: every limit holds with the rig as it is.", feasible=True,
                      changed=False, counterweight_kg=cw_now, counterweight_change_kg=0.0,
                      plates_added_kg=(), plates_removed_kg=(), handle_x_m=handle_now, handle_move_m=0.0,
                      operators=ops_now, extra_operators=0, unfixable=(), result=current)

    has_cw = any(load.counterweight for load in rig.loads)
    # the crew can hang any of the plates on the counterweight or take them off it
    # (never more than it weighs)
    sums = _subset_sums(plates) if (plates and has_cw) else {0.0}
    totals = sorted({round(cw_now + s, 6) for s in sums} | {round(cw_now - s, 6) for s in sums if s < cw_now})
    best = None
    for operators in range(ops_now, ops_max + 1):
        for total in totals:
            for handle in _handles(rig, total, operators, rider_masses_kg, g, handle_now):
                cand = _Candidate(total, handle, operators)
                result = solve_rig(_variant(rig, cand), rider_masses_kg, g)
                if result.verdict == "blocked":
                    continue
                key = _preference(rig, cand, result, cw_now, handle_now, ops_now, plates)
                if best is None or key < best[0]:
                    best = (key, cand, result)
    if best is None:
        levers = []
        if plates and has_cw:
            levers.append("counterweight")
        if handle_now is not None and _handle_range(rig) is not None:
            levers.append("handle position")
        if ops_max > ops_now:
            levers.append(f"up to {ops_max} lifters")
        tried = " and ".join([", ".join(levers[:-1]), levers[-1]] if len(levers) > 1 else levers) or "change"
        blocking = "; ".join(r.text for r in current.reasons if r.level == "blocked")
        return _nothing(rig, current, cw_now, handle_now, ops_now, (),
                        f"No {tried} keeps every limit with these riders ({blocking}): change the riders.")
    _, cand, result = best
    if cand == _Candidate(cw_now, handle_now, ops_now):
        left = "; ".join(r.text for r in result.reasons)
        return Advice(text=f"Keep the rig as it is: no change to counterweight, handle or lifters does better "
                           f"(verdict {result.verdict}: {left}).", feasible=True, changed=False,
                      counterweight_kg=cw_now, counterweight_change_kg=0.0, plates_added_kg=(),
                      plates_removed_kg=(), handle_x_m=handle_now, handle_move_m=0.0, operators=ops_now,
                      extra_operators=0, unfixable=(), result=result)
    return _advice(rig, cand, result, cw_now, handle_now, ops_now, plates)


# --------------------------------------------------------------------------- search

def _handle_x(rig) -> float | None:
    geometry = getattr(rig, "geometry", None)
    return geometry.handle_x_m if geometry is not None else None


def _handle_range(rig) -> tuple[float, float] | None:
    adv = getattr(rig, "advisor", None)
    if adv is None or _handle_x(rig) is None:
        return None
    lo, hi = adv.handle_min_x_m, adv.handle_max_x_m
    if lo is None and hi is None:
        return None
    now = _handle_x(rig)
    return (lo if lo is not None else min(now, hi)), (hi if hi is not None else max(now, lo))


def _handles(rig, total: float, operators: int, riders, g: float, now: float | None) -> list[float | None]:
    """Handle positions worth trying for this counterweight: the current one, and the
    grid points either side of the position that zeroes the stand moment (or every grid
    point when the handle is on a beam, where it changes the pull instead)."""
    span = _handle_range(rig)
    if span is None:
        return [now]
    lo, hi = span
    step = getattr(rig.advisor, "handle_step_m", None) or HANDLE_STEP_M
    grid = [round(lo + i * step, 6) for i in range(int(math.floor((hi - lo) / step + 1e-9)) + 1)]
    if rig.geometry.handle_on != "rear-bar":
        return sorted(set(grid) | {now})
    from showops.rig import solve_rig

    probe = solve_rig(_variant(rig, _Candidate(total, now, operators)), riders, g)
    out = {now}
    ideal = probe.balanced_handle_x_m
    if ideal is not None:
        below = max((x for x in grid if x <= ideal), default=lo)
        above = min((x for x in grid if x >= ideal), default=hi)
        out |= {below, above}
    return sorted(x for x in out if x is not None)


def _variant(rig, cand: _Candidate):
    """Return ``rig`` with this counterweight total, handle position and number of lifters."""
    loads = rig.loads
    now = rig.counterweight_kg
    if cand.counterweight_kg != now and now > 0:
        factor = cand.counterweight_kg / now
        loads = tuple(replace(ld, mass_kg=ld.mass_kg * factor) if ld.counterweight else ld for ld in loads)
        # a counterweight of zero: drop those loads (a mass must be positive)
        loads = tuple(ld for ld in loads if not (ld.counterweight and ld.mass_kg <= 0))
    changes: dict[str, Any] = {"loads": loads, "limits": replace(rig.limits, operators=cand.operators)}
    if cand.handle_x_m is not None and cand.handle_x_m != _handle_x(rig):
        changes["geometry"] = replace(rig.geometry, handle_x_m=cand.handle_x_m)
    return replace(rig, **changes)


def _preference(rig, cand, result, cw_now, handle_now, ops_now, plates):
    moment = abs(getattr(result, "stand_moment_nm", 0.0))
    limit = getattr(rig.limits, "stand_moment_nm", None) or math.inf
    added, removed = _plate_change(plates, cand.counterweight_kg - cw_now)
    moved = 0.0 if cand.handle_x_m is None or handle_now is None else abs(cand.handle_x_m - handle_now)
    fixable = sum(1 for r in result.reasons if r.limit not in UNFIXABLE)
    return (_RANK[result.verdict], cand.operators - ops_now, fixable, moment / limit > 0.1,
            len(added) + len(removed) + (1 if moved > 1e-9 else 0), round(moment, 3), moved)


def _subset_sums(plates: Sequence[float]) -> set[float]:
    sums = {0.0}
    for plate in plates:
        sums |= {round(s + plate, 6) for s in sums}
    return sums


def _plate_change(plates: Sequence[float], change_kg: float) -> tuple[tuple[float, ...], tuple[float, ...]]:
    """Return the fewest plates (from the venue's set) that make up ``|change_kg|``."""
    target = round(abs(change_kg), 6)
    if target == 0:
        return (), ()
    best: dict[float, tuple[float, ...]] = {0.0: ()}
    for plate in plates:
        for total, combo in list(best.items()):
            new = round(total + plate, 6)
            if new <= target + 1e-6 and (new not in best or len(best[new]) > len(combo) + 1):
                best[new] = combo + (plate,)
    combo = best.get(target, ())
    return (combo, ()) if change_kg > 0 else ((), combo)


# --------------------------------------------------------------------------- words

def _plates_words(plates: Sequence[float]) -> str:
    counts: dict[float, int] = {}
    for p in plates:
        counts[p] = counts.get(p, 0) + 1
    parts = [f"{_WORDS.get(n, str(n))} {p:g} kg plate{'s' if n > 1 else ''}"
             for p, n in sorted(counts.items(), reverse=True)]
    return " and ".join(parts)


def _advice(rig, cand, result, cw_now, handle_now, ops_now, plates) -> Advice:
    change = round(cand.counterweight_kg - cw_now, 6)
    added, removed = _plate_change(plates, change)
    parts = []
    if change > 0:
        parts.append(f"add {change:g} kg to the counterweight" + (f" ({_plates_words(added)})" if added else ""))
    elif change < 0:
        parts.append(f"take {-change:g} kg off the counterweight" + (f" ({_plates_words(removed)})" if removed else ""))
    move = 0.0
    if cand.handle_x_m is not None and handle_now is not None and abs(cand.handle_x_m - handle_now) > 1e-9:
        move = cand.handle_x_m - handle_now
        direction = "further back" if move < 0 else "further forward, towards the stand"
        parts.append(f"move the handle {abs(move):.2f} m {direction} (to x = {cand.handle_x_m:.2f} m)")
    extra = cand.operators - ops_now
    if extra == 1:
        parts.append(f"add a {_ORDINAL.get(cand.operators, str(cand.operators) + 'th')} lifter")
    elif extra > 1:
        parts.append(f"add {_WORDS.get(extra, str(extra))} lifters ({cand.operators} in all)")
    per = result.operator_force_per_person_n
    figures = (f"pull {per:.0f} N per lifter" if per >= 0
               else f"each lifter holds the platform down with {-per:.0f} N")
    if hasattr(result, "stand_moment_nm"):
        figures += f", stand moment {result.stand_moment_nm:.0f} N·m"
    sentence = _join(parts)
    text = f"{sentence[0].upper()}{sentence[1:]}: {figures}, verdict {result.verdict}."
    return Advice(text=text, feasible=True, changed=True, counterweight_kg=cand.counterweight_kg,
                  counterweight_change_kg=change, plates_added_kg=added, plates_removed_kg=removed,
                  handle_x_m=cand.handle_x_m, handle_move_m=move, operators=cand.operators,
                  extra_operators=extra, unfixable=(), result=result)


def _join(parts: Sequence[str]) -> str:
    if len(parts) <= 1:
        return parts[0] if parts else "no change"
    return ", ".join(parts[:-1]) + " and " + parts[-1]


def _nothing(rig, current, cw_now, handle_now, ops_now, unfixable, text) -> Advice:
    return Advice(text=text, feasible=False, changed=False, counterweight_kg=cw_now, counterweight_change_kg=0.0,
                  plates_added_kg=(), plates_removed_kg=(), handle_x_m=handle_now, handle_move_m=0.0,
                  operators=ops_now, extra_operators=0, unfixable=unfixable, result=None)
