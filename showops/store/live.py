"""The live show's service functions: what the API, the pages and the demo call.

Each action (:func:`start_cue`, :func:`standby`, :func:`go`, :func:`confirm_step`,
:func:`confirm_check`, :func:`hold`, :func:`resume`, :func:`end_cue`, :func:`signoff`)
loads the night plan and the cue's log rows, asks the pure runner
(:mod:`showops.live.runner`) and appends what it decided, refusals included, in one
write transaction. With a :class:`~showops.store.log.LogWriter` (the web app) the
decision runs on the writer thread, so two phones pressing at once are decided one
after the other and committed together; without one it runs in its own
``BEGIN IMMEDIATE`` transaction with ``synchronous=FULL``.

A refused attempt raises :class:`RefusedAttempt` (status 409) *after* its ``refused`` row
is committed. A retried attempt with the same ``client_id`` returns (or re-raises)
what the first one got and writes nothing.

The night plan (who is in which role on each cue, each cue's verdict and procedure)
comes from ``showops.store.show.load_night_plan``; pass ``plans=`` to use another
source (tests).
"""

from __future__ import annotations

import json
import threading
import time
from collections import OrderedDict
from dataclasses import dataclass
from datetime import datetime, timedelta, timezone
from typing import Any, Callable

import sqlite_utils

from showops.errors import NotFound, Refused as _Refused, ShowopsError
from showops.live.runner import (Action, Actor, Crew, CueSetup, CueState, Refusal, apply, decide, describe,
                                 new_state, next_for, replay)
from showops.procedure.model import REST_STATE
from showops.show.model import CueNight, NightPlan
from showops.live.chain import GENESIS
from showops.store.log import (LogWriter, append_in_transaction, durably, find_by_client_id, iter_log,
                               log_head)

PlanLoader = Callable[[sqlite_utils.Database, int], NightPlan]
Clock = Callable[[], datetime]


class RefusedAttempt(_Refused):
    """An attempt refused by a rule; ``row`` is the ``refused`` log row, ``code`` the rule."""

    def __init__(self, reason: str, *, code: str = "", row: dict | None = None):
        super().__init__(reason)
        self.code = code
        self.row = row


def default_plans(db: sqlite_utils.Database, performance_id: int) -> NightPlan:
    """Load the night plan from the show store.

    :raises NotFound: when there is no such performance.
    """
    from showops.store.show import load_night_plan  # the show area's contract

    return load_night_plan(db, performance_id)


def utc_clock() -> datetime:
    return datetime.now(timezone.utc)


def setup_for(plan: NightPlan, cue: CueNight) -> CueSetup:
    """Build the runner's :class:`CueSetup` from one cue of the night plan."""
    procedure = cue.procedure
    steps = tuple(procedure.main_steps) if procedure is not None else ()
    start = dict(procedure.start) if procedure is not None and procedure.start else dict(REST_STATE)
    return CueSetup(
        performance_id=plan.performance_id, cue_id=cue.cue_id, number=cue.number, name=cue.name, steps=steps,
        crew=tuple(Crew(a.role, a.person_id, a.name) for a in cue.crew), verdict=cue.verdict,
        reasons=tuple(cue.reasons), fixes=tuple(cue.fixes), start=start,
        procedure_version=cue.procedure_version, rig_version=cue.rig_version)


def _cue(plan: NightPlan, cue_id: int) -> CueNight:
    for cue in plan.cues:
        if cue.cue_id == cue_id:
            return cue
    raise NotFound(f"cue {cue_id} is not in the running order of performance {plan.performance_id}")


