"""Fixtures for the night's verdicts and the demo: a temporary instance per test."""

from __future__ import annotations

import shutil
from datetime import date
from pathlib import Path

import pytest

from showops.store import open_db
from showops.store.show import install_demo, repo_procedures_dir

FIXTURES = Path(__file__).parent / "fixtures"
#: A fixed day for the demo, so figures and dates in assertions do not drift.
TODAY = date(2026, 12, 2)


@pytest.fixture
def procedures_dir(tmp_path) -> Path:
    """The shipped procedures/ folder, with the test fixtures' procedures standing in for
    any of procedures/orchard-lift.md and bough-lever.md the checkout does not have yet."""
    folder = tmp_path / "procedures"
    shutil.copytree(repo_procedures_dir(), folder)
    for fixture in FIXTURES.glob("*.md"):
        if not (folder / fixture.name).exists():
            shutil.copy(fixture, folder / fixture.name)
    return folder


@pytest.fixture
def today():
    return TODAY


@pytest.fixture
def db(tmp_path):
    database = open_db(tmp_path / "instance")
    yield database
    database.conn.close()


@pytest.fixture
def demo(db, procedures_dir):
    """(db, DemoIds) with the demo built for TODAY."""
    return db, install_demo(db, TODAY, procedures_dir=procedures_dir)
