"""The procedure checker: twelve named rules, each with its source beside it.

:func:`check_procedure` simulates the rig's state step by step (start at rest unless
the ``Start:`` header says otherwise, walk the main phases in order, then run the
stop phase's if-then steps from every state the main sequence reached) and returns
one :class:`Finding` per thing wrong. The rules read the same simulation; each is a
plain function in :data:`RULES` whose docstring names where it comes from, so a
venue can read what was checked. :data:`RULE_SET_VERSION` changes whenever a rule,
the state vocabulary or the word lists change; the crew sheet prints it.

Physics comes from the rig solver's result: ``load ok`` holds iff its ``verdict`` is
not ``blocked``; the empty platform rises by itself iff ``empty_operator_force_n < 0``.
Without a rig result the checker assumes the load is ok (tonight's verdict decides at
the cue) and that the empty platform may rise (the cautious case).
"""

from __future__ import annotations

import bisect
import hashlib
import inspect
import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from functools import cached_property
from typing import Any, Callable, Iterable, Iterator

from showops.procedure.model import REST_STATE, STATE_VALUES, Procedure, Step
from showops.procedure.parse import STATE_WORDS, state_problem
from showops.procedure.render import (
    bind_placeholder,
    check_placeholder,
    complete_context,
    find_placeholders,
    find_statements,
    find_unclosed,
    schema_context,
)

#: The order states are shown in.
_STATE_ORDER = ("brake", "platform", "rider", "strap", "area")
#: Subjects whose change needs a second person's check (rule 6) and a reason (rule 11).
CHECKED_SUBJECTS = ("brake", "rider", "strap")
CRITICAL_SUBJECTS = ("brake", "platform", "rider", "strap")
#: Words that say nothing about what was observed (rule 10; Degani & Wiener 1990).
EMPTY_REPLY_WORDS = frozenset("""
    ok okay o k k checked check checking done set yes yeah yep yup roger confirmed confirm correct
    complete completed ready good fine affirmative copy copied understood all right alright sure
    that's that it is go going standing by received acknowledged wilco noted fine thanks thank you
""".split())
#: A signal written as one of these is no signal (rule 12).
EMPTY_SIGNALS = frozenset({"", "-", "?", "none", "tbd", "tba", "todo", "n/a", "na", "nil", "later"})
#: The state from which the stop phase must be able to lower a rider (rule 12):
#: stuck at height, brake holding, rider strapped in.
STUCK_AT_HEIGHT: dict[str, str] = {"brake": "on", "platform": "up", "rider": "aboard", "strap": "fastened"}


@dataclass(frozen=True)
class Finding:
    """One thing wrong with a procedure.

    ``state`` is the text of the state found (e.g. "brake off, platform up, rider
    aboard, strap fastened") or the text that could not be read.
    """

    line: int
    step: str | None
    rule: str
    message: str
    state: str = ""

    def format(self, path: str) -> str:
        """Return ``FILE:LINE: step "TITLE": what is wrong (state found)``."""
        where = f'step "{self.step}": ' if self.step else ""
        found = f" ({self.state})" if self.state else ""
        return f"{path}:{self.line}: {where}{self.message}{found}"

    def to_dict(self) -> dict[str, Any]:
        """Return the JSON-ready finding (keys ``line``, ``step``, ``rule``, ``message``, ``state``)."""
        return {"line": self.line, "step": self.step, "rule": self.rule, "message": self.message,
                "state": self.state}


@dataclass(frozen=True)
class Physics:
    """What the rig's computed loads tell the checker."""

    load_ok: bool = True
    load_reason: str = ""
    empty_rises: bool = True
    empty_pull_n: float | None = None
    known: bool = False

    @classmethod
    def from_result(cls, rig_result: Any) -> "Physics":
        """Read ``verdict``, ``reasons`` and ``empty_operator_force_n`` (object or dict)."""
        if rig_result is None:
            return cls()

        def get(name, default=None):
            if isinstance(rig_result, Mapping):
                return rig_result.get(name, default)
            return getattr(rig_result, name, default)

        verdict = get("verdict", "ok")
        reasons = get("reasons", ()) or ()
        texts = [r.get("text", "") if isinstance(r, Mapping) else getattr(r, "text", str(r)) for r in reasons]
        empty = get("empty_operator_force_n")
        return cls(load_ok=verdict != "blocked", load_reason="; ".join(t for t in texts if t)[:200],
                   empty_rises=True if empty is None else float(empty) < 0,
                   empty_pull_n=None if empty is None else float(empty), known=True)


