"""Rig care pages: the due-soon list, a performance's readiness (briefing, area
release), the pre-show check form, and safety objections (raise and resolve).

Every record is made by the signed-in user as the person their sign-in is linked to
(a crew member confirms on their own screen). A refused record re-renders the page
with the message and status 400 (the store names the field).
"""

from __future__ import annotations

from datetime import date

from flask import Blueprint, redirect, render_template, request, url_for

from showops.errors import NotFound, ShowopsError, ValidationError
from showops.store import care as store
from showops.web import get_db, nav_item
from showops.web.auth import current_user, device_id, roles_required

bp = Blueprint("care", __name__, url_prefix="/care")

STAFF = ("admin", "stage_manager")
EVERYONE = ("admin", "stage_manager", "crew", "viewer")
ACTORS = ("admin", "stage_manager", "crew")


def _me() -> int:
    """The person id of the signed-in user.

    :raises ValidationError: when the sign-in is not linked to anyone on the people list.
    """
    user = current_user()
    if user is None or user.person_id is None:
        raise ValidationError("person", "your sign-in is not linked to a person on the people list "
                                        "(ask the admin to link it)")
    return user.person_id


def _performance(performance_id: int) -> tuple[int, date, str]:
    row = get_db().execute("SELECT id, starts_at FROM performance WHERE id = ?", [performance_id]).fetchone()
    if row is None:
        raise NotFound(f"performance {performance_id} does not exist")
    return row[0], date.fromisoformat(row[1][:10]), row[1].replace("T", " ")


def _rigs_of(performance_id: int) -> list[str]:
    return [r[0] for r in get_db().execute(
        "SELECT DISTINCT c.rig_slug FROM cue c JOIN performance p ON p.production_id = c.production_id "
        "WHERE p.id = ? AND c.rig_slug IS NOT NULL ORDER BY c.rig_slug", [performance_id])]


# --------------------------------------------------------------------------- index

@bp.route("/")
@nav_item("Readiness", 55)
@roles_required(*EVERYONE)
def index():
    """Every performance with its rigs' readiness at a glance, linking to each one."""
    db = get_db()
    rows = []
    for perf, starts in db.execute("SELECT id, starts_at FROM performance ORDER BY starts_at, id").fetchall():
        reasons = store.performance_readiness(db, perf)
        rows.append({"id": perf, "starts": starts.replace("T", " "),
                     "blocked": sum(1 for r in reasons if r.level == "blocked"),
                     "caution": sum(1 for r in reasons if r.level == "caution"),
                     "first": next((r.text for r in reasons), "")})
    return render_template("care/index.html", rows=rows)


# --------------------------------------------------------------------------- due soon

@bp.route("/due")
@nav_item("Due soon", 60)
@roles_required(*EVERYONE)
def due():
    """The examinations overdue or falling due in the next ``days`` (default 14) days."""
    try:
        days = int(request.args.get("days", 14))
    except ValueError:
        days = 14
    days = max(0, min(days, 3650))
    today = date.today()
    return render_template("care/due.html", items=store.due(get_db(), today, days), days=days, today=today)


# --------------------------------------------------------------------------- a performance's readiness

@bp.route("/performance/<int:performance_id>")
@roles_required(*EVERYONE)
def readiness(performance_id: int, message: str | None = None, status: int = 200):
    """Each rig's readiness for one performance, with the briefing and the area release."""
    db = get_db()
    perf, day, starts = _performance(performance_id)
    user = current_user()
    rigs = []
    for rig in _rigs_of(perf):
        briefing = store.briefing_for(db, perf, rig)
        team = store.rig_team(db, perf, rig)
        mine = user is not None and user.person_id is not None and any(p.person_id == user.person_id for p in team)
        confirmed = briefing is not None and user is not None and any(
            a.person_id == user.person_id for a in (briefing.given_by, *briefing.attendees))
        rigs.append({"status": store.rig_status(db, perf, rig), "briefing": briefing, "on_team": mine,
                     "confirmed": confirmed})
    return render_template("care/readiness.html", perf=perf, starts=starts, rigs=rigs, message=message,
                           releases=store.area_releases(db, perf)), status


def _post_then_back(performance_id: int, action):
    try:
        action()
    except ShowopsError as exc:
        return readiness(performance_id, message=str(exc), status=exc.status)
    return redirect(url_for("care.readiness", performance_id=performance_id))


@bp.post("/performance/<int:performance_id>/<rig>/briefing")
@roles_required(*STAFF)
def give_briefing(performance_id: int, rig: str):
    """The stage manager records that tonight's briefing for ``rig`` was given."""
    return _post_then_back(performance_id, lambda: store.give_briefing(
        get_db(), performance_id, rig, given_by=_me(), note=request.form.get("note", "")))


