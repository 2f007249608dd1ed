"""A small invented scene for the care store tests (Kestrel Yard's orchard lift).

Everything here is invented fixture data: people, masses, dates.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date, datetime
from pathlib import Path

import pytest

from showops.store import open_db
from showops.store import show as show_store

ROOT = Path(__file__).resolve().parents[2]
TODAY = date(2026, 11, 20)


@dataclass
class Scene:
    db: object
    tonight: int
    next_week: int
    cue: int
    people: dict
    instance: Path


@pytest.fixture
def scene(tmp_path) -> Scene:
    db = open_db(tmp_path / "instance")
    rig_text = (ROOT / "procedures" / "rigs" / "orchard-lift.toml").read_text(encoding="utf-8")
    show_store.add_rig(db, "orchard-lift", rig_text)
    production = show_store.add_production(db, "The Glass Orchard", "Kestrel Yard Dance Company")
    venue = show_store.add_venue(db, "Ferrier Street Drill Hall", "Aldmouth")
    people = {}
    for name, mass, rigs in (("Odile Brand", 58, ["orchard-lift"]), ("Pia Lund", 66, ["orchard-lift"]),
                             ("Quentin Hale", 60, [])):
        people[name] = show_store.add_performer(db, name, mass, rigs)
    trained = [("orchard-lift", "2026-09-01", "Ada Fenn", "2027-09-01")]
    for name, roles, training in (
            ("Sam Okoro", ["caller", "stage manager"], trained), ("Ivo Marsh", ["brake"], trained),
            ("Nell Varga", ["lifters"], trained), ("Ada Fenn", ["head of stage"], trained),
            ("Marta Quill", ["examiner"], []),
            ("Rune Tarr", ["lifters"], [("orchard-lift", "2025-01-01", "Ada Fenn", "2026-01-01")])):
        people[name] = show_store.add_crew_member(db, name, roles, training, today=TODAY)
    tonight = show_store.add_performance(db, production, venue, datetime(2026, 11, 20, 19, 30),
                                         stage_manager_id=people["Sam Okoro"], allow_past=True)
    next_week = show_store.add_performance(db, production, venue, datetime(2026, 11, 27, 19, 30),
                                           stage_manager_id=people["Sam Okoro"], allow_past=True)
    cue = show_store.add_cue(db, production, "7", "Orchard rise", rig="orchard-lift")
    for perf in (tonight, next_week):
        show_store.cast_riders(db, perf, cue, [people["Odile Brand"]])
        show_store.assign_crew(db, perf, cue, "caller", [people["Sam Okoro"]])
        show_store.assign_crew(db, perf, cue, "brake", [people["Ivo Marsh"]])
        show_store.assign_crew(db, perf, cue, "lifters", [people["Nell Varga"]])
    return Scene(db, tonight, next_week, cue, people, tmp_path / "instance")
