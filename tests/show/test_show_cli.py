"""``showops demo``, ``performances``, ``import`` and ``export`` through click's runner."""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner

from showops.cli import main
from showops.show import demo_data as d


@pytest.fixture
def runner():
    return CliRunner()


@pytest.fixture
def instance(tmp_path, runner):
    folder = tmp_path / "instance"
    result = runner.invoke(main, ["demo", "--instance", str(folder)])
    assert result.exit_code == 0, result.output
    return folder


def test_demo_prints_what_it_made_where_and_the_next_commands(tmp_path, runner):
    folder = tmp_path / "inst"
    result = runner.invoke(main, ["demo", "--instance", str(folder)])
    assert result.exit_code == 0, result.output
    assert f"Built the demo in {folder}/showops.db" in result.output
    assert d.COMPANY in result.output and d.PRODUCTION in result.output and d.VENUE in result.output
    assert "6 performances:" in result.output
    assert "showops sheet \"" in result.output and "--out crew-sheet.pdf" in result.output
    assert "showops serve" in result.output


def test_demo_refuses_an_instance_with_data_unless_forced_and_keeps_a_backup(instance, runner):
    again = runner.invoke(main, ["demo", "--instance", str(instance)])
    assert again.exit_code == 2
    assert "already holds an earlier demo; pass --force" in again.output
    forced = runner.invoke(main, ["demo", "--instance", str(instance), "--force"])
    assert forced.exit_code == 0, forced.output
    backups = list(instance.glob("showops.db.*.bak"))
    assert len(backups) == 1 and backups[0].stat().st_size > 0


def test_demo_names_real_data_as_not_the_demos(tmp_path, runner):
    folder = tmp_path / "real"
    (folder).mkdir()
    (folder / "cast.csv").write_text("name,mass_kg\nA Person,70\n")
    assert runner.invoke(main, ["import", "cast", str(folder / "cast.csv"), "--instance", str(folder)]).exit_code == 0
    result = runner.invoke(main, ["demo", "--instance", str(folder)])
    assert result.exit_code == 2
    assert "already holds data that is not the demo's" in result.output


def test_performances_json_has_the_contract_keys(instance, runner):
    result = runner.invoke(main, ["performances", "--json", "--instance", str(instance)])
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    assert isinstance(data, list) and len(data) == 6
    for perf in data:
        assert {"id", "starts_at", "cues"} <= set(perf)
        assert isinstance(perf["id"], int)
        assert len(perf["starts_at"]) == 16 and perf["starts_at"][10] == "T"
        for cue in perf["cues"]:
            assert {"number", "name", "rig", "verdict", "reasons"} <= set(cue)
            assert cue["verdict"] in ("ok", "caution", "blocked")
            assert all(isinstance(r["text"], str) and r["text"] for r in cue["reasons"])
            if cue["rig"] is None:
                assert cue["verdict"] == "ok" and cue["reasons"] == []
    numbers = [c["number"] for c in data[0]["cues"]]
    assert numbers[:3] == ["1", "2", "3"]


def test_no_output_shows_one_persons_mass(instance, runner):
    outputs = [runner.invoke(main, args + ["--instance", str(instance)]).output for args in (
        ["performances"], ["performances", "--json"], ["export", "verdicts"], ["export", "verdicts", "--format", "json"],
        ["export", "cues"])]
    text = "\n".join(outputs)
    for p in d.PERFORMERS:
        assert f"{p.mass_kg:g} kg" not in text
        assert f'"mass_kg": {p.mass_kg}' not in text
        assert f"{p.name}, {p.mass_kg:g}" not in text
    assert "mass_kg" not in text


def test_performances_text_shows_the_block_and_the_caution(instance, runner):
    result = runner.invoke(main, ["performances", "--instance", str(instance)])
    assert result.exit_code == 0, result.output
    assert "riders with allowance 151 kg is 108% of the 140 kg limit (11 kg over)" in result.output
    assert "Caution:" in result.output


def test_performances_add_refuses_a_past_date_and_takes_a_future_one(instance, runner):
    past = runner.invoke(main, ["performances", "add", "2020-01-01 19:30", "--instance", str(instance)])
    assert past.exit_code == 2
    assert past.output.startswith("Error: starts_at: 2020-01-01 19:30 is in the past")
    bad = runner.invoke(main, ["performances", "add", "next friday", "--instance", str(instance)])
    assert bad.exit_code == 2 and "is not an ISO 8601 date and time" in bad.output
    ok = runner.invoke(main, ["performances", "add", "2099-06-01 19:30", "--instance", str(instance)])
    assert ok.exit_code == 0, ok.output
    assert "Added performance 7 at 2099-06-01 19:30." in ok.output