def format_state(state: Mapping[str, str]) -> str:
    """Return ``"brake on, platform down, rider off, strap open"`` (and ``area clear`` if set)."""
    return ", ".join(f"{k} {state[k]}" for k in _STATE_ORDER if k in state)


def _valid(words: Iterable[str]) -> list[tuple[str, str]]:
    """Known state words as (subject, value) pairs; unknown ones are rule 1's business."""
    return [tuple(w.split(" ", 1)) for w in words if w in STATE_WORDS]  # type: ignore[misc]


def _apply(state: Mapping[str, str], step: Step) -> dict[str, str]:
    after = dict(state)
    for subject, value in _valid(step.sets):
        if subject != "load":
            after[subject] = value
    return after


def _holds(word: tuple[str, str], state: Mapping[str, str], physics: Physics) -> bool:
    subject, value = word
    if subject == "load":
        return physics.load_ok
    return state.get(subject) == value


def _field_line(step: Step, name: str) -> int:
    return step.field_lines.get(name, step.line)


@dataclass(frozen=True)
class Break:
    """A transition that breaks rule 3, 4 or 5."""

    rule: str
    line: int
    message: str


def transition_breaks(step: Step, before: Mapping[str, str], after: Mapping[str, str],
                      physics: Physics, *, in_stop: bool = False) -> list[Break]:
    """Return how moving from ``before`` to ``after`` by ``step`` breaks rules 3 to 5.

    ``in_stop``: the step runs in the stop phase, which only ever runs after a cue that
    tonight's load verdict let start; the verdict itself is judged at the main releases.
    """
    out = []
    line = _field_line(step, "sets")
    if before.get("rider") != after.get("rider"):
        wrong = [f"the {what} is {s[what]}" for s, when in ((before, "before"), (after, "after"))
                 for what, good in (("brake", "on"), ("platform", "down")) if s.get(what) != good]
        if wrong:
            act = "boards" if after.get("rider") == "aboard" else "leaves"
            out.append(Break(rider_boards_and_leaves_braked_and_down.__name__, line,
                             f"rider {act} while {' and '.join(dict.fromkeys(wrong))}: a rider boards or "
                             "leaves only with the brake on and the platform down"))
    if before.get("brake") == "on" and after.get("brake") == "off":
        rule = brake_released_only_when_safe.__name__
        if "load ok" not in step.needs:
            out.append(Break(rule, line, 'releases the brake without needing "load ok": add "load ok" to '
                                         "its needs so tonight's load verdict gates the release"))
        if not physics.load_ok and not in_stop:
            out.append(Break(rule, line, "releases the brake but the load is not ok (rig verdict blocked"
                                         + (f": {physics.load_reason})" if physics.load_reason else ")")))
        if physics.empty_rises and (before.get("rider") != "aboard" or after.get("rider") != "aboard"):
            pull = (f" (pull with nobody aboard {physics.empty_pull_n:.0f} N)"
                    if physics.empty_pull_n is not None else " (no rig given: assumed to rise)")
            out.append(Break(rule, line, "releases the brake with no rider aboard on a rig whose empty "
                                         f"platform rises by itself{pull}"))
    if before.get("platform") != after.get("platform"):
        if before.get("brake") != "off" or after.get("brake") != "off":
            verb = "raises" if after.get("platform") == "up" else "lowers"
            out.append(Break(platform_moves_only_with_brake_off.__name__, line,
                             f"{verb} the platform while the brake is on: release the brake in its own "
                             "step first"))
    return out


@dataclass(frozen=True)
class Visit:
    """One main step as the simulation reached it."""

    step: Step
    before: dict[str, str]
    after: dict[str, str]