class PlanCache:
    """Night plans kept for a short time, dropped when another connection commits.

    ``fresh=True`` always reloads (starting a cue decides on the plan as it is now).
    The invalidation uses ``PRAGMA data_version``, which changes for a connection when
    any other connection commits (SQLite documentation, "PRAGMA data_version").
    """

    def __init__(self, loader: PlanLoader = default_plans, ttl_s: float = 30.0):
        self.loader = loader
        self.ttl_s = ttl_s
        self._lock = threading.Lock()
        self._plans: dict[tuple[int, int], tuple[float, int, NightPlan]] = {}

    def get(self, db: sqlite_utils.Database, performance_id: int, *, fresh: bool = False,
            writer: LogWriter | None = None) -> NightPlan:
        """Return the plan, loading it when missing, older than the TTL or outdated.

        :param writer: for a read on a request thread: key on the writer's view of other
            connections' commits (:attr:`LogWriter.outside_version`), so the log rows the
            writer appends do not throw the plan away on every confirmation.
        """
        if writer is not None:
            key, version = (0, performance_id), writer.outside_version
        else:
            key = (id(db.conn), performance_id)
            version = db.conn.execute("PRAGMA data_version").fetchone()[0]
        now = time.monotonic()
        if not fresh:
            with self._lock:
                hit = self._plans.get(key)
            if hit and hit[1] == version and now - hit[0] < self.ttl_s:
                return hit[2]
        plan = self.loader(db, performance_id)
        with self._lock:
            hit = self._plans.get(key)
            if hit is not None and hit[2] == plan:
                plan = hit[2]  # unchanged: keep the object, so the cue states kept under it stay
            self._plans[key] = (now, version, plan)
        return plan


class KeptStates:
    """The cues' live states kept between attempts, so an attempt does not replay its
    cue from the log every time.

    The states are true only for the log as it was when they were last brought up to
    date, so every use starts with :meth:`sync` inside the write transaction: when the
    log head (last id and hash) is the one these states last saw, they are current;
    when another connection appended rows since (the CLI, a care or audit record),
    those rows are applied; when the head went back or moved to another chain (a
    rolled-back batch, a restored file), everything is dropped and replayed from the
    log on next use. A kept state also belongs to one night plan object: a reloaded
    plan (casting or a verdict changed) replays the cue.

    Use only while holding the log's write lock (the writer thread, or inside
    ``BEGIN IMMEDIATE``): that is what makes the head read here the head the next
    append builds on.
    """

    #: more new rows than this since the last look: drop everything instead of catching up
    CATCH_UP_LIMIT = 2000

    def __init__(self, size: int = 256):
        self.size = size
        self._states: OrderedDict[tuple[int, int], tuple[NightPlan, CueState]] = OrderedDict()
        self._head: tuple[int, str] = (0, GENESIS)
        #: cues replayed from the log (a count for the tests and the bench)
        self.replays = 0

    def sync(self, db: sqlite_utils.Database) -> None:
        """Bring the kept states up to the log as it is now (see the class notes)."""
        head = log_head(db)
        if head == self._head:
            return
        last_id, last_hash = self._head
        same_chain = (last_id < head[0] <= last_id + self.CATCH_UP_LIMIT
                      and (last_id == 0 or db.conn.execute("SELECT hash FROM step_log WHERE id = ?",
                                                           (last_id,)).fetchone() == (last_hash,)))
        if same_chain:
            if self._states:
                for row in iter_log(db, after_id=last_id):
                    hit = self._states.get((row["performance_id"], row["cue_id"]))
                    if hit is not None:
                        apply(hit[1], row)
        else:
            self._states.clear()
        self._head = head

    def get(self, db: sqlite_utils.Database, plan: NightPlan, cue_id: int) -> CueState:
        """The cue's state under ``plan``, replayed from the log when not kept (call
        :meth:`sync` first).

        :raises NotFound: when the cue is not in the plan.
        """
        key = (plan.performance_id, cue_id)
        hit = self._states.get(key)
        if hit is not None and hit[0] is plan:
            self._states.move_to_end(key)
            return hit[1]
        state = _replayed(db, setup_for(plan, _cue(plan, cue_id)))
        self.replays += 1
        self._states[key] = (plan, state)
        if len(self._states) > self.size:
            self._states.popitem(last=False)
        return state

    def holds(self, state: CueState) -> bool:
        hit = self._states.get((state.setup.performance_id, state.setup.cue_id))
        return hit is not None and hit[1] is state

    def appended(self, db: sqlite_utils.Database, rows: list[dict[str, Any]]) -> None:
        """Apply the rows just appended (in this transaction) to the kept states."""
        after = self._head[0]
        for row in rows:
            if row["id"] > after:
                hit = self._states.get((row["performance_id"], row["cue_id"]))
                if hit is not None:
                    apply(hit[1], row)
        self._head = log_head(db)