def test_export_verdicts_for_a_missing_performance_is_a_clear_error(instance, runner):
    result = runner.invoke(main, ["export", "verdicts", "1999-01-01 19:30", "--instance", str(instance)])
    assert result.exit_code == 2
    assert result.output.startswith("Error: performance '1999-01-01 19:30' does not exist; there are: 1 (")


def test_export_cues_json_and_verdicts_csv_to_files(instance, runner, tmp_path):
    cues = tmp_path / "cues.json"
    result = runner.invoke(main, ["export", "cues", "--format", "json", "--out", str(cues), "--instance", str(instance)])
    assert result.exit_code == 0, result.output
    rows = json.loads(cues.read_text())
    assert [r["number"] for r in rows][:2] == ["1", "2"] and {"rig", "procedure"} <= set(rows[0])
    out = tmp_path / "v.csv"
    result = runner.invoke(main, ["export", "verdicts", "1", "--out", str(out), "--instance", str(instance)])
    assert result.exit_code == 0, result.output
    lines = out.read_text().splitlines()
    assert lines[0].startswith("performance_id,starts_at,cue,name,rig,verdict")
    assert len(lines) == 1 + len(rows)


def test_import_cast_reports_every_bad_row_and_exits_2(tmp_path, runner):
    folder = tmp_path / "inst"
    bad = tmp_path / "cast.csv"
    bad.write_text("name,mass_kg\nA Person,eighty\nB Person,-3\n")
    result = runner.invoke(main, ["import", "cast", str(bad), "--instance", str(folder)])
    assert result.exit_code == 2
    assert result.output == (
        f"Error: {bad}: nothing imported; 2 rows could not be taken:\n"
        "  row 2, mass_kg: 'eighty' is not a number (give the mass in kg as digits, e.g. 62)\n"
        "  row 3, mass_kg: -3 is not a mass (give a number of kg greater than 0)\n")


def test_import_crew_then_a_clean_report(tmp_path, runner):
    folder = tmp_path / "inst"
    crew = tmp_path / "crew.csv"
    crew.write_text("name,roles\nMargit Oduya,brake;spotter\n")
    result = runner.invoke(main, ["import", "crew", str(crew), "--instance", str(folder)])
    assert result.exit_code == 0, result.output
    assert result.output == f"Imported 1 crew from {crew}: Margit Oduya\n"


def test_import_rig_and_procedure_make_new_versions_used_by_the_verdicts(instance, runner, tmp_path, procedures_dir):
    from showops.store import open_db
    from showops.store import show as store

    rig_text = (procedures_dir / "rigs" / "orchard-lift.toml").read_text()
    changed = tmp_path / "orchard-lift.toml"
    changed.write_text(rig_text.replace("mass = 95", "mass = 100"))
    result = runner.invoke(main, ["import", "rig", str(changed), "--instance", str(instance)])
    assert result.exit_code == 0, result.output
    assert result.output.startswith("Rig orchard-lift: version ")
    result = runner.invoke(main, ["import", "procedure", str(procedures_dir / "orchard-lift.md"),
                                  "--instance", str(instance)])
    assert result.exit_code == 0, result.output
    db = open_db(instance)
    assert db.execute("SELECT COUNT(*) FROM rig_version WHERE rig_slug = 'orchard-lift'").fetchone()[0] == 2
    plan = store.load_night_plan(db, 2)
    blossom = next(c for c in plan.cues if c.number == "3")
    import hashlib
    assert blossom.rig_version == hashlib.sha256(changed.read_text().encode()).hexdigest()
    assert "no procedure on file for this cue" not in [r.text for r in blossom.reasons]


def test_import_rig_refuses_a_bad_rig_file(instance, runner, tmp_path):
    bad = tmp_path / "apple-crane.toml"
    bad.write_text("kind = 'catapult'\n")
    result = runner.invoke(main, ["import", "rig", str(bad), "--instance", str(instance)])
    assert result.exit_code == 2
    assert result.output.startswith("Error: ") and "unknown kind 'catapult'" in result.output