@dataclass(frozen=True)
class StopRun:
    """The stop phase run from one state."""

    start: dict[str, str]
    end: dict[str, str]
    breaks: tuple[tuple[Step, Break], ...]
    lowered_rider: bool

    def safe_end(self) -> bool:
        return self.end.get("brake") == "on" and self.end.get("platform") == "down"


@dataclass
class CheckRun:
    """Everything the rules read: the procedure, the physics and the simulation."""

    procedure: Procedure
    physics: Physics
    context: Mapping[str, Any] | None = None
    load_keys: tuple[str, ...] | None = None
    rig_slug: str | None = None
    _stop_cache: dict = field(default_factory=dict)

    @cached_property
    def visits(self) -> list[Visit]:
        state = dict(self.procedure.start)
        out = []
        for step in self.procedure.main_steps:
            after = _apply(state, step)
            out.append(Visit(step, state, after))
            state = after
        return out

    @cached_property
    def reached(self) -> list[tuple[dict[str, str], Step | None]]:
        """Each state of the main sequence and the step that led to it (None: the start)."""
        return [(dict(self.procedure.start), None)] + [(v.after, v.step) for v in self.visits]

    def stop_from(self, state: Mapping[str, str]) -> StopRun:
        key = tuple(sorted(state.items()))
        if key not in self._stop_cache:
            current = dict(state)
            breaks = []
            lowered = False
            for step in self.procedure.stop_steps:
                # "load ok" is taken as holding here: the stop phase only runs in a cue whose
                # main release needed it (rules 2 and 4 judge tonight's verdict there).
                if not all(w[0] == "load" or _holds(w, current, self.physics) for w in _valid(step.needs)):
                    continue
                after = _apply(current, step)
                breaks.extend((step, b) for b in transition_breaks(step, current, after, self.physics,
                                                                   in_stop=True))
                if current.get("platform") == "up" and after.get("platform") == "down" \
                        and current.get("rider") == "aboard":
                    lowered = True
                current = after
            self._stop_cache[key] = StopRun(dict(state), current, tuple(breaks), lowered)
        return self._stop_cache[key]

    @cached_property
    def bound(self) -> Mapping[str, Any]:
        if self.context is not None:
            return self.context
        return schema_context(load_keys=self.load_keys, roles=self.procedure.roles)

    @cached_property
    def _headings(self) -> tuple[list[int], list[Step | None]]:
        marks: list[tuple[int, Step | None]] = [(p.line, None) for p in self.procedure.phases]
        marks += [(s.line, s) for p in self.procedure.phases for s in p.steps]
        marks.sort(key=lambda m: m[0])
        return [m[0] for m in marks], [m[1] for m in marks]

    def step_at(self, line: int) -> Step | None:
        """The step whose text holds ``line`` (None above the first step of a phase)."""
        lines, steps = self._headings
        index = bisect.bisect_right(lines, line) - 1
        return steps[index] if index >= 0 else None


def _title(step: Step | None) -> str | None:
    return step.title if step is not None else None


def _after_text(step: Step | None) -> str:
    return "the start" if step is None else f'the state after step {step.number} "{step.title}"'


# -- the rules -------------------------------------------------------------------------
# Each takes the CheckRun and yields Findings. The docstring's first line says what it
# checks; "Source:" names where it comes from ("from memory" where a clause could not
# be checked at the time of writing).