@bp.post("/briefing/<int:briefing_id>/confirm")
@roles_required(*ACTORS)
def confirm_briefing(briefing_id: int):
    """A person confirms, on their own screen, that they attended the briefing."""
    row = get_db().execute("SELECT performance_id FROM care_briefing WHERE id = ?", [briefing_id]).fetchone()
    if row is None:
        raise NotFound(f"briefing {briefing_id} does not exist")
    return _post_then_back(row[0], lambda: store.confirm_briefing(get_db(), briefing_id, _me(), device=device_id()))


@bp.post("/performance/<int:performance_id>/release")
@roles_required(*STAFF)
def release(performance_id: int):
    """The stage manager (or designated supervisor) releases the stage (DGUV Vorschrift 17 §15)."""
    return _post_then_back(performance_id, lambda: store.release_area(
        get_db(), performance_id, person=_me(), role=request.form.get("role", "stage manager"),
        note=request.form.get("note", "")))


# --------------------------------------------------------------------------- pre-show check

@bp.route("/performance/<int:performance_id>/<rig>/preshow", methods=["GET", "POST"])
@roles_required(*ACTORS)
def preshow(performance_id: int, rig: str):
    """Tonight's pre-show check of ``rig``: each item answered with what was observed."""
    db = get_db()
    perf, _, starts = _performance(performance_id)
    store.require_rig(db, rig)
    message, status, values = None, 200, {}
    if request.method == "POST":
        values = dict(request.form)
        try:
            store.answer_preshow(db, perf, rig, request.form.get("item", ""), request.form.get("observation", ""),
                                 person=_me(), result="fault" if request.form.get("fault") else "pass",
                                 device=device_id())
        except ShowopsError as exc:
            message, status = str(exc), exc.status
        else:
            return redirect(url_for("care.preshow", performance_id=perf, rig=rig))
    loaded = store.checklist(db, rig)
    latest = {a.item_key: a for a in store.preshow_answers(db, perf, rig)}
    return render_template("care/preshow.html", perf=perf, starts=starts, rig=rig,
                           items=loaded[0] if loaded else None, latest=latest, message=message,
                           values=values, status=store.rig_status(db, perf, rig)), status


# --------------------------------------------------------------------------- objections

@bp.route("/objections", methods=["GET", "POST"])
@nav_item("Objections", 70)
@roles_required(*EVERYONE)
def objections():
    """Every safety objection (none is ever deleted); anyone with a stage role raises one."""
    db = get_db()
    message, status, values = None, 200, {}
    if request.method == "POST":
        user = current_user()
        values = dict(request.form)
        try:
            if user.role == "viewer":
                from showops.errors import PermissionDenied

                raise PermissionDenied("a viewer cannot raise an objection (sign in with your stage role)")
            target = request.form.get("target", "")
            rig, cue_id = None, None
            if target.startswith("cue:"):
                cue_id = int(target[4:])
            elif target.startswith("rig:"):
                rig = target[4:]
            store.raise_objection(db, person=_me(), role=request.form.get("role", ""),
                                  reason=request.form.get("reason", ""),
                                  responsible=request.form.get("responsible", ""),
                                  rig=rig, cue_id=cue_id, device=device_id())
        except ShowopsError as exc:
            message, status = str(exc), exc.status
        else:
            return redirect(url_for("care.objections"))
    cues = db.execute("SELECT id, number, name, rig_slug FROM cue WHERE rig_slug IS NOT NULL "
                      "ORDER BY production_id, position").fetchall()
    people = db.execute("SELECT id, name FROM person ORDER BY name").fetchall()
    return render_template("care/objections.html", items=store.objections(db), rigs=store.rig_slugs(db),
                           cues=cues, people=people, message=message, values=values,
                           me=current_user().person_id), status


@bp.post("/objections/<int:objection_id>/resolve")
@roles_required(*ACTORS)
def resolve(objection_id: int):
    """The named responsible person resolves an objection with a written reason."""
    try:
        store.resolve_objection(get_db(), objection_id, person=_me(), reason=request.form.get("reason", ""))
    except ShowopsError as exc:
        db = get_db()
        cues = db.execute("SELECT id, number, name, rig_slug FROM cue WHERE rig_slug IS NOT NULL "
                          "ORDER BY production_id, position").fetchall()
        people = db.execute("SELECT id, name FROM person ORDER BY name").fetchall()
        return render_template("care/objections.html", items=store.objections(db), rigs=store.rig_slugs(db),
                               cues=cues, people=people, message=str(exc), values={},
                               me=current_user().person_id), exc.status
    return redirect(url_for("care.objections"))
