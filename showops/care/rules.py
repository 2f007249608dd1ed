"""The readiness rules: records in, reasons out (pure: no Flask, click or sqlite).

Each rule is one named function with its source beside it, and returns
:class:`showops.verdict.Reason` lines whose ``limit`` names the rule
(``inspection``, ``preshow``, ``briefing``, ``rehearsal``, ``area_release``,
``objection``, ``equipment``) and whose ``fix`` says which record clears it.

Records made on the night (the pre-show check, the briefing, the area release) are
not due before the performance's day: a sheet printed in advance does not list them
against every cue (the cover shows them as still to do), and from the performance's
day on a missing one blocks the cue. A record that exists and shows a problem (a
fault found, a person who missed the briefing) blocks whatever the day.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date
from typing import Any, Iterable, Mapping, Sequence

from showops.care.model import (AreaRelease, Briefing, ChecklistItem, Due, Inspection, Objection, Part,
                                Participant, PreshowAnswer, Rehearsal, RigEvent, Rule, RuleSet)
from showops.care.parts import check_part
from showops.care.schedules import add_months
from showops.verdict import Level, Reason

#: How far ahead an examination falling due turns a cue's readiness to caution, and
#: the default window of ``showops due`` (the issue's "next 14 days").
DUE_SOON_DAYS = 14


def pending_level(performance_day: date, as_of: date) -> Level | None:
    """Return the level of a night's record still to be done: ``blocked`` from the
    performance's day on, None (not yet due) before it."""
    return "blocked" if as_of >= performance_day else None


def _fmt(day: date | None) -> str:
    return day.isoformat() if day else "never"


def _names(people: Iterable[Participant]) -> str:
    return ", ".join(f"{p.name} ({p.role})" for p in people)


# --------------------------------------------------------------------------- inspections

def _passing_covering(rule: Rule, inspections: Sequence[Inspection], on_day: date) -> Inspection | None:
    found = [i for i in inspections if i.passed and i.on <= on_day and (not i.covers or rule.key in i.covers)]
    return max(found, key=lambda i: (i.on, i.id), default=None)


def inspection_reasons(rig: str, rule_set: RuleSet, inspections: Sequence[Inspection],
                       events: Sequence[RigEvent], on_day: date, *,
                       due_soon_days: int = DUE_SOON_DAYS) -> list[Reason]:
    """Rule ``inspection``: the rig is examined within every interval of its rule set, its
    last inspection raised no objection to use, and every incident, overload or
    modification since was followed by an examination.

    Sources: each rule of ``rule_set`` names its own (LOLER 1998 reg 9; DGUV Vorschrift
    17 §34 and DGUV Grundsatz 315-390; ANSI E1.47). A failed or overdue inspection puts
    the rig out of service until a passing record clears it.

    :param on_day: the performance's day (an examination due before it blocks it).
    """
    reasons: list[Reason] = []
    mine = sorted((i for i in inspections if i.rig == rig and i.on <= on_day), key=lambda i: (i.on, i.id))
    latest = mine[-1] if mine else None
    if latest is not None and not latest.passed:
        reasons.append(Reason(
            text=f"{rig} is out of service: the inspection of {_fmt(latest.on)} by {latest.examiner.name} "
                 f"objects to its use ({latest.findings})",
            limit="inspection",
            fix=f"remedy the defect ({latest.follow_up or 'see the findings'}) and record a passing inspection"))
    for rule in rule_set.of_kind("interval"):
        last = _passing_covering(rule, mine, on_day)
        if last is None:
            reasons.append(Reason(
                text=f"{rig}: no passing {rule.title} on record ({rule.source})", limit="inspection",
                fix=f"record a passing {rule.title} by a {rule.examiner}"))
            continue
        due = add_months(last.on, rule.months or 0)
        days = (due - on_day).days
        if days < 0:
            reasons.append(Reason(
                text=f"{rig}: {rule.title} overdue since {_fmt(due)} (last {_fmt(last.on)}, every "
                     f"{rule.months} months: {rule.source})", limit="inspection",
                value=float(-days), allowed=0.0,
                fix=f"record a passing {rule.title} by a {rule.examiner}"))
        elif days <= due_soon_days:
            reasons.append(Reason(
                text=f"{rig}: {rule.title} due {_fmt(due)}, {days} days after this performance",
                level="caution", limit="inspection", value=float(days),
                fix=f"book the {rule.title} before {_fmt(due)}"))
    for rule in rule_set.of_kind("after_event"):
        for event in sorted(events, key=lambda e: (e.on, e.id)):
            if event.rig != rig or event.kind not in rule.events or event.on > on_day:
                continue
            if any(i.passed and event.on <= i.on <= on_day for i in mine):
                continue
            reasons.append(Reason(
                text=f"{rig}: {event.kind} on {_fmt(event.on)} ({event.description}) needs an "
                     f"{rule.title} before the next use ({rule.source})", limit="inspection",
                fix=f"record a passing {rule.title} dated on or after {_fmt(event.on)}"))
    for insp in mine:
        if insp.passed and insp.follow_up_open:
            reasons.append(Reason(
                text=f"{rig}: follow-up from the inspection of {_fmt(insp.on)} not yet acknowledged as "
                     f"remedied: {insp.follow_up}", level="caution", limit="inspection",
                fix="acknowledge the remedy once it is done"))
    return reasons


