"""The technical director's pages: people and their sign-ins (users, roles, PINs).

Rigs and their limits are in ``areas/rigs.py``. Every change here is a POST with the
CSRF token; bad input re-renders the page with the message and status 400.
"""

from __future__ import annotations

from flask import Blueprint, flash, redirect, render_template, request, url_for

from showops.errors import ShowopsError, ValidationError
from showops.store import users as store_users
from showops.web import get_db, nav_item
from showops.web.auth import current_user, roles_required

bp = Blueprint("admin", __name__, url_prefix="/admin")


def _form_person() -> int | None:
    value = request.form.get("person_id", "").strip()
    if not value:
        return None
    if not value.isdigit():
        raise ValidationError("person", f"{value!r} is not a person id")
    return int(value)


def _users_page(message: str | None = None, status: int = 200, form: dict | None = None):
    db = get_db()
    return render_template("admin/users.html", users=store_users.list_users(db),
                           people=store_users.people_to_link(db), roles=store_users.ROLES,
                           role_labels=store_users.ROLE_LABELS, message=message, form=form or {}), status


@bp.route("/users")
@nav_item("People and users", 80)
@roles_required("admin")
def users():
    """Every user, their role, how they sign in and which person they are."""
    return _users_page()


@bp.route("/users", methods=["POST"])
@roles_required("admin")
def add_user():
    """Add a user from the form."""
    form = request.form
    try:
        user = store_users.add_user(
            get_db(), form.get("username", ""), form.get("display_name", ""), form.get("role", ""),
            password=form.get("password") or None, pin=form.get("pin") or None, person_id=_form_person())
    except ShowopsError as exc:
        return _users_page(str(exc), exc.status, {k: v for k, v in form.items() if k not in ("password", "pin")})
    flash(f"Added {user.username} ({user.role_label}).")
    return redirect(url_for("admin.users"))


def _change(username: str, do, done: str):
    try:
        do()
    except ShowopsError as exc:
        return _users_page(f"{username}: {exc}", exc.status)
    flash(done)
    return redirect(url_for("admin.users"))


@bp.route("/users/<username>/password", methods=["POST"])
@roles_required("admin")
def set_password(username):
    """Set a user's password."""
    return _change(username, lambda: store_users.set_password(get_db(), username, request.form.get("password", "")),
                   f"Password changed for {username}.")


@bp.route("/users/<username>/pin", methods=["POST"])
@roles_required("admin")
def set_pin(username):
    """Set a crew member's PIN, or remove it (an empty PIN with ``remove``)."""
    pin = None if request.form.get("remove") else request.form.get("pin", "")
    return _change(username, lambda: store_users.set_pin(get_db(), username, pin),
                   f"PIN {'removed' if pin is None else 'set'} for {username}.")


@bp.route("/users/<username>/person", methods=["POST"])
@roles_required("admin")
def link_person(username):
    """Link a user to a person of the cast and crew."""
    return _change(username, lambda: store_users.link_person(get_db(), username, _form_person()),
                   f"Person changed for {username}.")


@bp.route("/users/<username>/active", methods=["POST"])
@roles_required("admin")
def set_active(username):
    """Stop a user's sign-in, or allow it again (nobody can stop themselves)."""
    active = request.form.get("active") == "1"

    def do():
        me = current_user()
        if not active and me.username.lower() == username.lower():
            raise ValidationError("active", "you cannot stop your own sign-in (ask another technical director)")
        store_users.set_active(get_db(), username, active)

    return _change(username, do, f"{username} {'may sign in again' if active else 'can no longer sign in'}.")
