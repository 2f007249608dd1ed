"""The cue runner: a pure state machine over the show log's rows.

A cue's live state is never stored apart from the log: :func:`replay` folds the
cue's ``step_log`` rows into a :class:`CueState`, and :func:`decide` turns one attempt
(start, standby, go, confirm, check, hold, resume, end) into the rows to append, or
into a refusal whose reason is said in words a crew understands. The refusal is
itself a row (``refused``), so every refused attempt is kept.

The rules (each refusal has a ``code``):

- a blocked cue cannot be started (``blocked``), and nothing runs before the start
  (``not_started``) or after the end (``finished``);
- HOLD stops the cue for everyone (``held``); only the stage manager resumes
  (``not_stage_manager``);
- a step is confirmed only by a person assigned to its ``by`` role tonight
  (``wrong_person``), only when every step before it is confirmed and checked
  (``out_of_order``) and its ``needs`` hold (``needs``);
- a ``check`` needs a second person in the check role, never the one who acted
  (``same_person``), and only after the step is confirmed (``not_confirmed``);
- standby before go: the ``go`` of a step is enabled only after every person in the
  acting role answered "standing by" (``no_standby``), and a step with a ``go`` is
  confirmed only after it (``no_go``).

Two-person verification of securing a rider: German statutory guidance on equipment
for moving people in performances (DGUV Information 215-320), from memory; standby
before go and HOLD: common practice in stage management, no source; confirmation in
order with a challenge and a response: FAA AC 120-71 (standard operating procedures).
"""

from __future__ import annotations

import json
from functools import lru_cache
from dataclasses import dataclass, field, replace
from datetime import datetime, timezone
from typing import Any, Iterable, Literal, Mapping, Sequence

from showops.procedure.model import REST_STATE, Step
from showops.verdict import Reason

ActionKind = Literal["start", "standby", "go", "confirm", "check", "hold", "resume", "end"]
ACTIONS: tuple[str, ...] = ("start", "standby", "go", "confirm", "check", "hold", "resume", "end")
CueStatus = Literal["waiting", "running", "held", "complete", "ended"]
StepStatus = Literal["waiting", "due", "confirmed", "checked"]

#: The app role that may start, resume and end cues and sign off the night.
STAGE_MANAGER = "stage_manager"

#: Roles held by performers, who carry no screen on stage: their answer (the
#: ``reply`` of the step) is heard and confirmed by the person in the other role,
#: and the step's check still needs a third person. Used only when nobody is
#: assigned to the role itself tonight. Common practice, no source.
SPOKEN_FOR: dict[str, str] = {"rider": "caller"}

#: The events the runner writes and replays.
CUE_EVENTS: tuple[str, ...] = ("cue_started", "standby", "go", "step_confirmed", "check_confirmed",
                               "refused", "hold", "resume", "cue_completed")


@dataclass(frozen=True)
class Actor:
    """Who is trying to act: a person, their app roles, the device they use."""

    person_id: int | None
    name: str
    roles: frozenset[str] = frozenset()
    device: str | None = None

    @property
    def is_stage_manager(self) -> bool:
        return STAGE_MANAGER in self.roles


@dataclass(frozen=True)
class Crew:
    """A person assigned to a role on the cue tonight."""

    role: str
    person_id: int
    name: str


@dataclass(frozen=True)
class CueSetup:
    """What the runner must know about one cue tonight (from the night plan)."""

    performance_id: int
    cue_id: int
    number: str
    name: str
    steps: tuple[Step, ...]
    crew: tuple[Crew, ...] = ()
    verdict: str = "ok"
    reasons: tuple[Reason, ...] = ()
    fixes: tuple[str, ...] = ()
    start: Mapping[str, str] = field(default_factory=lambda: dict(REST_STATE))
    procedure_version: str | None = None
    rig_version: str | None = None

    def people_in(self, role: str) -> tuple[Crew, ...]:
        return tuple(c for c in self.crew if c.role == role)

    def acting_people(self, role: str | None) -> tuple[Crew, ...]:
        """The people whose screen answers for ``role`` (see :data:`SPOKEN_FOR`)."""
        if role is None:
            return ()
        people = self.people_in(role)
        if not people and role in SPOKEN_FOR:
            people = self.people_in(SPOKEN_FOR[role])
        return people

    @property
    def label(self) -> str:
        return f"cue {self.number} '{self.name}'"