@dataclass(frozen=True)
class Outcome:
    """What an accepted attempt wrote (the rows, ``rows[0]`` the attempt itself)."""

    rows: tuple[dict[str, Any], ...]
    refusal: Refusal | None = None
    #: the cue as a screen shows it right after these rows, for the acting person
    #: (:meth:`Live.cue_status`'s shape), when asked for and not a retried client id
    view: dict[str, Any] | None = None

    @property
    def row(self) -> dict[str, Any]:
        return self.rows[0]


def _refusal_of(row: dict[str, Any]) -> Refusal | None:
    if row["event"] != "refused":
        return None
    detail = json.loads(row["detail"] or "{}")
    return Refusal(detail.get("code", ""), detail.get("reason", "refused"))


def _replayed(db: sqlite_utils.Database, setup: CueSetup) -> CueState:
    return replay(setup, iter_log(db, performance_id=setup.performance_id, cue_id=setup.cue_id))


def _view(state: CueState, now: datetime, person_id: int | None) -> dict[str, Any]:
    view = describe(state, now)
    view["next"] = next_for(state, person_id) if person_id is not None else None
    return view


class Live:
    """The live service for one instance: a plan source, a clock and (optionally) a writer.

    :param writer: the web app's :class:`LogWriter`; ``None`` writes on ``db`` itself.
    :param plans: where night plans come from (default the show store).
    :param clock: the server's time (the demo's past performance injects that night's).
    """

    def __init__(self, *, writer: LogWriter | None = None, plans: PlanLoader = default_plans,
                 clock: Clock = utc_clock, cache_ttl_s: float = 30.0):
        self.writer = writer
        self.plans = PlanCache(plans, cache_ttl_s)
        self.clock = clock
        self.kept = KeptStates()

    # -- writing -------------------------------------------------------------------

    def _write(self, db: sqlite_utils.Database, work: Callable[[sqlite_utils.Database], Any]) -> Any:
        if self.writer is not None:
            return self.writer.run(work)
        return durably(db, work)

    def act(self, db: sqlite_utils.Database, performance_id: int, cue_id: int, action: Action, *,
            now: datetime | None = None, view: bool = False) -> Outcome:
        """Decide and record one attempt on a cue.

        The cue's state comes from :attr:`kept` (replayed from the log only the first
        time, or when the log or the plan changed underneath).

        :param view: also return the cue as the actor's screen shows it after the
            attempt (:attr:`Outcome.view`), built in the same transaction.
        :returns: the rows written (or, for a retried ``client_id``, found).
        :raises RefusedAttempt: when a rule refused it (its ``refused`` row is committed first).
        :raises NotFound: for an unknown performance or cue (nothing is written).
        """
        def work(wdb: sqlite_utils.Database) -> Outcome:
            if action.client_id:
                seen = find_by_client_id(wdb, action.client_id)
                if seen is not None:
                    return self._seen(wdb, seen)
            plan = self.plans.get(wdb, performance_id, fresh=action.kind == "start")
            self.kept.sync(wdb)
            state = self.kept.get(wdb, plan, cue_id)
            if action.kind == "hold" and state.status not in ("running", "held"):
                # A screen one poll behind may still show the last cue, or the next one:
                # HOLD stops whatever is moving tonight, not only the cue on that screen.
                moving = [s for s in _night_states(wdb, plan) if s.status == "running"]
                if moving:
                    state = moving[0]
            at = now or self.clock()
            decision = decide(state, action, at)
            rows = append_in_transaction(wdb.conn, decision.events)
            if not self.kept.holds(state):
                for row in rows:
                    apply(state, row)
            self.kept.appended(wdb, rows)
            shown = _view(state, at, action.actor.person_id) if view else None
            return Outcome(tuple(rows), decision.refusal, shown)

        outcome = self._write(db, work)
        if outcome.refusal is not None:
            raise RefusedAttempt(outcome.refusal.reason, code=outcome.refusal.code, row=outcome.row)
        return outcome

    @staticmethod
    def _seen(db: sqlite_utils.Database, row: dict[str, Any]) -> Outcome:
        rows = [row]
        if row["client_id"]:
            follow = find_by_client_id(db, row["client_id"] + ":completed")
            if follow:
                rows.append(follow)
        return Outcome(tuple(rows), _refusal_of(row))

    def signoff(self, db: sqlite_utils.Database, performance_id: int, actor: Actor, *, note: str | None = None,
                client_id: str | None = None, device_at: str | None = None, now: datetime | None = None) -> Outcome:
        """Sign off the night: the stage manager, once no cue is still running, once.

        :raises RefusedAttempt: (logged) for anyone but the stage manager, a cue still running
            or on HOLD, or a night already signed off.
        """
        def work(wdb: sqlite_utils.Database) -> Outcome:
            if client_id:
                seen = find_by_client_id(wdb, client_id)
                if seen is not None:
                    return self._seen(wdb, seen)
            at = (now or self.clock()).astimezone(timezone.utc).isoformat(timespec="milliseconds")
            plan = self.plans.get(wdb, performance_id, fresh=True)
            states = _night_states(wdb, plan)
            base = {"at_utc": at, "device_at": device_at, "person_id": actor.person_id, "person_name": actor.name,
                    "role": "stage_manager" if actor.is_stage_manager else None, "device": actor.device,
                    "performance_id": performance_id, "client_id": client_id}
            refusal = None
            signed = list(iter_log(wdb, performance_id=performance_id, events=("signoff",)))
            live = [s for s in states if s.status in ("running", "held")]
            if not actor.is_stage_manager:
                refusal = Refusal("not_stage_manager", f"Only the stage manager signs off the night; "
                                                       f"{actor.name} cannot.")
            elif signed:
                refusal = Refusal("already_done", f"The night was already signed off by "
                                                  f"{signed[0]['person_name']} at {signed[0]['at_utc'][11:19]} UTC.")
            elif live:
                refusal = Refusal("cue_running", "Cannot sign off while "
                                  + ", ".join(s.setup.label for s in live)
                                  + " is still running or on HOLD: finish or end it first.")
            if refusal:
                event = dict(base, event="refused", detail={"action": "signoff", "code": refusal.code,
                                                            "reason": refusal.reason})
                return Outcome(tuple(append_in_transaction(wdb.conn, [event])), refusal)
            detail = {"note": note, "cues": [{"cue_id": s.setup.cue_id, "number": s.setup.number,
                                              "verdict": s.setup.verdict, "status": s.status} for s in states]}
            return Outcome(tuple(append_in_transaction(wdb.conn, [dict(base, event="signoff", detail=detail)])))

        outcome = self._write(db, work)
        if outcome.refusal is not None:
            raise RefusedAttempt(outcome.refusal.reason, code=outcome.refusal.code, row=outcome.row)
        return outcome

    def sign_in(self, db: sqlite_utils.Database, actor: Actor, *, performance_id: int | None = None,
                method: str = "password", now: datetime | None = None) -> dict[str, Any]:
        """Record a sign-in (the web's sign-in view calls this)."""
        at = (now or self.clock()).astimezone(timezone.utc).isoformat(timespec="milliseconds")
        event = {"at_utc": at, "event": "sign_in", "person_id": actor.person_id, "person_name": actor.name,
                 "role": ",".join(sorted(actor.roles)) or None, "device": actor.device,
                 "performance_id": performance_id, "detail": {"method": method}}
        return self._write(db, lambda wdb: append_in_transaction(wdb.conn, [event]))[0]

    # -- reading ---------------------------------------------------------------------

    def cue_status(self, db: sqlite_utils.Database, performance_id: int, cue_id: int, *,
                   person_id: int | None = None, now: datetime | None = None) -> dict[str, Any]:
        """The cue's live state (every step), and what ``person_id`` should do next,
        replayed from the log as ``db`` sees it (a read: the kept states are the writer's).

        :raises NotFound: for an unknown performance or cue.
        """
        plan = self.plans.get(db, performance_id, writer=self.writer)
        setup = setup_for(plan, _cue(plan, cue_id))
        return _view(_replayed(db, setup), now or self.clock(), person_id)

    def night_status(self, db: sqlite_utils.Database, performance_id: int, *, person_id: int | None = None,
                     now: datetime | None = None) -> dict[str, Any]:
        """Tonight's running order with each cue's verdict and live status.

        :raises NotFound: for an unknown performance.
        """
        plan = self.plans.get(db, performance_id, writer=self.writer)
        states = {s.setup.cue_id: s for s in _night_states(db, plan)}
        at = now or self.clock()
        cues, live = [], None
        for cue in plan.cues:
            state = states.get(cue.cue_id)
            entry = {"cue_id": cue.cue_id, "number": cue.number, "name": cue.name, "rig": cue.rig,
                     "verdict": cue.verdict, "reasons": [r.to_dict() for r in cue.reasons],
                     "fixes": list(cue.fixes), "status": state.status if state else None,
                     "current_step": None, "held": bool(state and state.status == "held"), "next": None}
            if state is not None:
                current = state.current
                if current is not None and state.status in ("running", "held"):
                    entry["current_step"] = {"key": current.step.key, "number": current.step.number,
                                             "title": current.step.title}
                    live = live or cue.cue_id
                if person_id is not None:
                    entry["next"] = next_for(state, person_id)
            cues.append(entry)
        signed = list(iter_log(db, performance_id=performance_id, events=("signoff",)))
        last = db.conn.execute("SELECT max(id) FROM step_log WHERE performance_id = ?",
                               (performance_id,)).fetchone()[0] or 0
        return {"performance_id": plan.performance_id, "production": plan.production, "venue": plan.venue,
                "starts_at": plan.starts_at.isoformat(), "stage_manager": plan.stage_manager,
                "live_cue": live, "signed_off": bool(signed),
                "signed_off_at": signed[0]["at_utc"] if signed else None,
                "last_log_id": last, "server_time": at.astimezone(timezone.utc).isoformat(timespec="milliseconds"),
                "cues": cues}


