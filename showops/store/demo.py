"""Build the whole demo: the production, then each area's part of it, in order.

The show store installs the production (people, rigs, cues, performances); the
users store adds sign-ins; rig care adds inspections, checks, briefings and an
objection; the live runner runs the past performance through the real service
functions (never rows written by hand); the audit promotes one of that night's
deviations to a near miss with a corrective action. ``showops demo`` calls
:func:`build_demo` and prints the report.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date
from typing import Any

import sqlite_utils


@dataclass
class DemoReport:
    """What :func:`build_demo` made, for the printout."""

    ids: Any
    users: list[dict] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)


def build_demo(db: sqlite_utils.Database, today: date) -> DemoReport:
    """Install every area's part of the demo into an empty database.

    :raises ShowopsError: when a part cannot be installed (the message says which).
    """
    from showops.show import demo_data
    from showops.store import care, live, show, users

    ids = show.install_demo(db, today)
    report = DemoReport(ids=ids)
    report.users = users.install_demo_users(db, stage_manager=demo_data.STAGE_MANAGER,
                                            crew=[c.name for c in demo_data.CREW])
    report.notes += care.seed_demo_care(db, ids, today)
    counts = live.run_demo_performance(db, ids.past_performance)
    report.notes.append(f"ran the past performance through the live runner: {counts['rows']} log rows, "
                        f"{counts['refused']} refused attempt(s), {counts['holds']} hold(s)")
    from showops.store import audit

    report.notes += audit.seed_demo_audit(db, ids)
    return report