@dataclass(frozen=True)
class Action:
    """One attempt from a screen."""

    kind: ActionKind
    actor: Actor
    step_key: str | None = None
    client_id: str | None = None
    device_at: str | None = None
    note: str | None = None


@dataclass
class StepState:
    step: Step
    due_at: datetime | None = None
    standing_by: dict[int, datetime] = field(default_factory=dict)
    go_at: datetime | None = None
    go_by: str | None = None
    confirmed_at: datetime | None = None
    confirmed_by: tuple[int | None, str] | None = None
    checked_at: datetime | None = None
    checked_by: tuple[int | None, str] | None = None

    @property
    def done(self) -> bool:
        return self.confirmed_at is not None and (self.step.check is None or self.checked_at is not None)

    @property
    def started_at(self) -> datetime | None:
        """Where the step's ``hold`` is counted from: its go, else when it fell due."""
        return self.go_at or self.due_at


@dataclass
class CueState:
    """A cue's live state, replayed from its log rows."""

    setup: CueSetup
    status: CueStatus = "waiting"
    started_at: datetime | None = None
    held_at: datetime | None = None
    held_by: str | None = None
    finished_at: datetime | None = None
    states: dict[str, str] = field(default_factory=dict)
    steps: list[StepState] = field(default_factory=list)
    last_id: int = 0

    @property
    def current(self) -> StepState | None:
        """The first step not yet done (confirmed and, if it has one, checked)."""
        # Steps are done in order, so the first not done only moves forward: keep a cursor.
        cursor = self.__dict__.get("_cursor", 0)
        while cursor < len(self.steps) and self.steps[cursor].done:
            cursor += 1
        self.__dict__["_cursor"] = cursor
        return self.steps[cursor] if cursor < len(self.steps) else None

    def find(self, key: str | None) -> StepState | None:
        index = self.__dict__.get("_by_key")
        if index is None or len(index) != len(self.steps):
            index = self.__dict__["_by_key"] = {s.step.key: s for s in reversed(self.steps)}
        return index.get(key) if key is not None else None


@dataclass(frozen=True)
class Refusal:
    """Why an attempt was refused: a code for programs and a sentence for people."""

    code: str
    reason: str


@dataclass(frozen=True)
class Decision:
    """The rows to append for one attempt; ``refusal`` is set when it was refused
    (then ``events`` holds the single ``refused`` row)."""

    events: tuple[dict[str, Any], ...]
    refusal: Refusal | None = None


def new_state(setup: CueSetup) -> CueState:
    """Return the state of a cue that has not started."""
    return CueState(setup=setup, states=dict(setup.start), steps=[StepState(s) for s in setup.steps])


def parse_time(text: str) -> datetime:
    """Read an ``at_utc`` value back into an aware datetime."""
    value = datetime.fromisoformat(text)
    return value if value.tzinfo else value.replace(tzinfo=timezone.utc)


def replay(setup: CueSetup, rows: Iterable[Mapping[str, Any]]) -> CueState:
    """Fold the cue's log rows (in id order) into its state."""
    state = new_state(setup)
    for row in rows:
        apply(state, row)
    return state