def _night_states(db: sqlite_utils.Database, plan: NightPlan) -> list[CueState]:
    """Replay every rig cue of the night from one pass over the performance's rows."""
    states = {c.cue_id: new_state(setup_for(plan, c)) for c in plan.rig_cues}
    for row in iter_log(db, performance_id=plan.performance_id):
        state = states.get(row["cue_id"])
        if state is not None:
            apply(state, row)
    return list(states.values())


# -- module-level functions: the same service without a writer (CLI, demo, scripts) --

def _service(plans: PlanLoader | None, clock: Clock | None, writer: LogWriter | None = None) -> Live:
    return Live(writer=writer, plans=plans or default_plans, clock=clock or utc_clock, cache_ttl_s=0)


def _action(kind: str, db, performance_id, cue_id, actor, step_key=None, *, client_id=None, device_at=None,
            note=None, now=None, plans=None) -> Outcome:
    return _service(plans, None).act(db, performance_id, cue_id,
                                     Action(kind, actor, step_key, client_id, device_at, note), now=now)


def start_cue(db, performance_id: int, cue_id: int, actor: Actor, **kw) -> Outcome:
    """Start a cue (stage manager or tonight's caller; refused when blocked)."""
    return _action("start", db, performance_id, cue_id, actor, **kw)


