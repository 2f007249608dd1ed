"""The night's pages: the performances, the stage manager's running order and each
crew member's own screen.

Both live pages are drawn in the browser from the JSON API (``/api/performances/...``,
the live engineer's blueprint) by ``static/live.js``, which polls it every half second
(see ``POLL_MS``): a confirmation on one phone shows on every screen well within a
second. Polling was chosen over server-sent events because waitress gives every open
event stream a worker thread of its own, and 32 phones would hold 32 threads; a poll
holds one for a few milliseconds. What the server renders here is what does not
change during the show: the running order, each cue's verdict, why it is blocked and
what would clear it.
"""

from __future__ import annotations

from datetime import datetime

from flask import Blueprint, abort, redirect, render_template, url_for

from showops.errors import NotFound
from showops.store import users as store_users
from showops.web import get_db, nav_item
from showops.web.auth import current_user, pin_performance_id, roles_required

bp = Blueprint("night", __name__)

#: How often the live pages ask the server for news, in milliseconds. With a request
#: taking a few milliseconds, a change shows on every screen within POLL_MS + that.
POLL_MS = 500
#: A performance counts as "tonight" from this long before its start to this long after
#: (the same window as a crew PIN; common practice, no source).
TONIGHT_BEFORE = store_users.PIN_WINDOW_BEFORE
TONIGHT_AFTER = store_users.PIN_WINDOW_AFTER

SM_ROLES = ("admin", "stage_manager", "viewer")


def _plan(performance_id: int):
    from showops.store.show import load_night_plan

    try:
        return load_night_plan(get_db(), performance_id)
    except NotFound:
        abort(404, f"performance {performance_id} does not exist")


def pick_tonight(performances: list[tuple[int, str]], local_now: datetime) -> int | None:
    """Choose "tonight's" performance from ``(id, starts_at)`` pairs in date order: one
    on now (within the window), else the next to come, else the last one."""
    if not performances:
        return None
    upcoming = None
    for pid, starts in performances:
        start = datetime.fromisoformat(starts)
        if start - TONIGHT_BEFORE <= local_now <= start + TONIGHT_AFTER:
            return pid
        if upcoming is None and start > local_now:
            upcoming = pid
    return upcoming if upcoming is not None else performances[-1][0]


@bp.route("/tonight")
@nav_item("Tonight", 10)
@roles_required("admin", "stage_manager", "crew", "viewer")
def tonight():
    """Go to tonight's performance: the crew screen for crew, the running order for the rest."""
    from showops.store.show import list_performances

    user = current_user()
    db = get_db()
    if user.role == "crew":
        pid = pin_performance_id()
        if pid is None:
            if user.person_id is None:
                abort(404, "you are not linked to a person of the crew: ask the technical director")
            pid = pick_tonight(store_users.crewed_performances(db, user.person_id), datetime.now())
        if pid is None:
            abort(404, "you are not on the crew of any performance")
        return redirect(url_for("night.crew_screen", performance_id=pid))
    pid = pick_tonight([(p["id"], p["starts_at"]) for p in list_performances(db)], datetime.now())
    if pid is None:
        abort(404, "there are no performances yet (run `showops demo` or add them)")
    return redirect(url_for("night.running_order", performance_id=pid))


@bp.route("/performances")
@nav_item("Performances", 20)
@roles_required(*SM_ROLES)
def performances():
    """Every performance with a count of its rig cues by verdict."""
    from showops.store.show import night_plans

    plans = night_plans(get_db())
    rows = []
    for plan in plans:
        counts = {"ok": 0, "caution": 0, "blocked": 0}
        for cue in plan.rig_cues:
            counts[cue.verdict] += 1
        rows.append({"plan": plan, "counts": counts})
    return render_template("night/performances.html", rows=rows, now=datetime.now())


@bp.route("/performances/<int:performance_id>")
@roles_required(*SM_ROLES)
def running_order(performance_id: int):
    """The stage manager's running order: every cue's verdict, why, what would clear it,
    and the live cue step by step."""
    plan = _plan(performance_id)
    user = current_user()
    # The stage manager runs the night; a technical director may call HOLD from here
    # but starts, resumes and signs off nothing (the runner would refuse it anyway).
    return render_template("night/running_order.html", plan=plan, poll_ms=POLL_MS,
                           can_act=user.role == "stage_manager",
                           can_hold=user.role in ("admin", "stage_manager"))


@bp.route("/performances/<int:performance_id>/crew")
@roles_required("crew")
def crew_screen(performance_id: int):
    """A crew member's own screen: only their next step, large."""
    user = current_user()
    plan = _plan(performance_id)
    pinned = pin_performance_id()
    if pinned is not None and pinned != performance_id:
        abort(403, "your PIN sign-in is for another performance")
    mine = [(cue, [a.role for a in cue.crew if a.person_id == user.person_id]) for cue in plan.rig_cues]
    mine = [(cue, roles) for cue, roles in mine if roles]
    return render_template("night/crew.html", plan=plan, mine=mine, poll_ms=POLL_MS)