def apply(state: CueState, row: Mapping[str, Any]) -> None:
    """Apply one log row to ``state`` (rows of other cues or events are ignored)."""
    if row.get("cue_id") != state.setup.cue_id or row.get("performance_id") != state.setup.performance_id:
        return
    state.last_id = max(state.last_id, row.get("id") or 0)
    event = row["event"]
    at = parse_time(row["at_utc"])
    step = state.find(row.get("step_key"))
    who = (row.get("person_id"), row.get("person_name") or "")
    if event == "cue_started":
        state.status, state.started_at = "running", at
        _mark_due(state, at)
    elif event == "hold":
        if state.status in ("waiting", "running"):
            state.held_at, state.held_by = at, row.get("person_name")
            state.status = "held"
    elif event == "resume":
        if state.status == "held":
            state.status = "running" if state.started_at else "waiting"
            state.held_at = state.held_by = None
    elif event == "cue_completed":
        detail = row.get("detail")
        complete = not (isinstance(detail, str) and json.loads(detail).get("complete") is False)
        state.status, state.finished_at = ("complete" if complete else "ended"), at
    elif step is not None and event == "standby" and who[0] is not None:
        step.standing_by[who[0]] = at
    elif step is not None and event == "go":
        step.go_at, step.go_by = at, who[1]
    elif step is not None and event == "step_confirmed":
        step.confirmed_at, step.confirmed_by = at, who
        if step.step.check is None:
            _apply_sets(state, step.step)
            _mark_due(state, at)
    elif step is not None and event == "check_confirmed":
        step.checked_at, step.checked_by = at, who
        _apply_sets(state, step.step)
        _mark_due(state, at)


def _apply_sets(state: CueState, step: Step) -> None:
    for word in step.sets:
        name, _, value = word.partition(" ")
        state.states[name] = value


def _mark_due(state: CueState, at: datetime) -> None:
    nxt = state.current
    if nxt is not None and nxt.due_at is None:
        nxt.due_at = at


def need_holds(state: CueState, need: str) -> bool:
    """Whether a ``needs`` word (``"brake on"``, ``"load ok"``) holds now."""
    name, _, value = need.partition(" ")
    if name == "load":
        return state.setup.verdict != "blocked"
    return state.states.get(name) == value


def step_status(state: CueState, step: StepState) -> StepStatus:
    if step.done:
        return "checked" if step.step.check else "confirmed"
    if step.confirmed_at is not None:
        return "confirmed"
    return "due" if state.current is step and state.status in ("running", "held") else "waiting"


def overdue_s(step: StepState, now: datetime) -> float | None:
    """Seconds past the step's ``hold`` (None when it has none or has not started)."""
    if step.step.hold_s is None or step.started_at is None:
        return None
    end = step.confirmed_at or now
    over = (end - step.started_at).total_seconds() - step.step.hold_s
    return over if over > 0 else None


# --- deciding --------------------------------------------------------------------

def decide(state: CueState, action: Action, now: datetime) -> Decision:
    """Decide one attempt: the rows to append (each with ``at_utc`` = ``now``).

    Never raises for a rule: a refused attempt returns a :class:`Decision` with its
    :class:`Refusal` and the ``refused`` row that records it.

    :raises ValueError: for an unknown action kind (a programming error).
    """
    if action.kind not in ACTIONS:
        raise ValueError(f"unknown action {action.kind!r}; expected one of {', '.join(ACTIONS)}")
    rule = {"start": _start, "standby": _standby, "go": _go, "confirm": _confirm, "check": _check,
            "hold": _hold, "resume": _resume, "end": _end}[action.kind]
    outcome = rule(state, action, now)
    if isinstance(outcome, Refusal):
        step = state.find(action.step_key)
        detail = {"action": action.kind, "code": outcome.code, "reason": outcome.reason}
        if action.step_key and step is None:
            detail["step_key"] = action.step_key
        row = _row(state, action, now, "refused", step, detail)
        return Decision((row,), outcome)
    return Decision(tuple(outcome))


def _row(state: CueState, action: Action, now: datetime, event: str, step: StepState | None = None,
         detail: dict | None = None, *, role: str | None = None, client_id: str | None = None) -> dict[str, Any]:
    setup = state.setup
    return {
        "at_utc": now.astimezone(timezone.utc).isoformat(timespec="milliseconds"),
        "device_at": action.device_at, "event": event,
        "person_id": action.actor.person_id, "person_name": action.actor.name,
        "role": role, "device": action.actor.device,
        "performance_id": setup.performance_id, "cue_id": setup.cue_id,
        "step_key": step.step.key if step else None, "step_number": step.step.number if step else None,
        "procedure_version": setup.procedure_version, "rig_version": setup.rig_version,
        "client_id": client_id if client_id is not None else action.client_id,
        "detail": detail,
    }