def file_is_well_formed(run: CheckRun) -> Iterator[Finding]:
    """Rule 1: every role is in Roles, every field and state is known, every step has a
    `by`, no two steps in a phase share a title, and the file can be read as written.

    Source: FAA AC 120-71B (standard operating procedures): who calls, who does and who
    checks is explicit for every step; US DOE-STD-1029-92 (writer's guide for technical
    procedures): one defined vocabulary, no ambiguous terms.
    """
    name = file_is_well_formed.__name__
    proc = run.procedure
    for problem in proc.problems:
        yield Finding(problem.line, problem.step, name, problem.message, problem.found)
    if not proc.rig:
        yield Finding(proc.header_lines.get("rig", 1), None, name,
                      'no "Rig:" header: name the rig this procedure is checked against (e.g. "Rig: orchard-lift")')
    elif run.rig_slug and run.rig_slug != proc.rig:
        yield Finding(proc.header_lines.get("rig", 1), None, name,
                      f'written for rig "{proc.rig}" but checked against rig "{run.rig_slug}"', proc.rig)
    if not proc.roles:
        yield Finding(proc.header_lines.get("roles", 1), None, name,
                      'no "Roles:" header: list the roles, e.g. "Roles: caller, spotter, brake, lifters, rider"')
    phase_titles: dict[str, int] = {}
    for phase in proc.phases:
        if phase.title.casefold() in phase_titles:
            yield Finding(phase.line, None, name, f'two phases titled "{phase.title}" (first at line '
                                                  f'{phase_titles[phase.title.casefold()]}): step keys would clash',
                          phase.title)
        phase_titles.setdefault(phase.title.casefold(), phase.line)
        seen: dict[str, int] = {}
        for step in phase.steps:
            key = step.title.casefold()
            if key in seen:
                yield Finding(step.line, step.title, name,
                              f'two steps titled "{step.title}" in phase "{phase.title}" (first at line {seen[key]})')
            else:
                seen[key] = step.line
            if step.field_lines and step.by is None and "by" not in step.field_lines:
                yield Finding(step.line, step.title, name, "step has no `by`: name the role that acts")
            for field_name in ("by", "go", "check"):
                role = getattr(step, field_name)
                if role is None or not proc.roles:
                    continue
                if role not in proc.roles:
                    hint = (" (one role per field)" if "," in role or " and " in role else "")
                    yield Finding(_field_line(step, field_name), step.title, name,
                                  f'role "{role}" in `{field_name}` is not in Roles ({", ".join(proc.roles)}){hint}',
                                  role)
            for field_name in ("needs", "sets"):
                for word in getattr(step, field_name):
                    why = state_problem(word)
                    if why:
                        yield Finding(_field_line(step, field_name), step.title, name, why, word)
                    elif field_name == "sets" and word == "load ok":
                        yield Finding(_field_line(step, "sets"), step.title, name,
                                      '"load ok" is never set by a step: it holds when the rig\'s verdict for '
                                      "tonight's riders is not blocked; put it in `needs`", word)
            subjects: dict[str, str] = {}
            for subject, value in _valid(step.sets):
                if subjects.get(subject, value) != value:
                    yield Finding(_field_line(step, "sets"), step.title, name,
                                  f"sets both {subject} {subjects[subject]} and {subject} {value}", ", ".join(step.sets))
                subjects[subject] = value


def needs_are_met(run: CheckRun) -> Iterator[Finding]:
    """Rule 2: every `needs` of a main step holds in the state the step is reached in.

    Source: FAA AC 120-71B (challenge and response: each item confirms the condition
    the next relies on); DOE-STD-1029-92 (prerequisites and initial conditions stated
    and met before the step).
    """
    for visit in run.visits:
        step = visit.step
        releases = visit.before.get("brake") == "on" and visit.after.get("brake") == "off"
        unmet = []
        for subject, value in _valid(step.needs):
            if subject == "load" and releases:
                continue  # rule 4 reports a release the load verdict does not allow
            if _holds((subject, value), visit.before, run.physics):
                continue
            if subject == "load":
                unmet.append(f'needs "load ok" but the rig verdict is blocked'
                             + (f" ({run.physics.load_reason})" if run.physics.load_reason else ""))
            elif subject not in visit.before:
                unmet.append(f'needs "{subject} {value}" but no earlier step sets it')
            else:
                unmet.append(f'needs "{subject} {value}" but the {subject} is {visit.before[subject]}')
        if unmet:
            yield Finding(_field_line(step, "needs"), step.title, needs_are_met.__name__, "; ".join(unmet),
                          format_state(visit.before))


