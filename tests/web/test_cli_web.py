"""``showops serve`` and ``showops user ...`` through click's CliRunner."""

from __future__ import annotations

import ipaddress

import pytest
from werkzeug.security import check_password_hash

from showops.cli import main
from showops.cli import web as cli_web
from showops.errors import ShowopsError
from showops.store import open_db
from showops.store import users as store_users


def users_in(instance):
    db = open_db(instance)
    try:
        return {u.username: u for u in store_users.list_users(db)}, db.execute(
            "SELECT username, password_hash, pin_hash FROM web_user").fetchall()
    finally:
        db.conn.close()


def test_user_add_asks_for_the_password_twice_and_stores_only_a_hash(runner, instance):
    result = runner.invoke(main, ["user", "add", "mara", "--role", "stage_manager", "--name", "Mara Quill",
                                  "--instance", str(instance)], input="orchard-rehearsal-7\norchard-rehearsal-7\n")
    assert result.exit_code == 0, result.output
    assert "Added mara (stage manager)." in result.output
    users, rows = users_in(instance)
    assert users["mara"].display_name == "Mara Quill"
    (name, password_hash, pin_hash), = rows
    assert "orchard-rehearsal-7" not in password_hash
    assert check_password_hash(password_hash, "orchard-rehearsal-7")
    assert pin_hash is None


def test_user_add_refuses_a_short_password_with_one_line(runner, instance):
    result = runner.invoke(main, ["user", "add", "mara", "--role", "viewer", "--instance", str(instance),
                                  "--password", "short"])
    assert result.exit_code == 2
    assert result.output.strip().splitlines()[-1] == \
        "Error: password: too short (5 characters); use at least 8"


def test_user_add_crew_with_a_pin_and_no_password(runner, instance):
    result = runner.invoke(main, ["user", "add", "tomas", "--role", "crew", "--no-password", "--pin",
                                  "--instance", str(instance)], input="4826\n4826\n")
    assert result.exit_code == 0, result.output
    users, _ = users_in(instance)
    assert users["tomas"].has_pin and not users["tomas"].has_password


@pytest.mark.parametrize("pin, message", [
    ("12", "pin: a PIN is 4 to 8 digits"),
    ("12a4", "pin: a PIN is 4 to 8 digits"),
    ("1234", "pin: 1234 is too easy to guess (no repeated digit or straight run)"),
    ("0000", "pin: 0000 is too easy to guess (no repeated digit or straight run)"),
    ("9876", "pin: 9876 is too easy to guess (no repeated digit or straight run)"),
])
def test_weak_pins_are_refused(runner, instance, pin, message):
    result = runner.invoke(main, ["user", "add", "tomas", "--role", "crew", "--no-password", "--pin",
                                  "--instance", str(instance)], input=f"{pin}\n{pin}\n")
    assert result.exit_code == 2
    assert result.output.strip().splitlines()[-1] == f"Error: {message}"


def test_user_passwd_changes_the_password(runner, instance):
    runner.invoke(main, ["user", "add", "mara", "--role", "viewer", "--instance", str(instance),
                         "--password", "first-password"])
    result = runner.invoke(main, ["user", "passwd", "mara", "--instance", str(instance)],
                           input="second-password\nsecond-password\n")
    assert result.exit_code == 0, result.output
    _, rows = users_in(instance)
    assert check_password_hash(rows[0][1], "second-password")
    assert not check_password_hash(rows[0][1], "first-password")


def test_user_passwd_for_an_unknown_user(runner, instance):
    result = runner.invoke(main, ["user", "passwd", "nobody", "--instance", str(instance)])
    assert result.exit_code == 2
    assert result.output.strip() == "Error: no user 'nobody' (add one with `showops user add`)"


def test_user_list(runner, instance):
    runner.invoke(main, ["user", "add", "tess", "--role", "admin", "--instance", str(instance),
                         "--password", "long-enough-1"])
    result = runner.invoke(main, ["user", "list", "--instance", str(instance)])
    assert result.exit_code == 0, result.output
    assert result.output.split()[:3] == ["tess", "technical", "director"]


def test_serve_binds_loopback_on_8150_by_default(runner, instance, monkeypatch):
    calls = []
    monkeypatch.setattr("waitress.serve", lambda app, **kw: calls.append((app, kw)))
    result = runner.invoke(main, ["serve", "--instance", str(instance)])
    assert result.exit_code == 0, result.output
    (app, kw), = calls
    assert (kw["host"], kw["port"]) == ("127.0.0.1", 8150)
    assert "http://127.0.0.1:8150/" in result.output
    assert app.config["INSTANCE"] == str(instance.resolve())
    from showops.web import close_stores
    close_stores(app)


def test_serve_lan_prints_the_address_and_a_qr_code(runner, instance, monkeypatch):
    calls = []
    monkeypatch.setattr("waitress.serve", lambda app, **kw: calls.append((app, kw)))
    monkeypatch.setattr(cli_web, "lan_address", lambda: "192.168.40.17")
    result = runner.invoke(main, ["serve", "--lan", "--port", "8200", "--instance", str(instance)])
    assert result.exit_code == 0, result.output
    assert calls[0][1]["host"] == "192.168.40.17" and calls[0][1]["port"] == 8200
    assert "http://192.168.40.17:8200/" in result.output
    # The QR code is drawn with half-block characters; segno's own matrix for the same
    # text fixes how many rows it takes (compact: two modules per text row).
    import segno
    qr = segno.make("http://192.168.40.17:8200/", error="m")
    rows = [line for line in result.output.splitlines() if "█" in line or "▀" in line or "▄" in line]
    width, height = qr.symbol_size(border=2)
    assert len(rows) == (height + 1) // 2
    from showops.web import close_stores
    close_stores(calls[0][0])


def test_lan_address_is_not_loopback_or_says_why():
    try:
        address = cli_web.lan_address()
    except ShowopsError as exc:  # a machine with no network: the message must say what to do
        assert "without --lan" in str(exc)
    else:
        assert not ipaddress.ip_address(address).is_loopback
