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