def _main_breaks(run: CheckRun, rule: str) -> Iterator[Finding]:
    for visit in run.visits:
        for b in transition_breaks(visit.step, visit.before, visit.after, run.physics):
            if b.rule == rule:
                yield Finding(b.line, visit.step.title, rule, b.message, format_state(visit.before))


def rider_boards_and_leaves_braked_and_down(run: CheckRun) -> Iterator[Finding]:
    """Rule 3: a rider boards or leaves only with the brake on and the platform down.

    Source: common practice, no source (stage safety practice: brake on before a
    rider boards or leaves; the counterweight can lift an emptied platform).
    DGUV Information 215-320 asks for movements of people to be secured against
    unintended motion (from memory).
    """
    yield from _main_breaks(run, rider_boards_and_leaves_braked_and_down.__name__)


def brake_released_only_when_safe(run: CheckRun) -> Iterator[Finding]:
    """Rule 4: the brake comes off only when the step needs `load ok`, the load is ok,
    and, on a rig whose empty platform rises by itself, only with a rider aboard.

    Source: the rig's statics (empty_operator_force_n < 0 means the counterweight lifts
    the empty platform once the brake is off); common practice, no source, for keeping
    the brake on whenever nobody is aboard such a rig.
    """
    yield from _main_breaks(run, brake_released_only_when_safe.__name__)


def platform_moves_only_with_brake_off(run: CheckRun) -> Iterator[Finding]:
    """Rule 5: the platform is raised or lowered only with the brake off (and the brake
    is not released in the same step that moves it).

    Source: DOE-STD-1029-92 (one action per step, in the order done); common practice,
    no source (a brake is not driven against).
    """
    yield from _main_breaks(run, platform_moves_only_with_brake_off.__name__)


def second_person_checks(run: CheckRun) -> Iterator[Finding]:
    """Rule 6: a step that changes the brake, the rider or the strap has a `check` by a
    role other than the one that acts.

    Source: DGUV Information 215-320 (the person who secures a performer is not the one
    who checks it; two-person principle, from memory for the exact clause); FAA AC
    120-71B (crew monitoring and cross-checking).
    """
    name = second_person_checks.__name__
    for step in run.procedure.main_steps + run.procedure.stop_steps:
        subjects = [s for s, _ in _valid(step.sets) if s in CHECKED_SUBJECTS]
        if not subjects:
            continue
        what = " and the ".join(dict.fromkeys(subjects))
        if step.check is None:
            yield Finding(step.line, step.title, name,
                          f"changes the {what} with no `check`: a second role must confirm it")
        elif step.by is not None and step.check == step.by:
            yield Finding(_field_line(step, "check"), step.title, name,
                          f'changes the {what} and is checked by the role that acts ("{step.by}")', step.check)


def ends_at_rest(run: CheckRun) -> Iterator[Finding]:
    """Rule 7: the main sequence ends with the brake on and the platform down.

    Source: DOE-STD-1029-92 (a procedure returns the system to a defined safe state);
    common practice, no source.
    """
    if not run.visits:
        return
    last = run.visits[-1]
    end = last.after
    if end.get("brake") != "on" or end.get("platform") != "down":
        yield Finding(last.step.line, last.step.title, ends_at_rest.__name__,
                      "the procedure ends without the brake on and the platform down", format_state(end))


def stop_phase_makes_safe(run: CheckRun) -> Iterator[Finding]:
    """Rule 8: there is a stop phase, and from every state the main sequence reaches it
    ends with the brake on and the platform down without breaking rules 3 to 5.

    Source: DOE-STD-1029-92 (contingency actions written for interruptions); DGUV
    Information 215-320 §5.3 and §6 (a written path for abnormal situations while a
    person is carried; from memory for the section numbers).
    """
    name = stop_phase_makes_safe.__name__
    proc = run.procedure
    if not proc.stop_phases:
        yield Finding(1, None, name, 'no stop phase: add a "## ..." phase with "- phase: stop" whose steps '
                                     "bring the brake on and the platform down from any point")
        return
    stop_line = proc.stop_phases[0].line
    reported: set = set()
    for state, came_from in run.reached:
        result = run.stop_from(state)
        for step, b in result.breaks:
            key = (step.line, b.message)
            if key in reported:
                continue
            reported.add(key)
            yield Finding(b.line, step.title, name, f"from {_after_text(came_from)}: {b.message}",
                          format_state(state))
        if not result.safe_end():
            key = ("end", format_state(result.end))
            if key in reported:
                continue
            reported.add(key)
            yield Finding(stop_line, None, name,
                          f"from {_after_text(came_from)}, the stop phase ends with {format_state(result.end)}; "
                          "it must end with the brake on and the platform down", format_state(state))


