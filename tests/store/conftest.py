"""A temporary instance per test, with the orchard lift on record."""

from __future__ import annotations

from pathlib import Path

import pytest

from showops.store import open_db
from showops.store import show as store

RIG_TEXT = (Path(__file__).parents[2] / "procedures" / "rigs" / "orchard-lift.toml").read_text(encoding="utf-8")


@pytest.fixture
def db(tmp_path):
    database = open_db(tmp_path / "instance")
    yield database
    database.conn.close()


@pytest.fixture
def rigged(db):
    store.add_rig(db, "orchard-lift", RIG_TEXT)
    return db
