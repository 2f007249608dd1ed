"""The address a crew sheet's QR code opens: ``/live/<performance>/cue/<cue>``.

It sends a crew member to their own screen and everyone else to the running order,
both for that performance. The address is printed on paper, so it must keep working
whatever the pages behind it are called.
"""

from __future__ import annotations

from flask import Blueprint, redirect, url_for

from showops.web.auth import current_user, roles_required

bp = Blueprint("cue_links", __name__)


@bp.route("/live/<int:performance_id>/cue/<int:cue_id>")
@roles_required("admin", "stage_manager", "crew", "viewer")
def cue_link(performance_id: int, cue_id: int):
    """Redirect a scanned QR code to the right live page (signs in first if needed)."""
    if current_user().role == "crew":
        target = url_for("night.crew_screen", performance_id=performance_id)
    else:
        target = url_for("night.running_order", performance_id=performance_id)
    return redirect(f"{target}#cue-{cue_id}")