def standby(db, performance_id: int, cue_id: int, actor: Actor, step_key: str, **kw) -> Outcome:
    """Answer "standing by" for a step the actor acts in."""
    return _action("standby", db, performance_id, cue_id, actor, step_key, **kw)


def go(db, performance_id: int, cue_id: int, actor: Actor, step_key: str, **kw) -> Outcome:
    """Give the go for a step (its ``go`` role, after every actor stood by)."""
    return _action("go", db, performance_id, cue_id, actor, step_key, **kw)


def confirm_step(db, performance_id: int, cue_id: int, actor: Actor, step_key: str, **kw) -> Outcome:
    """Confirm a step done (its ``by`` role, in order, needs met, after its go)."""
    return _action("confirm", db, performance_id, cue_id, actor, step_key, **kw)


def confirm_check(db, performance_id: int, cue_id: int, actor: Actor, step_key: str, **kw) -> Outcome:
    """Confirm the check of a step (its ``check`` role, never the person who acted)."""
    return _action("check", db, performance_id, cue_id, actor, step_key, **kw)


def hold(db, performance_id: int, cue_id: int, actor: Actor, **kw) -> Outcome:
    """HOLD: stop the cue for everyone (never refused while the cue is not finished)."""
    return _action("hold", db, performance_id, cue_id, actor, **kw)


