"""Shared fixtures for the live log tests: a temporary instance per test."""

from __future__ import annotations

import random

import pytest

from showops.store import open_db
from showops.store.log import append_events

EVENTS = ("sign_in", "cue_started", "standby", "go", "step_confirmed", "check_confirmed",
          "refused", "hold", "resume", "cue_completed", "signoff", "inspection_recorded")
NAMES = ("Ada Marsh", "Bram Okafor", "Zoë Ó Briain", "Kit Lindqvist")  # invented


@pytest.fixture
def db(tmp_path):
    database = open_db(tmp_path / "instance")
    yield database
    database.conn.close()


def sample_events(n: int, seed: int = 7) -> list[dict]:
    """``n`` invented events of every kind, seeded."""
    rnd = random.Random(seed)
    out = []
    for i in range(n):
        out.append({
            "event": EVENTS[i % len(EVENTS)], "person_id": rnd.randint(1, 4), "person_name": rnd.choice(NAMES),
            "role": rnd.choice(("brake", "spotter", "lifters", "stage manager")), "device": f"phone-{rnd.randint(1, 9)}",
            "performance_id": 3, "cue_id": rnd.randint(1, 4), "step_key": f"Board/Step {i}", "step_number": i,
            "procedure_version": "a" * 64, "rig_version": "b" * 64, "client_id": f"c-{seed}-{i}",
            "device_at": None if i % 3 else "2026-11-20T19:30:00.000+00:00",
            "detail": {"reason": "out of order", "n": i} if i % 4 == 0 else None,
        })
    return out


@pytest.fixture
def make_events():
    """The :func:`sample_events` factory, for tests that need their own events."""
    return sample_events


@pytest.fixture(scope="session")
def lift():
    """The invented lift procedure, crew and actors of ``tests/live/lift.py``."""
    import importlib.util
    from pathlib import Path

    spec = importlib.util.spec_from_file_location("live_lift_fixture", Path(__file__).with_name("lift.py"))
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@pytest.fixture
def filled(db):
    append_events(db, sample_events(12))
    return db
