"""Productions, people, performances and cues: bad input gives a clear error naming the
field or row, and nothing is half-written."""

from __future__ import annotations

from datetime import date, datetime

import pytest

from showops.errors import NotFound, RigFileError, ValidationError
from showops.store import show as store
from showops.store import transaction

from pathlib import Path

RIG_TEXT = (Path(__file__).parents[2] / "procedures" / "rigs" / "orchard-lift.toml").read_text(encoding="utf-8")

TODAY = date(2026, 12, 2)
NOW = datetime(2026, 12, 2, 12, 0)


@pytest.fixture
def season(rigged):
    db = rigged
    prod = store.add_production(db, "The Glass Orchard", "Kestrel Yard Dance Company")
    venue = store.add_venue(db, "Ferrier Street Drill Hall", "Aldmouth")
    perf = store.add_performance(db, prod, venue, "2026-12-12 19:30", now=NOW)
    return db, prod, venue, perf


# ---------------------------------------------------------------- single records


@pytest.mark.parametrize("mass, message", [
    ("eighty", "mass_kg: 'eighty' is not a number (give the mass in kg as digits, e.g. 62)"),
    ("-4", "mass_kg: -4 is not a mass (give a number of kg greater than 0)"),
    ("0", "mass_kg: 0 is not a mass (give a number of kg greater than 0)"),
    ("620", "mass_kg: 620 kg is not a person's mass (give kg, at most 300)"),
    ("", "mass_kg: '' is not a number (give the mass in kg as digits, e.g. 62)"),
])
def test_bad_mass_is_refused_with_the_field(rigged, mass, message):
    with pytest.raises(ValidationError) as err:
        store.add_performer(rigged, "Ines Marlowe", mass, ["orchard-lift"])
    assert str(err.value) == message
    assert rigged["person"].count == 0


def test_duplicate_performer_is_refused(rigged):
    store.add_performer(rigged, "Ines Marlowe", 52, ["orchard-lift"])
    with pytest.raises(ValidationError) as err:
        store.add_performer(rigged, "ines marlowe", 53)
    assert str(err.value) == "name: 'ines marlowe' is already on the performers' list (duplicate performer)"


def test_a_cue_with_an_unknown_rig_is_refused(season):
    db, prod, *_ = season
    with pytest.raises(ValidationError) as err:
        store.add_cue(db, prod, "7", "Orchard at noon", rig="apple-crane")
    assert str(err.value) == "rig: unknown rig 'apple-crane' (known: orchard-lift)"
    assert db["cue"].count == 0


@pytest.mark.parametrize("starts_at, message", [
    ("2026-11-30 19:30", "starts_at: 2026-11-30 19:30 is in the past (now is 2026-12-02 12:00)"),
    ("12/12/2026 19:30", "starts_at: '12/12/2026 19:30' is not an ISO 8601 date and time "
                         "(write YYYY-MM-DD HH:MM, e.g. 2026-12-12 19:30)"),
    ("2026-02-30 19:30", "starts_at: '2026-02-30 19:30' is not a real date and time "
                         "(write YYYY-MM-DD HH:MM, e.g. 2026-12-12 19:30)"),
    ("2026-12-12 19:30", "starts_at: a performance at 2026-12-12 19:30 already exists"),
])
def test_bad_performance_time_is_refused(season, starts_at, message):
    db, prod, venue, _ = season
    with pytest.raises(ValidationError) as err:
        store.add_performance(db, prod, venue, starts_at, now=NOW)
    assert str(err.value) == message
    assert db["performance"].count == 1


@pytest.mark.parametrize("ref", [1, "1", "2026-12-12 19:30", "2026-12-12T19:30"])
def test_a_performance_is_found_by_id_or_iso_date_and_time(season, ref):
    db, *_, perf = season
    assert store.find_performance(db, ref) == perf


def test_a_performance_that_does_not_exist_names_the_ones_that_do(season):
    db, *_ = season
    with pytest.raises(NotFound) as err:
        store.find_performance(db, "2026-12-13 19:30")
    assert str(err.value) == "performance '2026-12-13 19:30' does not exist; there are: 1 (2026-12-12 19:30)"
    with pytest.raises(NotFound):
        store.load_night_plan(db, 42)


def test_a_changed_rig_file_is_a_new_version(rigged):
    first = store.add_rig(rigged, "orchard-lift", RIG_TEXT)  # same text: same version, no new row
    changed = RIG_TEXT.replace("mass = 95", "mass = 105")
    second = store.add_rig(rigged, "orchard-lift", changed)
    assert first != second
    assert rigged["rig_version"].count == 2
    with pytest.raises(RigFileError):
        store.add_rig(rigged, "orchard-lift", "kind = 'parallel-linkage'\n")
    assert rigged["rig_version"].count == 2