def resume(db, performance_id: int, cue_id: int, actor: Actor, **kw) -> Outcome:
    """Resume after a HOLD (the stage manager only)."""
    return _action("resume", db, performance_id, cue_id, actor, **kw)


def end_cue(db, performance_id: int, cue_id: int, actor: Actor, **kw) -> Outcome:
    """End a running cue early (the stage manager; its unfinished steps are recorded)."""
    return _action("end", db, performance_id, cue_id, actor, **kw)


def signoff(db, performance_id: int, actor: Actor, *, plans: PlanLoader | None = None, **kw) -> Outcome:
    """Sign off the night (see :meth:`Live.signoff`)."""
    return _service(plans, None).signoff(db, performance_id, actor, **kw)


def cue_status(db, performance_id: int, cue_id: int, *, plans: PlanLoader | None = None, **kw) -> dict:
    """The cue's live state (see :meth:`Live.cue_status`)."""
    return _service(plans, None).cue_status(db, performance_id, cue_id, **kw)


def night_status(db, performance_id: int, *, plans: PlanLoader | None = None, **kw) -> dict:
    """Tonight's running order and live state (see :meth:`Live.night_status`)."""
    return _service(plans, None).night_status(db, performance_id, **kw)


# -- the demo's past performance ------------------------------------------------------

