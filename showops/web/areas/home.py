"""The front page: where each role starts."""

from __future__ import annotations

from flask import Blueprint, redirect, render_template, url_for

from showops.store.users import ROLES
from showops.web import nav_links
from showops.web.auth import current_user

bp = Blueprint("home", __name__)


@bp.route("/")
def index():
    """Signed in: the places this user may go. Not signed in: the sign-in page."""
    user = current_user()
    if user is None:
        return redirect(url_for("auth.sign_in"))
    return render_template("home/index.html", links=[link for link in nav_links(user) if not link[2]],
                           roles=ROLES)