def test_the_plan_uses_the_latest_rig_version(season):
    db, prod, _, perf = season
    store.add_performer(db, "Saskia Dunmore", 55, ["orchard-lift"])
    cue = store.add_cue(db, prod, "11", "Harvest lowering", rig="orchard-lift")
    store.cast_riders(db, perf, cue, [1])
    before = store.load_night_plan(db, perf).cues[0].rig_version
    store.add_rig(db, "orchard-lift", RIG_TEXT.replace("mass = 95", "mass = 100"))
    after = store.load_night_plan(db, perf).cues[0].rig_version
    assert before != after and len(after) == 64


# ---------------------------------------------------------------- CSV import: all or nothing

CAST_GOOD = "name,mass_kg,rigs\nInes Marlowe,52,orchard-lift\nTobiah Renn,61,orchard-lift\nPriya Castellane,64,\n"


def test_cast_import_takes_every_good_row(rigged):
    report = store.import_cast_csv(rigged, CAST_GOOD)
    assert report.added == ("Ines Marlowe", "Tobiah Renn", "Priya Castellane")
    assert rigged["performer"].count == 3
    assert rigged["performer_rig"].count == 2


def test_cast_import_with_bad_rows_imports_nothing_and_names_each_row(rigged):
    text = ("name,mass_kg,rigs\n"
            "Ines Marlowe,52,orchard-lift\n"
            "Tobiah Renn,eighty,orchard-lift\n"
            "Saskia Dunmore,-55,orchard-lift\n"
            "Ines Marlowe,53,\n"
            "Corin Achterberg,58,apple-crane\n")
    with pytest.raises(store.ImportRefused) as err:
        store.import_cast_csv(rigged, text, source="cast.csv")
    assert err.value.problems == [
        "row 3, mass_kg: 'eighty' is not a number (give the mass in kg as digits, e.g. 62)",
        "row 4, mass_kg: -55 is not a mass (give a number of kg greater than 0)",
        "row 5, name: 'Ines Marlowe' is also on row 2 (duplicate performer)",
        "row 6, rigs: unknown rig 'apple-crane' (known: orchard-lift)",
    ]
    assert str(err.value).startswith("cast.csv: nothing imported; 4 rows could not be taken:\n  row 3, mass_kg:")
    assert rigged["person"].count == 0 and rigged["performer"].count == 0


def test_cast_import_refuses_a_missing_column(rigged):
    with pytest.raises(ValidationError) as err:
        store.import_cast_csv(rigged, "name,weight\nInes Marlowe,52\n", source="cast.csv")
    assert str(err.value) == ("cast.csv: missing column mass_kg (the first line must name: name, mass_kg; "
                              "optional: rigs)")


def test_cast_import_refuses_someone_already_on_the_list(rigged):
    store.add_performer(rigged, "Tobiah Renn", 61)
    with pytest.raises(store.ImportRefused) as err:
        store.import_cast_csv(rigged, CAST_GOOD)
    assert err.value.problems == [
        "row 3, name: 'Tobiah Renn' is already on the performers' list (duplicate performer)"]
    assert rigged["performer"].count == 1


def test_a_failure_while_writing_rolls_the_whole_import_back(rigged, monkeypatch):
    calls = []
    real = store.add_performer

    def failing(db, name, mass, rigs=()):
        calls.append(name)
        if len(calls) == 3:
            raise ValidationError("name", "simulated failure on the third write")
        return real(db, name, mass, rigs)

    monkeypatch.setattr(store, "add_performer", failing)
    with pytest.raises(ValidationError):
        store.import_cast_csv(rigged, CAST_GOOD)
    assert rigged["person"].count == 0


CREW_GOOD = ("name,roles,rig,trained_on,trained_by,expires_on\n"
             "Margit Oduya,brake; spotter,orchard-lift,2026-09-01,Halden Voss,2027-09-01\n"
             "Halden Voss,caller,,,,\n"
             "Rook Ellery,spotter;lifters,orchard-lift,2025-10-01,Lise Armitage,2026-10-28\n")


def test_crew_import_takes_roles_and_training(rigged):
    report = store.import_crew_csv(rigged, CREW_GOOD, today=TODAY)
    assert report.added == ("Margit Oduya", "Halden Voss", "Rook Ellery")
    roles = {(r["person_id"], r["role"]) for r in rigged["crew_role"].rows}
    assert len(roles) == 5
    assert rigged["training"].count == 2  # an expired training is a fact worth keeping


