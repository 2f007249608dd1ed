"""Each cue's verdict for one performance: the rig's loads with that night's riders,
the procedure checker, and the casting rules, each a named function with its source.

Pure: records in (:class:`PerformanceInput`), a :class:`~showops.show.model.NightPlan`
out. Riders' masses come in with :class:`Rider` and are used only to solve the rig;
the plan carries names and the riders' total, never one person's mass.

Every rule returns a list of :class:`~showops.verdict.Reason` (empty when it passes);
``limit`` names the rule so a sheet or a test can tell them apart. Where something
can clear a block, ``Reason.fix`` says what, and :attr:`CueNight.fixes` gathers them.
"""

from __future__ import annotations

import functools
import importlib
from dataclasses import dataclass, field, replace
from datetime import date, datetime
from typing import Any, Callable, Iterable, Mapping, Sequence

from showops.show.model import Assignment, CueNight, NightPlan
from showops.verdict import Reason, verdict_of

#: The procedure role filled by the cue's riders rather than by crew.
RIDER_ROLE = "rider"


# --------------------------------------------------------------------------- inputs


@dataclass(frozen=True)
class Training:
    """A crew member's training on one rig: valid from ``trained_on`` through ``expires_on``."""

    rig: str
    trained_on: date
    trained_by: str
    expires_on: date


@dataclass(frozen=True)
class Rider:
    """A performer riding a cue. ``mass_kg`` is personal data: it feeds the solve only."""

    person_id: int
    name: str
    mass_kg: float = field(repr=False)
    cleared_rigs: frozenset[str] = frozenset()


@dataclass(frozen=True)
class CrewMember:
    """A person who may take crew roles, with their training per rig slug."""

    person_id: int
    name: str
    roles: frozenset[str] = frozenset()
    training: Mapping[str, Training] = field(default_factory=dict)


@dataclass(frozen=True)
class Rehearsal:
    """A person rehearsed a rig at a time (records kept by rig care)."""

    person_id: int
    rig: str
    at: datetime


@dataclass(frozen=True)
class CueInput:
    """One cue of one performance, as the store reads it.

    :param rig_model: the parsed rig (``showops.rig.parse_rig``) or None for no rig.
    :param procedure: the parsed procedure (``showops.procedure.model.Procedure``) or None.
    :param crew: (role, person) pairs; ``lifters`` may appear several times.
    :param casts: the cue's planned casts by name ("first", "second"); the fix "the other
        cast" tries each one that differs from tonight's riders.
    :param cast_since: the start of the last performance of this cue with a different
        cast (the cast changed after it), or None when the cast never changed.
    :param readiness: reasons from rig care (inspections, pre-show check, briefing ...).
    """

    cue_id: int
    number: str
    name: str
    rig: str | None = None
    rig_model: Any = None
    procedure: Any = None
    procedure_slug: str | None = None
    riders: tuple[Rider, ...] = ()
    crew: tuple[tuple[str, CrewMember], ...] = ()
    casts: Mapping[str, tuple[Rider, ...]] = field(default_factory=dict)
    cast_since: datetime | None = None
    readiness: tuple[Reason, ...] = ()


@dataclass(frozen=True)
class PerformanceInput:
    """One performance and its cues in running order; ``crew_pool`` is everyone on the crew list."""

    performance_id: int
    production: str
    company: str
    venue: str
    starts_at: datetime
    stage_manager: str | None
    cues: tuple[CueInput, ...]
    crew_pool: tuple[CrewMember, ...] = ()
    readiness: tuple[Reason, ...] = ()


# --------------------------------------------------------------------------- the procedure, behind one function


@functools.lru_cache(maxsize=1)
def procedure_api() -> tuple[Callable | None, str | None]:
    """Return ``(check_procedure, RULE_SET_VERSION)`` when the checker is installed, else ``(None, None)``."""
    try:
        module = importlib.import_module("showops.procedure")
    except ImportError:
        return None, None
    check = getattr(module, "check_procedure", None)
    return check, getattr(module, "RULE_SET_VERSION", None) if check else None