def placeholders_bound(run: CheckRun) -> Iterator[Finding]:
    """Rule 9: every `{{ ... }}` placeholder names something bound (the rig result, the
    riders, the crew by role, the performance, the cue) and nothing else.

    Source: common practice, no source (a crew sheet must not print a blank where a name
    or a force belongs); Jinja2's sandbox documentation for what is refused.
    """
    name = placeholders_bound.__name__
    text = run.procedure.text
    for placeholder in find_placeholders(text):
        if run.context is not None:
            _, problem = bind_placeholder(placeholder.expression, run.context)
        else:
            problem = check_placeholder(placeholder.expression, run.bound)
        if problem is not None:
            yield Finding(placeholder.line, _title(run.step_at(placeholder.line)), name, problem.message,
                          placeholder.text[:80])
    for line in find_unclosed(text):
        yield Finding(line, _title(run.step_at(line)), name, "a placeholder opened with {{ is never closed with }}")
    for line, tag in find_statements(text):
        yield Finding(line, _title(run.step_at(line)), name,
                      "only {{ ... }} placeholders are bound; a {% ... %} tag is shown as written", tag)


def replies_state_what_is_seen(run: CheckRun) -> Iterator[Finding]:
    """Rule 10: a `reply` names the state or value observed, never just "OK",
    "checked", "done" or "set".

    Source: Degani & Wiener, "Human factors of flight-deck checklists: the normal
    checklist", NASA CR-177549 (1990): the response states the actual status observed.
    """
    name = replies_state_what_is_seen.__name__
    for step in run.procedure.main_steps + run.procedure.stop_steps:
        if step.reply is None:
            continue
        words = re.findall(r"[a-z0-9']+", step.reply.lower())
        if not words or all(w in EMPTY_REPLY_WORDS for w in words):
            yield Finding(_field_line(step, "reply"), step.title, name,
                          f'reply "{step.reply}" names no state or value: answer with what is observed '
                          '(e.g. "Brake on, handle locked")', step.reply)


def reasons_and_completion_calls(run: CheckRun) -> Iterator[Finding]:
    """Rule 11: a step that changes the brake, the platform, the rider or the strap says
    `why`, and the last step of every phase has a `say` (the phase's completion call).

    Source: DOE-STD-1029-92 (the reason for critical steps, so nobody "improves" them
    away); FAA AC 120-71B and Transport Canada SOP guidance (a completion call at the
    end of each phase; from memory for the latter).
    """
    name = reasons_and_completion_calls.__name__
    for step in run.procedure.main_steps + run.procedure.stop_steps:
        subjects = [s for s, _ in _valid(step.sets) if s in CRITICAL_SUBJECTS]
        if subjects and not step.why:
            yield Finding(step.line, step.title, name,
                          f"changes the {' and the '.join(dict.fromkeys(subjects))} with no `why`: give the reason "
                          "so nobody improves it away")
    for phase in run.procedure.phases:
        if phase.steps and not phase.steps[-1].say:
            last = phase.steps[-1]
            yield Finding(last.line, last.title, name,
                          f'last step of phase "{phase.title}" has no `say`: end the phase with a completion call')


