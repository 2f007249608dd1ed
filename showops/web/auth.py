"""Sign-in and sign-out, the signed-in user, and the role check every view uses.

- ``current_user()`` returns the signed-in :class:`~showops.store.users.User` or None.
- ``@roles_required("stage_manager", "admin")`` lets only those roles in: a visitor
  who is not signed in is sent to the sign-in page (or answered 401 under /api/), a
  signed-in user with another role gets 403. No role is implied by another: every
  view lists the roles it allows, and the tests check each route's list.
- A password signs anyone in; a crew member's PIN (shared backstage tablet) signs in
  only during a performance they crew, and the session ends with that performance's
  window.
- Every form and every unsafe API call carries the CSRF token (Flask-WTF
  ``CSRFProtect``; pages send it to the API in the ``X-CSRFToken`` header); the session
  cookie is HttpOnly and SameSite=Lax; failed sign-ins are counted and rate-limited
  (``store.users``).
"""

from __future__ import annotations

import secrets
from datetime import datetime, timezone
from functools import wraps

from flask import Blueprint, g, redirect, render_template, request, session, url_for
from werkzeug.routing import BuildError

from showops.errors import PermissionDenied, ShowopsError
from showops.store import users as store_users

bp = Blueprint("auth", __name__)

DEVICE_COOKIE = "showops_device"
#: Where each role lands after signing in (endpoint names; a missing one falls back to home).
LANDING = {"admin": "home.index", "stage_manager": "home.index", "crew": "home.index", "viewer": "home.index"}


class NotSignedIn(ShowopsError):
    """A page or API call that needs a signed-in user was asked for without one."""

    status = 401


def _db():
    from showops.web import get_db

    return get_db()


def current_user() -> store_users.User | None:
    """Return the signed-in user, or None (also when the user was stopped, or a PIN's
    performance window has closed)."""
    if "current_user" in g:
        return g.current_user
    user = None
    uid = session.get("uid")
    if uid is not None:
        user = store_users.get_user(_db(), uid)
        if user is None or not user.active or user.role != session.get("role"):
            user = None
        elif session.get("pin_until") and datetime.now(timezone.utc).isoformat() > session["pin_until"]:
            user = None
        if user is None:
            session.clear()
    g.current_user = user
    return user


def pin_performance_id() -> int | None:
    """The performance a PIN sign-in is for (None for a password sign-in)."""
    return session.get("pin_performance") if current_user() else None


def device_id() -> str:
    """A stable name for this browser (a random id in a long-lived cookie), for the log."""
    value = request.cookies.get(DEVICE_COOKIE, "")
    if len(value) == 12 and value.isalnum():
        return value
    if "new_device_id" not in g:
        g.new_device_id = secrets.token_hex(6)
    return g.new_device_id


@bp.after_app_request
def _set_device_cookie(response):
    if "new_device_id" in g:
        response.set_cookie(DEVICE_COOKIE, g.new_device_id, max_age=5 * 365 * 24 * 3600,
                            httponly=True, samesite="Lax")
    return response


def roles_required(*roles: str):
    """Decorate a view so only signed-in users with one of ``roles`` reach it.

    :raises NotSignedIn: (401) under /api/ when nobody is signed in; a page redirects
        to the sign-in page instead.
    :raises PermissionDenied: (403) when the user's role is not one of ``roles``.
    """
    unknown = set(roles) - set(store_users.ROLES)
    if not roles or unknown:
        raise ValueError(f"roles_required needs roles from {store_users.ROLES}, got {roles}")

    def decorate(view):
        @wraps(view)
        def wrapped(*args, **kwargs):
            user = current_user()
            if user is None:
                from showops.web import wants_json

                if wants_json():
                    raise NotSignedIn("sign in first")
                return redirect(url_for("auth.sign_in", next=request.full_path.rstrip("?")))
            if user.role not in roles:
                raise PermissionDenied(f"a {user.role_label} cannot do this "
                                       f"(needs {' or '.join(store_users.ROLE_LABELS[r] for r in roles)})")
            return view(*args, **kwargs)

        wrapped.allowed_roles = tuple(roles)
        return wrapped

    return decorate


def _safe_next(target: str | None) -> str | None:
    # Only a path on this site: never "//host" or "http://..." (open redirect).
    if target and target.startswith("/") and not target.startswith("//") and "\\" not in target:
        return target
    return None


def _start_session(user: store_users.User, *, pin_performance: int | None = None) -> None:
    session.clear()  # a fresh session on every sign-in (no fixation)
    session.permanent = True
    session["uid"] = user.id
    session["role"] = user.role
    if pin_performance is not None:
        from showops.store.users import PIN_WINDOW_AFTER

        starts = _db().execute("SELECT starts_at FROM performance WHERE id = ?", [pin_performance]).fetchone()[0]
        local_end = datetime.fromisoformat(starts) + PIN_WINDOW_AFTER
        session["pin_performance"] = pin_performance
        session["pin_until"] = local_end.astimezone(timezone.utc).isoformat()
    g.current_user = user


def _log_sign_in(user: store_users.User, method: str, performance_id: int | None = None) -> None:
    """A ``sign_in`` row in the show log (the live API's writer keeps the chain)."""
    from showops.web.areas.api import record_sign_in

    record_sign_in(user, method=method, performance_id=performance_id)


def _landing(user: store_users.User) -> str:
    try:
        return url_for(LANDING[user.role])
    except BuildError:  # that area is not installed
        return "/"


@bp.route("/sign-in", methods=["GET", "POST"])
def sign_in():
    """Sign in with a user name and password."""
    if request.method == "GET":
        return render_template("auth/sign_in.html", username="", message=None,
                               next=request.args.get("next", ""), has_pin_users=bool(store_users.pin_users(_db())))
    username = request.form.get("username", "")
    target = _safe_next(request.form.get("next"))
    try:
        user = store_users.sign_in_with_password(_db(), username, request.form.get("password", ""),
                                                 address=request.remote_addr or "?")
    except ShowopsError as exc:
        return render_template("auth/sign_in.html", username=username, message=str(exc),
                               next=target or "", has_pin_users=True), exc.status
    _start_session(user)
    _log_sign_in(user, "password")
    return redirect(target or _landing(user))


@bp.route("/sign-in/pin", methods=["GET", "POST"])
def sign_in_pin():
    """Sign in on a shared tablet: pick your name, type your PIN."""
    names = store_users.pin_users(_db())
    if request.method == "GET":
        return render_template("auth/sign_in_pin.html", names=names, username="", message=None)
    username = request.form.get("username", "")
    try:
        user, performance_id = store_users.sign_in_with_pin(_db(), username, request.form.get("pin", ""),
                                                            address=request.remote_addr or "?")
    except ShowopsError as exc:
        return render_template("auth/sign_in_pin.html", names=names, username=username,
                               message=str(exc)), exc.status
    _start_session(user, pin_performance=performance_id)
    _log_sign_in(user, "pin", performance_id)
    return redirect(_landing(user))


@bp.route("/sign-out", methods=["POST"])
def sign_out():
    """Sign out (a POST with the CSRF token, so another site cannot sign you out)."""
    session.clear()
    return redirect(url_for("auth.sign_in"))