def due_list(rig: str, rule_set: RuleSet, inspections: Sequence[Inspection], events: Sequence[RigEvent],
             today: date, days: int = DUE_SOON_DAYS) -> list[Due]:
    """Return what falls due for ``rig`` within ``days`` of ``today`` (overdue first).

    Same rules as :func:`inspection_reasons`, seen from today rather than from a performance.
    """
    out: list[Due] = []
    mine = [i for i in inspections if i.rig == rig and i.on <= today]
    for rule in rule_set.of_kind("interval"):
        last = _passing_covering(rule, mine, today)
        if last is None:
            out.append(Due(rig, rule, None, None, "never examined", None, "no passing record"))
            continue
        due = add_months(last.on, rule.months or 0)
        left = (due - today).days
        if left < 0:
            out.append(Due(rig, rule, due, last.on, "overdue", left, f"{-left} days overdue"))
        elif left <= days:
            out.append(Due(rig, rule, due, last.on, "due soon", left, f"due in {left} days"))
    latest = max(mine, key=lambda i: (i.on, i.id), default=None)
    for rule in rule_set.of_kind("after_event"):
        for event in events:
            if (event.rig == rig and event.kind in rule.events and event.on <= today
                    and not any(i.passed and i.on >= event.on for i in mine)):
                out.append(Due(rig, rule, event.on, latest.on if latest else None, "extraordinary", None,
                               f"after the {event.kind} of {_fmt(event.on)}"))
    if latest is not None and not latest.passed:
        out.insert(0, Due(rig, Rule("out-of-service", "interval", "re-examination after a failed inspection",
                                    "a failed inspection puts the rig out of service until it passes"),
                          latest.on, latest.on, "overdue", 0, "failed inspection: out of service"))
    order = {"overdue": 0, "never examined": 1, "extraordinary": 2, "due soon": 3}
    return sorted(out, key=lambda d: (order[d.status], d.days if d.days is not None else -10**6))


# --------------------------------------------------------------------------- pre-show check

