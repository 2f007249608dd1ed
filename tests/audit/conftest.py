"""Fixtures for the audit's store, CLI and report tests: a small invented instance.

Kestrel Yard Dance Company, *The Glass Orchard*, Ferrier Street Drill Hall: invented
fixture data. Log rows are appended through ``store.log.append_events`` (the only
writer of ``step_log``); the season test in test_season_run.py drives the live runner.
"""

from __future__ import annotations

from datetime import datetime, timedelta, timezone
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[2]
T0 = datetime(2026, 11, 20, 19, 30, tzinfo=timezone.utc)


class Instance:
    """An instance folder with two performances and two cues (one on a rig)."""

    def __init__(self, folder: Path):
        from showops.store import open_db
        from showops.store import show as s

        self.folder = folder
        self.db = open_db(folder)
        db = self.db
        s.add_rig(db, "example-lift", (REPO / "docs/examples/example-lift.toml").read_text(encoding="utf-8"))
        self.production = s.add_production(db, "The Glass Orchard", "Kestrel Yard Dance Company")
        self.venue = s.add_venue(db, "Ferrier Street Drill Hall", "Aldmouth")
        self.sm = s.add_crew_member(db, "June Okafor", ["stage manager"])
        self.perf1 = s.add_performance(db, self.production, self.venue, "2026-11-20T19:30", allow_past=True,
                                       stage_manager_id=self.sm)
        self.perf2 = s.add_performance(db, self.production, self.venue, "2026-11-21T19:30", allow_past=True,
                                       stage_manager_id=self.sm)
        self.perf3 = s.add_performance(db, self.production, self.venue, "2026-11-22T19:30", allow_past=True,
                                       stage_manager_id=self.sm)
        self.cue_lift = s.add_cue(db, self.production, "Q4", "Orchard rises", rig="example-lift")
        self.cue_house = s.add_cue(db, self.production, "Q1", "House out", position=0)
        self.t = T0

    def log(self, event, *, performance, cue=None, step=None, number=None, person=(1, "Ada Brennock"),
            role="brake", dt=5.0, detail=None, device_lag=None, version=None):
        from showops.store.log import append_events

        self.t += timedelta(seconds=dt)
        row = {"event": event, "at_utc": self.t.isoformat(), "person_id": person[0], "person_name": person[1],
               "role": role, "performance_id": performance, "cue_id": cue, "step_key": step,
               "step_number": number, "detail": detail, "procedure_version": version,
               "device_at": (self.t - timedelta(seconds=device_lag)).isoformat() if device_lag is not None else None}
        return append_events(self.db, [row])[0]

    def count(self, table: str) -> int:
        return self.db.execute(f"SELECT count(*) FROM {table}").fetchone()[0]

    def run_cue(self, performance, *, hold=False, signoff=True):
        """A short cue: start, a HOLD if asked, two steps, complete, sign-off."""
        rows = [self.log("cue_started", performance=performance, cue=self.cue_lift, role="caller",
                         person=(5, "June Okafor"))]
        if hold:
            rows.append(self.log("hold", performance=performance, cue=self.cue_lift, role="spotter",
                                 person=(2, "Tomas Ilve"), detail={"note": "rider signalled"}))
            rows.append(self.log("resume", performance=performance, cue=self.cue_lift, role="caller",
                                 person=(5, "June Okafor")))
        rows.append(self.log("step_confirmed", performance=performance, cue=self.cue_lift, step="Board/Brake on",
                             number=1))
        rows.append(self.log("check_confirmed", performance=performance, cue=self.cue_lift, step="Board/Brake on",
                             number=1, person=(2, "Tomas Ilve"), role="spotter"))
        rows.append(self.log("cue_completed", performance=performance, cue=self.cue_lift, role="caller",
                             person=(5, "June Okafor")))
        if signoff:
            rows.append(self.log("signoff", performance=performance, role="caller", person=(5, "June Okafor")))
        return rows


@pytest.fixture
def inst(tmp_path):
    return Instance(tmp_path / "instance")


@pytest.fixture
def sm():
    from showops.store.audit import Actor

    return Actor("June Okafor", "stage_manager", person_id=None)


@pytest.fixture
def crew():
    from showops.store.audit import Actor

    return Actor("Tomas Ilve", "crew")
