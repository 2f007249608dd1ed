"""`showops log verify`: exit 0 with the head when intact, exit 1 naming the row."""

from __future__ import annotations

from click.testing import CliRunner

from showops.cli import main
from showops.store import open_db
from showops.store.log import append_events, log_head


def test_verify_passes_on_an_intact_log(tmp_path, make_events):
    db = open_db(tmp_path)
    append_events(db, make_events(5))
    last_id, last_hash = log_head(db)
    result = CliRunner().invoke(main, ["log", "verify", "--instance", str(tmp_path)])
    assert result.exit_code == 0, result.output
    assert result.output.strip() == f"Log intact: 5 rows, every hash matches; last hash {last_hash}"


def test_verify_exits_1_naming_the_changed_row(tmp_path, make_events):
    db = open_db(tmp_path)
    append_events(db, make_events(5))
    db.conn.execute("DROP TRIGGER step_log_no_update")
    db.conn.execute("UPDATE step_log SET role = 'spotter', person_name = 'Nobody' WHERE id = 3")
    result = CliRunner().invoke(main, ["log", "verify", "--instance", str(tmp_path)])
    assert result.exit_code == 1, result.output
    assert "Log check FAILED at row 3: row 3 does not match its hash" in result.output


def test_verify_without_a_database_is_an_error(tmp_path):
    result = CliRunner().invoke(main, ["log", "verify", "--instance", str(tmp_path / "none")])
    assert result.exit_code == 2
    assert "Error: no showops database in" in result.output


def test_log_show_prints_rows_and_json(tmp_path):
    import json

    db = open_db(tmp_path)
    append_events(db, [
        {"event": "step_confirmed", "at_utc": "2026-11-20T19:31:05.000+00:00", "person_name": "Margit Oduya",
         "role": "brake", "performance_id": 1, "cue_id": 3, "step_number": 1},
        {"event": "refused", "at_utc": "2026-11-20T19:31:09.000+00:00", "person_name": "Rook Ellery",
         "performance_id": 1, "cue_id": 3, "step_number": 3, "detail": {"code": "wrong_person"}},
        {"event": "sign_in", "at_utc": "2026-11-20T19:00:00.000+00:00", "person_name": "Ama Kettering"},
    ])
    result = CliRunner().invoke(main, ["log", "show", "--instance", str(tmp_path), "--performance", "1"])
    assert result.exit_code == 0, result.output
    assert result.output.splitlines() == [
        "     1  2026-11-20 19:31:05  step_confirmed    Margit Oduya (brake)  [perf 1 cue 3 step 1]",
        '     2  2026-11-20 19:31:09  refused           Rook Ellery  [perf 1 cue 3 step 3]  {"code":"wrong_person"}',
    ]
    result = CliRunner().invoke(main, ["log", "show", "--instance", str(tmp_path), "--json", "--limit", "2"])
    lines = result.output.splitlines()
    assert [json.loads(x)["id"] for x in lines[:2]] == [1, 2] and lines[2] == "... more rows: continue with --after 2"