def preshow_reasons(rig: str, items: Sequence[ChecklistItem] | None, answers: Sequence[PreshowAnswer],
                    level_if_pending: Level | None) -> list[Reason]:
    """Rule ``preshow``: every item of tonight's pre-show check is answered with what was
    observed, and the latest answer to each found no fault.

    Source: a check before each use including a trial in motion (DGUV Grundsatz
    315-390, from memory; LOLER 1998 reg 9(3)(b), from memory).
    """
    if items is None:
        if level_if_pending is None:
            return []
        return [Reason(text=f"{rig}: no pre-show checklist is loaded for this rig", level=level_if_pending,
                       limit="preshow", fix=f"load the rig's checklist (showops care checklist {rig} FILE)")]
    latest: dict[str, PreshowAnswer] = {}
    for answer in sorted(answers, key=lambda a: (a.at, a.id)):
        if answer.rig == rig:
            latest[answer.item_key] = answer
    reasons = []
    for item in items:
        answer = latest.get(item.key)
        if answer is not None and answer.result == "fault":
            reasons.append(Reason(
                text=f"{rig}: pre-show check found a fault at {item.title!r}: {answer.observation} "
                     f"({answer.person.name}, {answer.at:%H:%M})", limit="preshow",
                fix=f"remedy it, then answer {item.title!r} again with what you observe"))
    missing = [item for item in items if item.key not in latest]
    if missing and level_if_pending is not None:
        reasons.append(Reason(
            text=f"{rig}: pre-show check incomplete, {len(items) - len(missing)} of {len(items)} items answered "
                 f"(to do: {', '.join(i.title for i in missing)})", level=level_if_pending, limit="preshow",
            fix="answer every item with what was observed, the load trial in motion included"))
    return reasons


# --------------------------------------------------------------------------- briefing

def briefing_reasons(rig: str, participants: Sequence[Participant], briefing: Briefing | None,
                     level_if_pending: Level | None) -> list[Reason]:
    """Rule ``briefing``: everyone on the cue (riders and crew) confirmed tonight's briefing
    for its rig on their own screen.

    Source: a documented briefing of everyone involved before each use (DGUV Vorschrift
    17 §20 and DGUV Information 215-320, from memory); LOLER 1998 reg 8 (lifting operations
    planned and supervised, from memory).
    """
    if not participants:
        return []
    if briefing is None:
        if level_if_pending is None:
            return []
        return [Reason(text=f"{rig}: no briefing recorded for this performance", level=level_if_pending,
                       limit="briefing", fix=f"give the briefing for {rig}; each person confirms on their screen")]
    present = (briefing.given_by, *briefing.attendees)
    absent = [p for p in participants if not any(a.same_as(p.person) for a in present)]
    if not absent:
        return []
    return [Reason(text=f"{rig}: {_names(absent)} did not confirm tonight's briefing "
                        f"(given by {briefing.given_by.name} at {briefing.at:%H:%M})",
                   limit="briefing", fix="brief them and have each confirm on their own screen")]


# --------------------------------------------------------------------------- rehearsal

def _keys(team: Iterable[Participant]) -> frozenset:
    """Each member as (role, id) and as (role, name): a person with an id on one side and
    none on the other still matches by name (names on the people list are unique)."""
    out = set()
    for m in team:
        out.add((m.role, m.name.strip().casefold()))
        if m.person_id is not None:
            out.add((m.role, m.person_id))
    return frozenset(out)


def _covers(keys: frozenset, person: Participant) -> bool:
    return ((person.person_id is not None and (person.role, person.person_id) in keys)
            or (person.role, person.name.strip().casefold()) in keys)