def _cap(text: str) -> str:
    """Capitalise the first letter only (``str.capitalize`` would lower the cue's name)."""
    return text[:1].upper() + text[1:]


def _clock(at: datetime | None) -> str:
    return at.astimezone(timezone.utc).strftime("%H:%M:%S") if at else "?"


def _names(people: Sequence[Crew]) -> str:
    return ", ".join(p.name for p in people) or "nobody"


def _gate(state: CueState, action: Action) -> Refusal | None:
    """The refusals shared by every step action: not running, on HOLD, finished."""
    label = state.setup.label
    if state.status == "held":
        return Refusal("held", f"{_cap(label)} is on HOLD (called by {state.held_by} at "
                               f"{_clock(state.held_at)} UTC): wait for the stage manager to resume.")
    if state.status == "waiting":
        return Refusal("not_started", f"{_cap(label)} has not been started: "
                                      f"the stage manager starts it first.")
    if state.status in ("complete", "ended"):
        return Refusal("finished", f"{_cap(label)} is already finished ({state.status}).")
    return None


def _step_for(state: CueState, action: Action) -> StepState | Refusal:
    step = state.find(action.step_key)
    if step is None:
        return Refusal("unknown_step", f"There is no step {action.step_key!r} in "
                                       f"{state.setup.label}'s procedure.")
    return step


def _role_of(state: CueState, actor: Actor, role: str | None) -> str | None:
    """The role ``actor`` answers for when acting as ``role`` (None when not assigned)."""
    if role is None:
        return None
    if any(c.person_id == actor.person_id for c in state.setup.people_in(role)):
        return role
    if not state.setup.people_in(role) and role in SPOKEN_FOR:
        speaker = SPOKEN_FOR[role]
        if any(c.person_id == actor.person_id for c in state.setup.people_in(speaker)):
            return speaker
    return None


def _in_order(state: CueState, step: StepState) -> Refusal | None:
    current = state.current
    if current is None or current is step:
        return None
    pending = current.step
    what = "confirmed" if current.confirmed_at is None else f"checked by the {pending.check}"
    return Refusal("out_of_order", f"Step {step.step.number} '{step.step.title}' cannot be done yet: "
                                   f"step {pending.number} '{pending.title}' is not {what}.")


def _needs(state: CueState, step: StepState) -> Refusal | None:
    missing = [n for n in step.step.needs if not need_holds(state, n)]
    if not missing:
        return None
    if any(n.startswith("load") for n in missing):
        return Refusal("needs", f"Step {step.step.number} '{step.step.title}' needs 'load ok', but "
                                f"{state.setup.label} is blocked tonight.")
    now_words = ", ".join(f"{n.partition(' ')[0]} {state.states.get(n.partition(' ')[0], 'unknown')}"
                          for n in missing)
    return Refusal("needs", f"Step {step.step.number} '{step.step.title}' needs "
                            f"{', '.join(repr(n) for n in missing)}, but now: {now_words}.")


def _start(state: CueState, action: Action, now: datetime):
    setup = state.setup
    actor = action.actor
    if state.status == "held":
        return _gate(state, action)
    if state.status != "waiting":
        return Refusal("already_started", f"{_cap(setup.label)} was already started at "
                                          f"{_clock(state.started_at)} UTC.")
    if not (actor.is_stage_manager or _role_of(state, actor, "caller")):
        return Refusal("not_stage_manager", f"Only the stage manager or tonight's caller starts "
                                            f"{setup.label}.")
    if setup.verdict == "blocked":
        blocking = [r for r in setup.reasons if r.level == "blocked"]
        why = "; ".join(r.text for r in blocking) or "its verdict is blocked"
        fixes = "; ".join(setup.fixes) or "; ".join(r.fix for r in blocking if r.fix)
        text = f"{_cap(setup.label)} is blocked tonight and cannot be started: {why}."
        if fixes:
            text += f" What would clear it: {fixes}."
        return Refusal("blocked", text)
    if not setup.steps:
        return Refusal("no_steps", f"{_cap(setup.label)} has no procedure steps to run.")
    detail = {"verdict": setup.verdict, "steps": len(setup.steps),
              "crew": [{"role": c.role, "person_id": c.person_id, "name": c.name} for c in setup.crew]}
    return [_row(state, action, now, "cue_started", None, detail, role=_role_of(state, actor, "caller"))]