def check_cue_procedure(procedure, rig_result, context: Mapping[str, Any] | None = None,
                        rig_slug: str | None = None) -> tuple[list[str] | None, str | None]:
    """Run the procedure checker; return (finding lines, rule-set version).

    ``context`` holds plain values (``load``: the solver's dict, ``riders``: names,
    ``crew``: role -> names, ``performance``, ``cue``); the procedure package's own
    ``render_context`` shapes them where it offers one. The finding lines are ``None``
    when no checker is installed (the cue then carries a caution saying its procedure
    was not checked).
    """
    check, version = procedure_api()
    if check is None or procedure is None:
        return None, version
    context = dict(context or {})
    shape = _render_context()
    if shape is not None:
        context = shape(**{k: context[k] for k in ("load", "riders", "crew", "performance", "cue") if k in context})
    # Judge the procedure itself: with tonight's load blocked, every step needing
    # "load ok" would be a finding that only repeats the load's own reason (already a
    # blocked reason of the cue) and would wrongly ask for the procedure to be changed.
    if getattr(rig_result, "verdict", None) == "blocked":
        rig_result = {**rig_result.to_dict(), "verdict": "ok", "reasons": []}
    kwargs: dict[str, Any] = {"rig_result": rig_result, "context": context}
    if rig_slug and _accepts(check, "rig_slug"):
        kwargs["rig_slug"] = rig_slug
    findings = check(procedure, **kwargs)
    source = getattr(procedure, "source", "<procedure>")
    return [f.format(source) for f in findings], version


@functools.lru_cache(maxsize=1)
def _render_context() -> Callable | None:
    try:
        module = importlib.import_module("showops.procedure.render")
    except ImportError:
        return None
    return getattr(module, "render_context", None)


@functools.lru_cache(maxsize=64)
def _accepts(func: Callable, name: str) -> bool:
    import inspect

    try:
        return name in inspect.signature(func).parameters
    except (TypeError, ValueError):
        return False


@functools.lru_cache(maxsize=1)
def _advise_balance() -> Callable | None:
    try:
        module = importlib.import_module("showops.rig.advisor")
    except ImportError:
        return None
    return getattr(module, "advise_balance", None)


def advisor_text(rig_model, rider_masses_kg: Sequence[float]) -> str | None:
    """Return the balance advisor's advice (``showops.rig.advisor``) or None where it is not installed."""
    advise = _advise_balance()
    if advise is None:
        return None
    try:
        advice = advise(rig_model, list(rider_masses_kg))
    except Exception as exc:  # an advisor that cannot help must not hide the block itself
        return f"the balance advisor could not compute a fix ({exc})"
    return getattr(advice, "text", None) or None


# --------------------------------------------------------------------------- solving, cached


class RigSolver:
    """``solve(rig_model, masses)`` with a cache keyed by rig version and sorted masses.

    A season repeats the same casts night after night; one solve (and one procedure
    check) per distinct (rig version, riders) is enough. Share one across a season.
    """

    def __init__(self, solve: Callable | None = None):
        if solve is None:
            from showops.rig import solve_rig as solve
        self._solve = solve
        self._cache: dict[tuple, Any] = {}
        self._dicts: dict[int, dict] = {}
        self._versions: dict[int, tuple[Any, str | None]] = {}
        self._advice: dict[tuple, str | None] = {}
        #: procedure checker results, keyed by procedure version, result and staffed roles
        self.checked: dict[tuple, Any] = {}
        self.solves = 0

    def version(self, model) -> str | None:
        """``model.version`` (a SHA-256 of its text, computed on each access), once per model."""
        if model is None:
            return None
        found = self._versions.get(id(model))
        if found is None or found[0] is not model:
            found = self._versions[id(model)] = (model, getattr(model, "version", None))
        return found[1]

    def __call__(self, rig_model, rider_masses_kg: Sequence[float]):
        key = (self.version(rig_model), tuple(sorted(float(m) for m in rider_masses_kg)))
        result = self._cache.get(key)
        if result is None:
            result = self._solve(rig_model, list(rider_masses_kg))
            self._cache[key] = result
            self.solves += 1
        return result

    def advice(self, advisor: Callable, rig_model, rider_masses_kg: Sequence[float]) -> str | None:
        """``advisor(rig_model, masses)``, once per advisor, rig version and riders."""
        key = (id(advisor), self.version(rig_model), tuple(sorted(float(m) for m in rider_masses_kg)))
        if key not in self._advice:
            self._advice[key] = advisor(rig_model, list(rider_masses_kg))
        return self._advice[key]

    def as_dict(self, result) -> dict:
        """``result.to_dict()``, computed once per result; each caller gets its own top-level copy."""
        d = self._dicts.get(id(result))
        if d is None:
            d = self._dicts[id(result)] = result.to_dict()
        return dict(d)