def rehearsal_reasons(rig: str, cue_id: int | None, team: Sequence[Participant], rehearsals: Sequence[Rehearsal],
                      configuration: str | None, on_day: date) -> list[Reason]:
    """Rule ``rehearsal``: tonight's riders and crew on this cue rehearsed this rig together,
    each in tonight's role, in this configuration (the rig version); a cast or crew
    change since the last rehearsal blocks the cue until a rehearsal is recorded.

    Source: DGUV Vorschrift 17 §20 (hazardous scenic actions rehearsed sufficiently,
    especially on cast changes; from memory).
    """
    if not team:
        return []
    mine = [r for r in rehearsals if r.rig == rig and r.on <= on_day and (r.cue_id is None or r.cue_id == cue_id)]
    keys = {r.id: _keys(r.team) for r in mine}
    current = [r for r in mine if (not configuration or not r.configuration or r.configuration == configuration)]
    if any(all(_covers(keys[r.id], p) for p in team) for r in current):
        return []
    fix = (f"rehearse {rig} with {_names(team)} and record it (DGUV Vorschrift 17 §20)")
    if not mine:
        return [Reason(text=f"{rig}: no rehearsal on record for {_names(team)}", limit="rehearsal", fix=fix)]
    latest = max(mine, key=lambda r: (r.on, r.id))
    if configuration and latest.configuration and latest.configuration != configuration and \
            all(_covers(keys[latest.id], p) for p in team):
        return [Reason(text=f"{rig}: the rig has changed since it was last rehearsed on {_fmt(latest.on)} "
                            f"(version {latest.configuration[:8]} then, {configuration[:8]} now)",
                       limit="rehearsal", fix=fix)]
    new = [p for p in team if not _covers(keys[latest.id], p)]
    text = (f"{rig}: {_names(new)} not rehearsed with tonight's team: the cast or crew changed since the "
            f"last rehearsal on {_fmt(latest.on)}") if new else (
            f"{rig}: tonight's team has not rehearsed together in this configuration")
    return [Reason(text=text, limit="rehearsal", fix=fix)]


# --------------------------------------------------------------------------- area release

def area_release_reasons(releases: Sequence[AreaRelease], level_if_pending: Level | None) -> list[Reason]:
    """Rule ``area_release``: the supervising person released the stage for this performance.

    Source: DGUV Vorschrift 17 §15 (a performance or rehearsal starts only after the
    supervising person releases the stage; from memory).
    """
    if releases or level_if_pending is None:
        return []
    return [Reason(text="the stage has not been released for this performance", level=level_if_pending,
                   limit="area_release",
                   fix="the stage manager (or designated supervisor) records the area release once the "
                       "stage is clear (DGUV Vorschrift 17 §15)")]


# --------------------------------------------------------------------------- safety objection

def objection_reasons(objections: Sequence[Objection], rig: str | None, cue_id: int | None) -> list[Reason]:
    """Rule ``objection``: an open safety objection against the rig or the cue blocks it.

    Source: DGUV Vorschrift 17 §20 (an artistic demand is dropped when the responsible
    stage specialist objects on safety grounds; from memory). Only the named
    responsible person resolves it, with a written reason.
    """
    out = []
    for o in sorted(objections, key=lambda o: (o.at, o.id)):
        if not o.open:
            continue
        if (o.rig is not None and o.rig == rig) or (o.cue_id is not None and o.cue_id == cue_id):
            target = f"cue {cue_id}" if o.cue_id is not None else f"{o.rig}"
            out.append(Reason(
                text=f"safety objection #{o.id} against {target} by {o.raised_by.name} ({o.role}), "
                     f"{o.at:%Y-%m-%d %H:%M}: {o.reason}", limit="objection",
                fix=f"{o.responsible.name} resolves objection #{o.id} with a written reason"))
    return out


# --------------------------------------------------------------------------- equipment register

def equipment_reasons(parts: Sequence[Part], figures: Mapping[str, float], *, caution_at: float = 0.8,
                      people_factor: float | None = None) -> list[Reason]:
    """Rule ``equipment``: each fitted part carries no more than its rating allows, a
    people-carrying part at the people-carrying factor.

    Source: EU Machinery Directive 2006/42/EC Annex I §6.1.1, working coefficients
    "as a general rule doubled" for lifting persons (from memory); the rig file's
    ``people_factor`` where it sets one (e.g. 10:1 for ropes and belts over people,
    DGUV Vorschrift 17 §9, from memory).
    """
    reasons = []
    for part in parts:
        reason = check_part(part, figures, caution_at=caution_at, people_factor=people_factor)
        if reason is not None:
            reasons.append(reason)
    return reasons


# --------------------------------------------------------------------------- all together