def _standby(state: CueState, action: Action, now: datetime):
    step = _gated_step(state, action)
    if isinstance(step, Refusal):
        return step
    role = _role_of(state, action.actor, step.step.by)
    if role is None:
        return Refusal("wrong_person", f"{action.actor.name} does not act in step {step.step.number} "
                                       f"'{step.step.title}' tonight: standing by is for "
                                       f"{_names(state.setup.acting_people(step.step.by))} ({step.step.by}).")
    if step.confirmed_at is not None:
        return Refusal("already_done", f"Step {step.step.number} '{step.step.title}' is already confirmed.")
    if action.actor.person_id in step.standing_by:
        return Refusal("already_done", f"{action.actor.name} is already standing by for step "
                                       f"{step.step.number} '{step.step.title}'.")
    return [_row(state, action, now, "standby", step, None, role=role)]


def _gated_step(state: CueState, action: Action):
    """Return the step ``action`` names, or the refusal of the cue's gate or of the lookup."""
    return _gate(state, action) or _step_for(state, action)


def _go(state: CueState, action: Action, now: datetime):
    step = _gated_step(state, action)
    if isinstance(step, Refusal):
        return step
    s = step.step
    if s.go is None:
        return Refusal("no_go_field", f"Step {s.number} '{s.title}' has no go: the {s.by} confirms it "
                                      f"when done.")
    role = _role_of(state, action.actor, s.go)
    if role is None:
        return Refusal("wrong_person", f"Only {_names(state.setup.people_in(s.go))} ({s.go}) gives the go "
                                       f"for step {s.number} '{s.title}' tonight, not {action.actor.name}.")
    if step.go_at is not None:
        return Refusal("already_done", f"The go for step {s.number} '{s.title}' was already given at "
                                       f"{_clock(step.go_at)} UTC.")
    refusal = _in_order(state, step) or _needs(state, step)
    if refusal:
        return refusal
    waiting = [p for p in state.setup.acting_people(s.by) if p.person_id not in step.standing_by]
    if waiting:
        return Refusal("no_standby", f"Go for step {s.number} '{s.title}' is not enabled yet: waiting for "
                                     f"'standing by' from {_names(waiting)} ({s.by}).")
    return [_row(state, action, now, "go", step, None, role=role)]


def _confirm(state: CueState, action: Action, now: datetime):
    step = _gated_step(state, action)
    if isinstance(step, Refusal):
        return step
    s = step.step
    role = _role_of(state, action.actor, s.by)
    if role is None:
        return Refusal("wrong_person", f"{action.actor.name} is not assigned to {s.by} on "
                                       f"{state.setup.label} tonight: only "
                                       f"{_names(state.setup.acting_people(s.by))} may confirm step {s.number} "
                                       f"'{s.title}'.")
    if step.confirmed_at is not None:
        who = step.confirmed_by[1] if step.confirmed_by else "?"
        return Refusal("already_done", f"Step {s.number} '{s.title}' was already confirmed by {who} at "
                                       f"{_clock(step.confirmed_at)} UTC.")
    refusal = _in_order(state, step) or _needs(state, step)
    if refusal:
        return refusal
    if s.go is not None and step.go_at is None:
        return Refusal("no_go", f"Step {s.number} '{s.title}' waits for the {s.go}'s go.")
    detail: dict[str, Any] = {}
    if s.sets:
        detail["sets"] = list(s.sets)
    if role != s.by:
        detail["spoken_for"] = s.by
    over = overdue_s(step, now)
    if over is not None:
        detail.update(overdue_s=round(over, 1), hold_s=s.hold_s)
    rows = [_row(state, action, now, "step_confirmed", step, detail or None, role=role)]
    if s.check is None:
        rows += _completion(state, action, now, step)
    return rows