# --------------------------------------------------------------------------- the rules


def load_reasons(rig_result) -> list[Reason]:
    """The rig solver's limit checks for tonight's riders.

    Source: the rig file's limits (maker's rated payload, brake rating, the per-person
    pull with its own named source) as checked by ``showops.rig.solve_rig``.
    """
    return list(rig_result.reasons)


def procedure_reasons(procedure, findings: list[str] | None) -> list[Reason]:
    """A rig cue needs a procedure on file that passes the checker.

    Common practice, no source: a written, checked procedure for every operation of
    machinery that carries a person (LOLER 1998 reg 8 asks for every lifting operation
    to be planned by a competent person; applied here to the written procedure).
    """
    if procedure is None:
        return [Reason("no procedure on file for this cue", limit="procedure",
                       fix="add the rig's procedure file and link it to the cue")]
    if findings is None:
        return [Reason("the procedure was not checked (no procedure checker installed)", level="caution",
                       limit="procedure_unchecked")]
    return [Reason(f"procedure check: {line}", limit="procedure",
                   fix="correct the procedure file so the checker passes")
            for line in findings]


def unstaffed_roles(procedure, crew: Sequence[tuple[str, CrewMember]], riders: Sequence[Rider],
                    rig_model=None) -> list[Reason]:
    """Every role the procedure names has somebody in it; the lifters are as many as
    the rig's limits assume (the per-person pull is computed for that number).

    Common practice, no source (a step nobody is assigned to is a step nobody does).
    """
    if procedure is None:
        return []
    out = []
    for role in procedure.roles:
        if role == RIDER_ROLE:
            if not riders:
                out.append(Reason("nobody is cast to ride", limit="unstaffed:rider",
                                  fix="cast a rider cleared for this rig"))
            continue
        if not any(r == role for r, _ in crew):
            out.append(Reason(f"nobody is assigned to {role}", limit=f"unstaffed:{role}"))
    operators = getattr(getattr(rig_model, "limits", None), "operators", None)
    lifters = sum(1 for r, _ in crew if r == "lifters")
    if operators and "lifters" in procedure.roles and 0 < lifters < operators:
        out.append(Reason(f"{lifters} lifter{'s' if lifters != 1 else ''} assigned; the rig's pull per "
                          f"lifter is computed for {operators}", limit="unstaffed:lifters",
                          value=float(lifters), allowed=float(operators)))
    return out


def role_not_held(crew: Sequence[tuple[str, CrewMember]]) -> list[Reason]:
    """The person assigned to a role is on the crew list for that role.

    Common practice, no source.
    """
    return [Reason(f"{person.name} is assigned to {role} but is not listed for that role",
                   limit=f"role:{role}")
            for role, person in crew if role not in person.roles]


def untrained_crew(crew: Sequence[tuple[str, CrewMember]], rig: str, on: date) -> list[Reason]:
    """Everyone assigned to a rig cue is trained on that rig and the training has not expired.

    Common practice, no source (DGUV Vorschrift 17 asks for instructed persons at stage
    machinery; the expiry interval is the company's own, kept per person and rig).
    """
    out, seen = [], set()
    for role, person in crew:
        if (person.person_id, role) in seen:
            continue
        seen.add((person.person_id, role))
        training = person.training.get(rig)
        if training is None:
            out.append(Reason(f"{person.name} ({role}) is not trained on {rig}", limit=f"training:{role}"))
        elif on > training.expires_on:
            out.append(Reason(f"{person.name} ({role}): training on {rig} expired "
                              f"{training.expires_on.isoformat()}", limit=f"training:{role}"))
        elif on < training.trained_on:
            out.append(Reason(f"{person.name} ({role}): training on {rig} is dated "
                              f"{training.trained_on.isoformat()}, after this performance",
                              limit=f"training:{role}"))
    return out