def emergency_signal_and_lowering_path(run: CheckRun) -> Iterator[Finding]:
    """Rule 12: the header names the rider's agreed emergency signal, and the stop phase
    can lower a rider who is unwell or stuck at height and get them off.

    Source: DGUV Information 215-320 §5.3 and §6 (an agreed emergency signal with the
    performer, and a rescue path for a person stuck or unwell; from memory for the
    section numbers).
    """
    name = emergency_signal_and_lowering_path.__name__
    proc = run.procedure
    if (proc.signal or "").strip().lower() in EMPTY_SIGNALS:
        yield Finding(proc.header_lines.get("signal", 1), None, name,
                      'no agreed emergency signal: add "Signal: ..." to the header (e.g. "Signal: arms crossed '
                      'on the chest") and rehearse it with the rider', proc.signal or "")
    if not proc.stop_phases:
        return  # rule 8 reports the missing stop phase
    starts = [(s, f) for s, f in run.reached if s.get("rider") == "aboard" and s.get("platform") == "up"]
    starts.append((dict(STUCK_AT_HEIGHT), None))
    for state, came_from in starts:
        result = run.stop_from(state)
        if result.lowered_rider and result.safe_end() and result.end.get("rider") == "off" and not result.breaks:
            continue
        where = "a rider stuck at height" if came_from is None else _after_text(came_from)
        yield Finding(proc.stop_phases[0].line, None, name,
                      f"the stop phase has no path for lowering a rider who is unwell or stuck: from {where} "
                      f"it ends with {format_state(result.end)}", format_state(state))
        return


#: The rules in order (rule 1 first). Each is ``rule(run) -> iterator of Finding``.
RULES: tuple[Callable[[CheckRun], Iterable[Finding]], ...] = (
    file_is_well_formed,
    needs_are_met,
    rider_boards_and_leaves_braked_and_down,
    brake_released_only_when_safe,
    platform_moves_only_with_brake_off,
    second_person_checks,
    ends_at_rest,
    stop_phase_makes_safe,
    placeholders_bound,
    replies_state_what_is_seen,
    reasons_and_completion_calls,
    emergency_signal_and_lowering_path,
)

RULE_NUMBERS: dict[str, int] = {rule.__name__: i for i, rule in enumerate(RULES, 1)}


def _rule_set_version() -> str:
    digest = hashlib.sha256()
    for rule in RULES + (transition_breaks,):
        try:
            digest.update(inspect.getsource(rule).encode())
        except (OSError, TypeError):
            digest.update((rule.__name__ + (rule.__doc__ or "")).encode())
    digest.update(repr((STATE_VALUES, REST_STATE, sorted(EMPTY_REPLY_WORDS), sorted(EMPTY_SIGNALS),
                        STUCK_AT_HEIGHT, CHECKED_SUBJECTS, CRITICAL_SUBJECTS)).encode())
    return digest.hexdigest()[:12]


#: A short hash of the rules' code and vocabulary: changes whenever what is checked does.
RULE_SET_VERSION: str = _rule_set_version()


def check_procedure(procedure: Procedure, *, rig_result: Any = None, context: Mapping[str, Any] | None = None,
                    rig_slug: str | None = None) -> list[Finding]:
    """Check ``procedure`` against every rule in :data:`RULES`.

    :param rig_result: the rig solver's result (or its ``to_dict()``) for tonight's
        riders; without it the load is taken as ok and the empty platform as rising.
    :param context: the values placeholders are bound to (see
        :func:`~showops.procedure.render.render_context`); every role of the procedure
        counts as bound (an empty list where nobody is cast) and ``load`` defaults to
        ``rig_result``. Without it, placeholders are checked against the names that
        can be bound.
    :param rig_slug: the slug of the rig file checked against; a finding when it is not
        the procedure's ``Rig:``.
    :returns: the findings sorted by line then rule; empty when the procedure is clean.
    """
    load_keys = None
    data = None
    if rig_result is not None:
        data = rig_result if isinstance(rig_result, Mapping) else rig_result.to_dict()
        load_keys = tuple(data)
    if context is not None:
        context = complete_context(context, roles=procedure.roles, load=data)
    run = CheckRun(procedure, Physics.from_result(rig_result), context=context, load_keys=load_keys,
                   rig_slug=rig_slug)
    findings: list[Finding] = []
    for rule in RULES:
        findings.extend(rule(run))
    findings.sort(key=lambda f: (f.line, RULE_NUMBERS[f.rule]))
    return findings