def _check(state: CueState, action: Action, now: datetime):
    step = _gated_step(state, action)
    if isinstance(step, Refusal):
        return step
    s = step.step
    if s.check is None:
        return Refusal("no_check_field", f"Step {s.number} '{s.title}' has no check.")
    role = _role_of(state, action.actor, s.check)
    if role is None:
        return Refusal("wrong_person", f"{action.actor.name} is not assigned to {s.check} on "
                                       f"{state.setup.label} tonight: only {_names(state.setup.people_in(s.check))} "
                                       f"may check step {s.number} '{s.title}'.")
    if step.confirmed_at is None:
        return Refusal("not_confirmed", f"Step {s.number} '{s.title}' must be confirmed by the {s.by} "
                                        f"before the {s.check} checks it.")
    if step.checked_at is not None:
        return Refusal("already_done", f"Step {s.number} '{s.title}' was already checked by "
                                       f"{step.checked_by[1] if step.checked_by else '?'}.")
    if step.confirmed_by and step.confirmed_by[0] == action.actor.person_id:
        return Refusal("same_person", f"The check of step {s.number} '{s.title}' needs a second person: "
                                      f"{action.actor.name} confirmed the step and cannot also check it.")
    detail: dict[str, Any] = {"sets": list(s.sets)} if s.sets else {}
    rows = [_row(state, action, now, "check_confirmed", step, detail or None, role=role)]
    rows += _completion(state, action, now, step)
    return rows


def _completion(state: CueState, action: Action, now: datetime, step: StepState) -> list[dict]:
    """The ``cue_completed`` row when ``step`` finishes the last step."""
    after = [s for s in state.steps if s is not step and not s.done]
    if after:
        return []
    detail = {"complete": True, "steps": len(state.steps)}
    client = f"{action.client_id}:completed" if action.client_id else None
    return [_row(state, action, now, "cue_completed", None, detail, client_id=client)]


def _hold(state: CueState, action: Action, now: datetime):
    if state.status in ("complete", "ended"):
        return Refusal("finished", f"{_cap(state.setup.label)} is already finished: nothing to hold.")
    current = state.current
    detail = {"note": action.note} if action.note else {}
    if state.status == "held":
        detail["already_held"] = True
    return [_row(state, action, now, "hold", current if state.status != "waiting" else None, detail or None)]


def _resume(state: CueState, action: Action, now: datetime):
    if state.status != "held":
        return Refusal("not_held", f"{_cap(state.setup.label)} is not on HOLD.")
    if not action.actor.is_stage_manager:
        return Refusal("not_stage_manager", f"Only the stage manager resumes {state.setup.label} after a "
                                            f"HOLD; {action.actor.name} cannot.")
    detail = {"held_s": round((now - state.held_at).total_seconds(), 1) if state.held_at else None}
    return [_row(state, action, now, "resume", state.current if state.started_at else None, detail)]


def _end(state: CueState, action: Action, now: datetime):
    if state.status in ("waiting", "complete", "ended"):
        return Refusal("not_running", f"{_cap(state.setup.label)} is not running: nothing to end.")
    if not action.actor.is_stage_manager:
        return Refusal("not_stage_manager", f"Only the stage manager ends {state.setup.label} early.")
    unfinished = [s.step.key for s in state.steps if not s.done]
    detail = {"complete": False, "unfinished": unfinished, "reason": action.note or "ended by the stage manager"}
    return [_row(state, action, now, "cue_completed", None, detail)]


# --- what the screens show ---------------------------------------------------------

def _who(pair: tuple[int | None, str] | None) -> dict | None:
    return {"person_id": pair[0], "name": pair[1]} if pair else None


@lru_cache(maxsize=8192)
def _iso(at: datetime | None) -> str | None:
    return at.astimezone(timezone.utc).isoformat(timespec="milliseconds") if at else None


def go_enabled(state: CueState, step: StepState) -> bool:
    """Whether the go of ``step`` may be given now (every actor standing by, in order, needs met)."""
    if step.step.go is None or step.go_at is not None or state.status != "running":
        return False
    if state.current is not step or any(not need_holds(state, n) for n in step.step.needs):
        return False
    return all(p.person_id in step.standing_by for p in state.setup.acting_people(step.step.by))