def uncleared_riders(riders: Sequence[Rider], rig: str) -> list[Reason]:
    """Every rider is cleared to ride this rig.

    Common practice, no source.
    """
    return [Reason(f"{r.name} is not cleared to ride {rig}", limit="rider_clearance")
            for r in riders if rig not in r.cleared_rigs]


def unrehearsed_riders(riders: Sequence[Rider], rig: str, cast_since: datetime | None,
                       starts_at: datetime, rehearsals: Iterable[Rehearsal] | None) -> list[Reason]:
    """Every rider has rehearsed on the rig since the cast of the cue last changed, before
    the performance.

    Source: DGUV Vorschrift 17 §20 (hazardous scenic actions are rehearsed sufficiently,
    especially on cast changes). ``rehearsals`` None means no rehearsal records are kept
    in this instance, and the rule is not applied (rig care then reports currency).
    """
    if rehearsals is None:
        return []
    rehearsals = list(rehearsals)
    out = []
    for r in riders:
        done = [h.at for h in rehearsals if h.person_id == r.person_id and h.rig == rig
                and h.at <= starts_at and (cast_since is None or h.at > cast_since)]
        if not done:
            since = f" since the cast changed after {cast_since:%Y-%m-%d %H:%M}" if cast_since else ""
            out.append(Reason(f"{r.name} has not rehearsed on {rig}{since}", limit="rehearsal",
                              fix=f"record a rehearsal of {r.name} on {rig} before the performance"))
    return out


def acts_and_checks(procedure, crew: Sequence[tuple[str, CrewMember]], riders: Sequence[Rider]) -> list[Reason]:
    """Nobody both acts in a step and checks it.

    Source: DGUV Information 215-320 (the person who secures a rider is not the person
    who checks it; the two-person principle).
    """
    if procedure is None:
        return []
    pairs = _act_check_pairs(procedure)
    if not pairs:
        return []
    people: dict[str, set[tuple[int, str]]] = {}
    for role, person in crew:
        people.setdefault(role, set()).add((person.person_id, person.name))
    people.setdefault(RIDER_ROLE, set()).update((r.person_id, r.name) for r in riders)
    out, seen = [], set()
    for by, check, number, title in pairs:
        for pid, name in sorted(people.get(by, set()) & people.get(check, set())):
            key = (pid, by, check)
            if key in seen:
                continue
            seen.add(key)
            out.append(Reason(f"{name} is assigned to both {by} and {check}: "
                              f"step {number} \"{title}\" would be checked by the person who does it",
                              limit="duty_separation",
                              fix=f"assign a different person to {check}"))
    return out


_PAIRS: dict[int, tuple[Any, tuple]] = {}


def _act_check_pairs(procedure) -> tuple[tuple[str, str, int, str], ...]:
    """(by, check, number, title) of every step acted and checked by two different roles, once per procedure."""
    found = _PAIRS.get(id(procedure))
    if found is None or found[0] is not procedure:
        steps = tuple(getattr(procedure, "main_steps", ())) + tuple(getattr(procedure, "stop_steps", ()))
        # a step checked by its own role is the procedure checker's finding, not a casting one
        pairs = tuple((st.by, st.check, st.number, st.title) for st in steps
                      if st.by and st.check and st.by != st.check)
        if len(_PAIRS) > 64:
            _PAIRS.clear()
        found = _PAIRS[id(procedure)] = (procedure, pairs)
    return found[1]


# --------------------------------------------------------------------------- a cue, a night


@dataclass
class _Context:
    solver: RigSolver
    rehearsals: list[Rehearsal] | None
    advisor: Callable[[Any, Sequence[float]], str | None] = advisor_text
    checker: Callable[..., tuple[list[str] | None, str | None]] = check_cue_procedure

    def check(self, procedure, result, context, rig_slug=None):
        """Run the checker once per procedure version, rig result and set of staffed roles."""
        if procedure is None:
            return self._run(procedure, result, context, rig_slug)
        key = (id(self.checker), self.solver.version(procedure), id(result), rig_slug,
               tuple(sorted(context["crew"])), len(context["riders"]))
        found = self.solver.checked.get(key)
        if found is None:
            found = self.solver.checked[key] = self._run(procedure, result, context, rig_slug)
        return found

    def _run(self, procedure, result, context, rig_slug):
        if rig_slug is not None and _accepts(self.checker, "rig_slug"):
            return self.checker(procedure, result, context, rig_slug=rig_slug)
        return self.checker(procedure, result, context)


