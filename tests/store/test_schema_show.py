"""Migrations 1-99: a database made by an older showops upgrades in place."""

from __future__ import annotations

import sqlite3

import pytest

import showops.store.db as dbmod
from showops.store import open_db
from showops.store.schema_show import MIGRATIONS


def test_show_migrations_stay_in_their_range_and_in_order():
    numbers = [m.number for m in MIGRATIONS]
    assert numbers == sorted(numbers) and len(set(numbers)) == len(numbers)
    assert all(1 <= n <= 99 for n in numbers)


def test_an_older_database_upgrades_in_place_keeping_its_data(tmp_path, monkeypatch):
    every = dbmod.all_migrations()
    monkeypatch.setattr(dbmod, "all_migrations", lambda: [m for m in every if m.number <= 1])
    old = open_db(tmp_path)
    assert "instance_meta" not in old.table_names()
    old["production"].insert({"name": "The Glass Orchard", "company": "Kestrel Yard Dance Company"})
    old["person"].insert({"name": "Ines Marlowe"})
    old.conn.close()

    monkeypatch.setattr(dbmod, "all_migrations", lambda: every)
    db = open_db(tmp_path)
    assert "instance_meta" in db.table_names()
    applied = [r[0] for r in db.execute("SELECT number FROM _migrations ORDER BY number")]
    assert applied == [m.number for m in every]
    assert [r["name"] for r in db["person"].rows] == ["Ines Marlowe"]
    assert db["production"].count == 1


def test_opening_twice_applies_nothing_the_second_time(tmp_path):
    open_db(tmp_path).conn.close()
    db = open_db(tmp_path)
    assert dbmod.migrate(db) == []


def test_foreign_keys_refuse_a_cue_for_a_missing_production(tmp_path):
    db = open_db(tmp_path)
    with pytest.raises(sqlite3.IntegrityError):
        db.execute("INSERT INTO cue (production_id, position, number, name) VALUES (99, 1, '1', 'x')")


def test_performer_mass_must_be_positive_even_below_the_library(tmp_path):
    db = open_db(tmp_path)
    pid = db["person"].insert({"name": "Wren Halloway"}).last_pk
    with pytest.raises(sqlite3.IntegrityError):
        db.execute("INSERT INTO performer (person_id, mass_kg) VALUES (?, -5)", [pid])