def describe(state: CueState, now: datetime) -> dict[str, Any]:
    """Return the cue's state as JSON-ready data (the stage manager's view)."""
    setup = state.setup
    names = {c.person_id: c.name for c in setup.crew}
    current = state.current
    steps = []
    for st in state.steps:
        s = st.step
        over = overdue_s(st, now) if st.confirmed_at is None or st.step.hold_s else None
        steps.append({
            "key": s.key, "number": s.number, "title": s.title, "phase": s.phase,
            "by": s.by, "go": s.go, "check": s.check, "say": s.say, "reply": s.reply,
            "needs": list(s.needs), "sets": list(s.sets), "hold_s": s.hold_s,
            "status": step_status(state, st),
            "due_at": _iso(st.due_at), "go_at": _iso(st.go_at), "go_by": st.go_by,
            "standing_by": [{"person_id": pid, "name": names.get(pid, str(pid)), "at": _iso(at)}
                            for pid, at in st.standing_by.items()],
            "waiting_standby": [p.name for p in setup.acting_people(s.by) if p.person_id not in st.standing_by]
            if s.go else [],
            "go_enabled": go_enabled(state, st),
            "confirmed_at": _iso(st.confirmed_at), "confirmed_by": _who(st.confirmed_by),
            "checked_at": _iso(st.checked_at), "checked_by": _who(st.checked_by),
            "overdue_s": None if over is None else round(over, 1),
        })
    return {
        "performance_id": setup.performance_id, "cue_id": setup.cue_id, "number": setup.number,
        "name": setup.name, "status": state.status, "verdict": setup.verdict,
        "reasons": [r.to_dict() for r in setup.reasons], "fixes": list(setup.fixes),
        "started_at": _iso(state.started_at), "finished_at": _iso(state.finished_at),
        "held": state.status == "held", "held_at": _iso(state.held_at), "held_by": state.held_by,
        "current_step": current.step.key if current and state.status in ("running", "held") else None,
        "states": dict(state.states),
        "crew": [{"role": c.role, "person_id": c.person_id, "name": c.name} for c in setup.crew],
        "procedure_version": setup.procedure_version, "rig_version": setup.rig_version,
        "last_log_id": state.last_id, "steps": steps,
    }


def next_for(state: CueState, person_id: int | None) -> dict[str, Any] | None:
    """Return what ``person_id`` should do next on this cue, or ``None``.

    ``action`` is ``start``, ``standby``, ``go``, ``confirm``, ``check`` or ``wait``
    (their step is due but someone else must act first); ``step`` is the step's key.
    """
    setup = state.setup
    if state.status in ("complete", "ended") or person_id is None:
        return None
    actor = Actor(person_id, "")
    if state.status == "waiting":
        if _role_of(state, actor, "caller"):
            return {"action": "start", "step": None, "why": f"start {setup.label}"}
        return None
    for st in state.steps:
        if st.done:
            continue
        s = st.step
        acting = _role_of(state, actor, s.by)
        if st.confirmed_at is None:
            if acting and s.go and person_id not in st.standing_by:
                return {"action": "standby", "step": s.key, "why": f"answer 'standing by' for {s.title}"}
            if s.go and _role_of(state, actor, s.go) and st.go_at is None and state.current is st:
                return {"action": "go" if go_enabled(state, st) else "wait", "step": s.key,
                        "why": f"give the go for {s.title}"}
            if acting and state.current is st:
                if s.go and st.go_at is None:
                    return {"action": "wait", "step": s.key, "why": f"wait for the {s.go}'s go"}
                return {"action": "confirm", "step": s.key, "why": s.title}
        elif s.check and _role_of(state, actor, s.check) and (st.confirmed_by or (None,))[0] != person_id:
            return {"action": "check", "step": s.key, "why": f"check {s.title}"}
    return None


def with_verdict(setup: CueSetup, verdict: str, reasons: Sequence[Reason] = (), fixes: Sequence[str] = ()) -> CueSetup:
    """Return ``setup`` with another verdict (tests and the night plan's refresh)."""
    return replace(setup, verdict=verdict, reasons=tuple(reasons), fixes=tuple(fixes))