def _rider_reasons(cue: CueInput, riders: Sequence[Rider], starts_at: datetime, ctx: _Context):
    """The rules that depend on who rides: load, clearance, rehearsal. Returns (result, reasons)."""
    result = ctx.solver(cue.rig_model, [r.mass_kg for r in riders])
    reasons = load_reasons(result)
    reasons += uncleared_riders(riders, cue.rig)
    reasons += unrehearsed_riders(riders, cue.rig, cue.cast_since, starts_at, ctx.rehearsals)
    return result, reasons


def _names(people: Iterable) -> str:
    names = [p.name for p in people]
    return " and ".join(names) if len(names) <= 2 else ", ".join(names[:-1]) + " and " + names[-1]


def _crew_fix(reason: Reason, cue: CueInput, pool: Sequence[CrewMember], on: date) -> Reason:
    """Name the people on the crew list who could take the role of a staffing reason."""
    role = reason.limit.split(":", 1)[1]
    busy = {p.person_id for _, p in cue.crew}
    able = [p for p in pool if role in p.roles and p.person_id not in busy
            and (t := p.training.get(cue.rig)) is not None and t.trained_on <= on <= t.expires_on]
    if able:
        fix = f"assign a person trained on {cue.rig} to {role}: {_names(able)}"
    else:
        fix = f"train someone on {cue.rig} for {role}: nobody free on the crew list is trained and current"
    return replace(reason, fix=fix)


def cue_night(cue: CueInput, perf: PerformanceInput, ctx: _Context) -> CueNight:
    """Return one cue's :class:`CueNight` with its verdict, reasons and fixes."""
    crew = tuple(Assignment(role, p.person_id, p.name) for role, p in cue.crew)
    base = CueNight(cue_id=cue.cue_id, number=cue.number, name=cue.name,
                    riders=tuple(r.name for r in cue.riders), crew=crew)
    if not cue.rig:
        return base
    on = perf.starts_at.date()
    procedure = cue.procedure
    reasons: list[Reason] = []
    result = None
    rider_reasons: list[Reason] = []
    if cue.rig_model is None:
        reasons.append(Reason(f"rig {cue.rig!r} has no readable rig file on record", limit="rig"))
    else:
        result, rider_reasons = _rider_reasons(cue, cue.riders, perf.starts_at, ctx)
        reasons += rider_reasons
    context = {"load": ctx.solver.as_dict(result) if result is not None else None,
               "riders": [r.name for r in cue.riders],
               "crew": {role: [p.name for r2, p in cue.crew if r2 == role] for role, _ in cue.crew},
               "performance": {"id": perf.performance_id, "starts_at": perf.starts_at.isoformat()},
               "cue": {"number": cue.number, "name": cue.name}}
    findings, rule_set = ctx.check(procedure, result, context, cue.rig) if result is not None else (None, None)
    reasons += procedure_reasons(procedure, findings)
    staffing = unstaffed_roles(procedure, cue.crew, cue.riders, cue.rig_model)
    staffing += role_not_held(cue.crew)
    staffing += untrained_crew(cue.crew, cue.rig, on)
    reasons += [_crew_fix(r, cue, perf.crew_pool, on) if r.limit.split(":")[0] in ("unstaffed", "training", "role")
                and not r.limit.endswith(":" + RIDER_ROLE) else r for r in staffing]
    reasons += acts_and_checks(procedure, cue.crew, cue.riders)
    reasons += list(cue.readiness)

    fixes = _fixes(cue, perf, reasons, rider_reasons, ctx) if verdict_of(reasons) == "blocked" else ()
    return replace(
        base,
        rig=cue.rig,
        rig_name=getattr(cue.rig_model, "name", None),
        rig_version=ctx.solver.version(cue.rig_model),
        procedure_title=getattr(procedure, "title", None),
        procedure_version=ctx.solver.version(procedure),
        rider_total_kg=getattr(result, "rider_mass_kg", None) if result is not None else None,
        load=ctx.solver.as_dict(result) if result is not None else None,
        verdict=verdict_of(reasons),
        reasons=tuple(reasons),
        fixes=tuple(fixes),
        signal=getattr(procedure, "signal", None),
        findings=tuple(findings or ()),
        rule_set_version=rule_set,
        procedure=procedure,
    )