@dataclass(frozen=True)
class CueReadiness:
    """Everything the rules need for one rig cue of one performance."""

    rig: str
    cue_id: int | None
    performance_id: int
    performance_day: date
    as_of: date
    rule_set: RuleSet
    team: tuple[Participant, ...] = ()
    configuration: str | None = None
    inspections: tuple[Inspection, ...] = ()
    events: tuple[RigEvent, ...] = ()
    checklist: tuple[ChecklistItem, ...] | None = None
    answers: tuple[PreshowAnswer, ...] = ()
    briefing: Briefing | None = None
    rehearsals: tuple[Rehearsal, ...] = ()
    releases: tuple[AreaRelease, ...] = ()
    objections: tuple[Objection, ...] = ()
    parts: tuple[Part, ...] = ()
    figures: Mapping[str, float] = field(default_factory=dict)
    caution_at: float = 0.8
    people_factor: float | None = None


def cue_readiness(ctx: CueReadiness, memo: dict | None = None) -> list[Reason]:
    """Return every readiness reason for one rig cue, rule by rule, blocked ones first.

    :param memo: a dict kept by the caller for one unchanged set of records (a season's
        verdicts): the inspection rule's reasons depend only on the rig and the day, the
        equipment rule's only on the rig and the figures, so each is worked out once.
    """
    memo = {} if memo is None else memo
    pending = pending_level(ctx.performance_day, ctx.as_of)
    reasons: list[Reason] = []
    reasons += objection_reasons(ctx.objections, ctx.rig, ctx.cue_id)
    key = ("inspection", ctx.rig, ctx.performance_day)
    if key not in memo:
        memo[key] = inspection_reasons(ctx.rig, ctx.rule_set, ctx.inspections, ctx.events, ctx.performance_day)
    reasons += memo[key]
    if ctx.rule_set.of_kind("before_each_use"):
        reasons += preshow_reasons(ctx.rig, ctx.checklist, ctx.answers, pending)
    reasons += area_release_reasons(ctx.releases, pending)
    reasons += briefing_reasons(ctx.rig, ctx.team, ctx.briefing, pending)
    reasons += rehearsal_reasons(ctx.rig, ctx.cue_id, ctx.team, ctx.rehearsals, ctx.configuration,
                                 ctx.performance_day)
    key = ("equipment", ctx.rig, tuple(sorted(ctx.figures.items())), ctx.caution_at, ctx.people_factor)
    if key not in memo:
        memo[key] = equipment_reasons(ctx.parts, ctx.figures, caution_at=ctx.caution_at,
                                      people_factor=ctx.people_factor)
    reasons += memo[key]
    return sorted(reasons, key=lambda r: r.level != "blocked")


def summary_line(rig: str, reasons: Sequence[Reason]) -> str:
    """One line for a sheet's cover: the rig and what its readiness amounts to."""
    blocked = [r for r in reasons if r.level == "blocked"]
    if blocked:
        return f"{rig}: NOT READY ({len(blocked)} blocking: " + "; ".join(r.limit for r in blocked) + ")"
    if reasons:
        return f"{rig}: ready, with {len(reasons)} caution(s)"
    return f"{rig}: ready"


def participants_of(cue: Any) -> tuple[Participant, ...]:
    """Return the riders and crew of a cue object (a :class:`showops.show.model.CueNight`
    or anything with ``crew`` assignments and ``riders``).

    Riders are taken from ``rider_people`` (objects with ``person_id`` and ``name``)
    when the cue has it, else from ``riders`` (names), in the role ``rider``.
    """
    out = [Participant(a.name, a.role, a.person_id) for a in (getattr(cue, "crew", None) or ())]
    rider_people = getattr(cue, "rider_people", None)
    if rider_people:
        out += [Participant(r.name, "rider", getattr(r, "person_id", None)) for r in rider_people]
    else:
        out += [Participant(name, "rider") for name in (getattr(cue, "riders", None) or ())]
    seen, unique = set(), []
    for p in out:
        key = (p.role, p.person_id if p.person_id is not None else p.name.casefold())
        if key not in seen:
            seen.add(key)
            unique.append(p)
    return tuple(unique)