def test_crew_import_with_bad_rows_imports_nothing(rigged):
    text = ("name,roles,rig,trained_on,trained_by,expires_on\n"
            "Margit Oduya,brake,orchard-lift,01/09/2026,Halden Voss,2027-09-01\n"
            "Fenn Castell,lifters,orchard-lift,2026-12-20,Halden Voss,2027-12-20\n"
            "Joss Penhaligon,,orchard-lift,2026-09-01,Halden Voss,2027-09-01\n"
            "Ama Kettering,spotter,apple-crane,2026-09-01,Halden Voss,2027-09-01\n"
            "Bastian Loe,spotter,orchard-lift,2026-09-01,,2027-09-01\n"
            "Nell Tregarthen,brake,orchard-lift,2026-09-01,Halden Voss,2026-08-01\n")
    with pytest.raises(store.ImportRefused) as err:
        store.import_crew_csv(rigged, text, source="crew.csv", today=TODAY)
    assert err.value.problems == [
        "row 2, trained_on: '01/09/2026' is not an ISO 8601 date (write YYYY-MM-DD, e.g. 2026-11-03)",
        "row 3, trained_on: 2026-12-20 is in the future (today is 2026-12-02)",
        "row 4, roles: empty (give the roles this person may take, e.g. brake; lifters)",
        "row 5, rig: unknown rig 'apple-crane' (known: orchard-lift)",
        "row 6, trained_by: empty (training on orchard-lift needs trained_on, trained_by and expires_on)",
        "row 7, expires_on: 2026-08-01 is not after trained_on 2026-09-01",
    ]
    assert rigged["person"].count == 0 and rigged["training"].count == 0


def test_crew_import_refuses_a_missing_column(rigged):
    with pytest.raises(ValidationError) as err:
        store.import_crew_csv(rigged, "name\nMargit Oduya\n", source="crew.csv", today=TODAY)
    assert str(err.value) == ("crew.csv: missing column roles (the first line must name: name, roles; "
                              "optional: rig, trained_on, trained_by, expires_on)")


def test_crew_import_refuses_a_duplicate_person(rigged):
    text = "name,roles\nMargit Oduya,brake\nMargit Oduya,brake\n"
    with pytest.raises(store.ImportRefused) as err:
        store.import_crew_csv(rigged, text, today=TODAY)
    assert err.value.problems == ["row 3, name: 'Margit Oduya' is also on row 2 (duplicate crew member)"]


# ---------------------------------------------------------------- export


def test_verdict_rows_and_csv_carry_totals_not_masses(season):
    db, prod, _, perf = season
    a = store.add_performer(db, "Ines Marlowe", 52.6, ["orchard-lift"])
    b = store.add_performer(db, "Tobiah Renn", 61.3, ["orchard-lift"])
    with transaction(db):
        cue = store.add_cue(db, prod, "5", "Two in the branches", rig="orchard-lift")
        store.add_cue(db, prod, "6", "Orchard at noon")
        store.cast_riders(db, perf, cue, [a, b])
    rows = store.verdict_rows([store.load_night_plan(db, perf)])
    assert [(r["cue"], r["rig"]) for r in rows] == [("5", "orchard-lift"), ("6", "")]
    assert rows[0]["rider_total_kg"] == "122"  # 52.6 + 61.3 + 2 x 4 kg allowance
    text = store.to_csv(rows, store.VERDICT_COLUMNS)
    assert text.splitlines()[0] == ",".join(store.VERDICT_COLUMNS)
    assert "52.6" not in text and "61.3" not in text
    assert "nobody is assigned to" in text or "no procedure on file" in text


def test_cue_import_appends_in_order_and_refuses_an_unknown_rig(season):
    db, prod, *_ = season
    store.add_cue(db, prod, "1", "Dust on the sill")
    bad = ("number,name,rig\n"
           "2,First frost,\n"
           "3,Blossom rise,apple-crane\n"
           "1,Again,\n"
           "2,Twice,\n")
    with pytest.raises(store.ImportRefused) as err:
        store.import_cues_csv(db, bad, prod, source="cues.csv")
    assert err.value.problems == [
        "row 3, rig: unknown rig 'apple-crane' (known: orchard-lift)",
        "row 4, number: cue 1 already exists in this production",
        "row 5, number: cue 2 is also on row 2",
    ]
    assert db["cue"].count == 1
    report = store.import_cues_csv(db, "number,name,rig\n2,First frost,\n3,Blossom rise,orchard-lift\n", prod)
    assert report.added == ("2 First frost", "3 Blossom rise")
    assert [(c["number"], c["rig"]) for c in store.cue_list(db)] == [("1", None), ("2", None), ("3", "orchard-lift")]