def _short(reason: Reason) -> str:
    """A few words for a reason, for a fix line that must not read like tonight's block."""
    words = reason.limit.split(":")[0].replace("_", " ")
    if reason.value is not None and reason.allowed is not None and reason.allowed:
        return f"{words} at {100 * reason.value / reason.allowed:.0f}% of its limit"
    return words


def _fixes(cue: CueInput, perf: PerformanceInput, reasons: list[Reason], rider_reasons: list[Reason],
           ctx: _Context) -> list[str]:
    """What would clear a blocked cue: the balance advisor, the other cast, a trained person."""
    fixes: list[str] = []
    blocked = [r for r in reasons if r.level == "blocked"]
    load_blocks = []
    if cue.rig_model is not None:
        result = ctx.solver(cue.rig_model, [r.mass_kg for r in cue.riders])  # cached
        load_blocks = [r for r in result.reasons if r.level == "blocked"]
    if load_blocks:
        advice = ctx.solver.advice(ctx.advisor, cue.rig_model, [r.mass_kg for r in cue.riders])
        if advice:
            fixes.append(advice)
        payload = next((r for r in load_blocks if r.limit == "rated_payload"), None)
        if payload is not None and payload.value is not None and payload.allowed is not None:
            fixes.append(f"bring the riders' total (with allowance) down by {payload.value - payload.allowed:.0f} kg "
                         f"to the rated payload of {payload.allowed:.0f} kg")
    # Only what tonight's riders cause (load, clearance, their rehearsal) can another cast clear.
    rider_blocks = [r for r in rider_reasons if r.level == "blocked"]
    if rider_blocks and cue.rig_model is not None:
        tonight = sorted(r.person_id for r in cue.riders)
        for cast_name, cast in sorted(cue.casts.items()):
            if sorted(r.person_id for r in cast) == tonight or not cast:
                continue
            _, other = _rider_reasons(cue, cast, perf.starts_at, ctx)
            still = [r for r in other if r.level == "blocked"]
            if still:
                fixes.append(f"the other cast ({cast_name}: {_names(cast)}) does not clear it "
                             f"({'; '.join(dict.fromkeys(_short(r) for r in still))})")
            else:
                fixes.append(f"the other cast ({cast_name}: {_names(cast)}) clears the load and casting checks")
    for r in blocked:
        if r.fix and r.fix not in fixes:
            fixes.append(r.fix)
    return fixes


def night_plan(perf: PerformanceInput, *, rehearsals: Iterable[Rehearsal] | None = None,
               solver: RigSolver | None = None,
               advisor: Callable[[Any, Sequence[float]], str | None] = advisor_text,
               checker: Callable[..., tuple[list[str] | None, str | None]] = check_cue_procedure) -> NightPlan:
    """Return the performance's :class:`NightPlan` with every cue's verdict.

    :param rehearsals: rehearsal records (rig care's); None when none are kept, which
        turns the rehearsal rule off rather than blocking every cue.
    :param solver: a shared :class:`RigSolver` to reuse solves across a season.
    :param advisor: ``advisor(rig_model, rider_masses_kg) -> text or None`` (the balance advisor).
    :param checker: ``checker(procedure, rig_result, context) -> (finding lines or None, rule-set version)``.
    """
    ctx = _Context(solver or RigSolver(), list(rehearsals) if rehearsals is not None else None, advisor, checker)
    cues = tuple(cue_night(c, perf, ctx) for c in perf.cues)
    return NightPlan(performance_id=perf.performance_id, production=perf.production, company=perf.company,
                     venue=perf.venue, starts_at=perf.starts_at, stage_manager=perf.stage_manager,
                     cues=cues, readiness=tuple(perf.readiness))