def run_demo_performance(db: sqlite_utils.Database, performance_id: int, *, now: datetime | None = None,
                         plans: PlanLoader | None = None, seed: int = 1901) -> dict[str, Any]:
    """Run one past performance through the real service, as its crew would have.

    Every rig cue that is not blocked runs from boarding to disembark: each actor
    stands by before a go, the caller gives it, the first person in the acting role
    confirms, another person in the check role checks. Along the way, on purpose, so
    the audit has something to find: one refused out-of-order confirmation, one HOLD
    and its resume, one step confirmed past its ``hold``, a blocked cue's refused
    start (if the night has one); then the stage manager signs off.

    :param now: when the performance started (default: the plan's ``starts_at``);
        every row carries that night's times, a few seconds apart (seeded).
    :returns: counts of what was written (``rows``, ``refused``, ``holds``, ``cues``).
    :raises ShowopsError: when the performance already has log rows (run it once).
    """
    import random

    loader = plans or default_plans
    plan = loader(db, performance_id)
    from showops.live.runner import CUE_EVENTS

    names = CUE_EVENTS + ("signoff",)
    if db.conn.execute(f"SELECT 1 FROM step_log WHERE performance_id = ? AND event IN "
                       f"({', '.join('?' for _ in names)}) LIMIT 1", (performance_id, *names)).fetchone():
        raise ShowopsError(f"performance {performance_id} has already been run in the show log; "
                           f"the demo run is made once")
    rnd = random.Random(seed)
    start = now or plan.starts_at
    if start.tzinfo is None:
        start = start.replace(tzinfo=timezone.utc)
    clock = {"t": start}

    def tick(lo: float = 3.0, hi: float = 9.0) -> datetime:
        clock["t"] += timedelta(seconds=rnd.uniform(lo, hi))
        return clock["t"]

    # One connection writes only log rows here, so the plan cannot change under the run
    # (data_version stays put): keep it, and reload only where the service asks fresh.
    service = Live(plans=loader, clock=lambda: clock["t"], cache_ttl_s=3600)
    counts = {"rows": 0, "refused": 0, "holds": 0, "cues": 0, "overdue": 0}
    first_id = (db.conn.execute("SELECT max(id) FROM step_log").fetchone()[0] or 0)

    def sm_for(cue: CueNight) -> Actor:
        callers = cue.people_in("caller")
        if callers:
            return Actor(callers[0].person_id, callers[0].name, frozenset({"stage_manager"}), "prompt-desk")
        return Actor(None, plan.stage_manager or "Stage manager", frozenset({"stage_manager"}), "prompt-desk")

    def crew(a) -> Actor:
        return Actor(a.person_id, a.name, frozenset({"crew"}), f"phone-{a.person_id}")

    def attempt(kind: str, cue: CueNight, actor: Actor, step_key: str | None = None, *, expect_ok: bool = True,
                note: str | None = None, gap=(3.0, 9.0)) -> Outcome | None:
        at = tick(*gap)
        device_at = (at - timedelta(seconds=rnd.uniform(0.2, 1.5))).isoformat(timespec="milliseconds")
        try:
            return service.act(db, performance_id, cue.cue_id,
                               Action(kind, actor, step_key, client_id=f"demo-{performance_id}-{rnd.getrandbits(48):012x}",
                                      device_at=device_at, note=note), now=at)
        except RefusedAttempt:
            counts["refused"] += 1
            if expect_ok:
                raise
            return None

    hold_done = overdue_done = out_of_order_done = False
    for index, cue in enumerate(plan.cues):
        clock["t"] = max(clock["t"], start + timedelta(minutes=4 + 6 * index))
        if not cue.rig:
            continue
        sm = sm_for(cue)
        if cue.verdict == "blocked":
            attempt("start", cue, sm, expect_ok=False)
            continue
        setup = setup_for(plan, cue)
        if not setup.steps:
            continue
        attempt("start", cue, sm)
        counts["cues"] += 1
        for number, step in enumerate(setup.steps, 1):
            acting = setup.acting_people(step.by)
            if not acting:
                raise ShowopsError(f"the demo cannot run {setup.label}: nobody is assigned to {step.by}")
            doer = sm if not setup.people_in(step.by) and step.by != "caller" else crew(acting[0])
            if doer.person_id == sm.person_id:
                doer = sm
            if not out_of_order_done and number == 2 and len(setup.steps) > 2:
                nxt = setup.steps[2]
                early = setup.acting_people(nxt.by)
                if early:  # a crew member taps the step after next before its turn
                    attempt("confirm", cue, crew(early[0]), nxt.key, expect_ok=False)
                    out_of_order_done = True
            if step.go:
                for person in acting:
                    attempt("standby", cue, sm if person.person_id == sm.person_id else crew(person), step.key,
                            gap=(1.0, 4.0))
                attempt("go", cue, sm, step.key, gap=(2.0, 5.0))
            if not hold_done and counts["cues"] == 2 and number == 1:
                holder = crew(setup.crew[-1]) if setup.crew else sm
                attempt("hold", cue, holder, note="rider's strap looked twisted; checked and re-seated")
                attempt("resume", cue, sm, gap=(25.0, 50.0))
                counts["holds"] += 1
                hold_done = True
            gap = (1.5, 6.0)
            if step.hold_s and not overdue_done:
                gap = (step.hold_s + 8.0, step.hold_s + 20.0)
                overdue_done = True
                counts["overdue"] += 1
            elif step.hold_s:
                gap = (min(5.0, step.hold_s / 2), max(5.0, step.hold_s * 0.7))
            attempt("confirm", cue, doer, step.key, gap=gap)
            if step.check:
                checkers = [p for p in setup.people_in(step.check) if p.person_id != doer.person_id]
                if not checkers:
                    raise ShowopsError(f"the demo cannot check step {step.number} of {setup.label}: "
                                       f"nobody else is assigned to {step.check}")
                attempt("check", cue, crew(checkers[0]), step.key, gap=(2.0, 6.0))
    closer = next((sm_for(c) for c in plan.rig_cues), Actor(None, plan.stage_manager or "Stage manager",
                                                             frozenset({"stage_manager"}), "prompt-desk"))
    clock["t"] += timedelta(minutes=20)
    service.signoff(db, performance_id, closer, note="Show down. One HOLD on the lift, cleared; no injuries.",
                    client_id=f"demo-{performance_id}-signoff", now=clock["t"],
                    device_at=(clock["t"] - timedelta(seconds=0.8)).isoformat(timespec="milliseconds"))
    counts["rows"] = (db.conn.execute("SELECT max(id) FROM step_log").fetchone()[0] or 0) - first_id
    return counts
