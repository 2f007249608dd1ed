"""Sign-in, sign-out, CSRF, cookies, rate limiting and the factory's error shapes.

Checked against outside rules where there are some: cookie attributes per RFC 6265
(HttpOnly) and the SameSite attribute (RFC 6265bis draft; "Lax"); the minimum
password length of NIST SP 800-63B §5.1.1.2 (8 characters); rate limiting of failed
sign-ins per NIST SP 800-63B §5.2.2 (the exact counts are our own choice).
"""

from __future__ import annotations

from datetime import datetime, timedelta, timezone

import pytest

from showops.store import users as store_users
from web_helpers import PASSWORD, alerts, read_forms, read_text


def set_cookie_attributes(response, name: str) -> dict[str, str]:
    for header in response.headers.getlist("Set-Cookie"):
        parts = [p.strip() for p in header.split(";")]
        if parts[0].startswith(name + "="):
            attrs = {}
            for part in parts[1:]:
                key, _, value = part.partition("=")
                attrs[key.lower()] = value
            return attrs
    raise AssertionError(f"no Set-Cookie for {name}: {response.headers.getlist('Set-Cookie')}")


def test_sign_in_sets_a_httponly_samesite_lax_session_cookie(client, auth, role_users):
    response = auth.login("mara")
    assert response.status_code == 302, response.get_data(as_text=True)
    attrs = set_cookie_attributes(response, "showops_session")
    assert "httponly" in attrs
    assert attrs["samesite"].lower() == "lax"
    home = client.get("/")
    assert home.status_code == 200
    assert "Mara Quill" in read_text(home)


def test_wrong_password_is_refused_with_a_message_and_no_session(client, auth, role_users):
    response = auth.login("mara", "not-the-password")
    assert response.status_code == 401
    assert alerts(response.get_data(as_text=True)) == ["user name or password not recognised"]
    assert client.get("/").status_code == 302  # still not signed in


def test_unknown_user_gets_the_same_answer_as_a_wrong_password(client, auth, role_users):
    response = auth.login("nobody-here", "whatever-it-is")
    assert response.status_code == 401
    assert alerts(response.get_data(as_text=True)) == ["user name or password not recognised"]


@pytest.mark.parametrize("token", [None, "", "forged-token"])
def test_sign_in_form_without_a_valid_csrf_token_is_refused(client, role_users, token):
    data = {"username": "mara", "password": PASSWORD}
    if token is not None:
        data["csrf_token"] = token
    response = client.post("/sign-in", data=data)
    assert response.status_code == 400
    assert "security token" in alerts(response.get_data(as_text=True))[0]
    assert client.get("/").status_code == 302


def test_sign_out_needs_the_csrf_token(client, auth, role_users):
    auth.login("mara")
    assert client.post("/sign-out", data={}).status_code == 400
    assert client.get("/").status_code == 200  # still signed in
    assert auth.logout().status_code == 302
    assert client.get("/").status_code == 302


def test_every_form_on_the_sign_in_pages_carries_the_csrf_token(client, db, role_users):
    store_users.add_user(db, "pia", "Pia Sorrel", "crew", pin="4826")
    for path in ("/sign-in", "/sign-in/pin"):
        page = read_forms(client.get(path).get_data(as_text=True))
        posts = [f for f in page.forms if f["method"] == "post"]
        assert posts, path
        for form in posts:
            assert form["inputs"].get("csrf_token"), (path, form)


def test_failed_sign_ins_lock_the_user_name_then_the_right_password_is_refused(client, auth, role_users):
    for _ in range(store_users.MAX_FAILURES_PER_USER):
        assert auth.login("mara", "wrong-guess-123").status_code == 401
    locked = auth.login("mara")  # the right password, too late
    assert locked.status_code == 429
    assert alerts(locked.get_data(as_text=True))[0].startswith("too many failed sign-ins; try again in 15 minutes")
    assert client.get("/").status_code == 302
    # another user from another address is not affected
    assert auth.login("ines", address="10.0.0.9").status_code == 302


def test_failures_from_one_address_lock_that_address(db, role_users):
    now = datetime(2026, 12, 12, 19, 0, tzinfo=timezone.utc)
    for i in range(store_users.MAX_FAILURES_PER_ADDRESS):
        with pytest.raises(store_users.SignInFailed):
            store_users.sign_in_with_password(db, f"guess{i}", "x" * 9, address="10.0.0.5", now=now)
    with pytest.raises(store_users.TooManyAttempts):
        store_users.sign_in_with_password(db, "tess", PASSWORD, address="10.0.0.5", now=now)
    assert store_users.sign_in_with_password(db, "tess", PASSWORD, address="10.0.0.6", now=now).username == "tess"


def test_lockout_ends_when_the_window_passes(db, role_users):
    start = datetime(2026, 12, 12, 19, 0, tzinfo=timezone.utc)
    for i in range(store_users.MAX_FAILURES_PER_USER):
        with pytest.raises(store_users.SignInFailed):
            store_users.sign_in_with_password(db, "mara", "wrong-guess", address="a", now=start + timedelta(seconds=i))
    assert store_users.seconds_locked_out(db, "mara", "a", now=start + timedelta(seconds=10)) == 15 * 60 - 10 + 1
    with pytest.raises(store_users.TooManyAttempts):
        store_users.sign_in_with_password(db, "mara", PASSWORD, address="a", now=start + timedelta(minutes=14))
    later = start + store_users.LOCKOUT_WINDOW + timedelta(seconds=5)
    assert store_users.seconds_locked_out(db, "mara", "a", now=later) == 0
    assert store_users.sign_in_with_password(db, "mara", PASSWORD, address="a", now=later).role == "stage_manager"


def test_a_success_resets_the_count(db, role_users):
    now = datetime(2026, 12, 12, 19, 0, tzinfo=timezone.utc)
    for _ in range(store_users.MAX_FAILURES_PER_USER - 1):
        with pytest.raises(store_users.SignInFailed):
            store_users.sign_in_with_password(db, "mara", "wrong-guess", address="a", now=now)
    store_users.sign_in_with_password(db, "mara", PASSWORD, address="a", now=now)
    with pytest.raises(store_users.SignInFailed):
        store_users.sign_in_with_password(db, "mara", "wrong-guess", address="a", now=now)
    assert store_users.seconds_locked_out(db, "mara", "a", now=now) == 0


@pytest.mark.parametrize("target, expected", [
    ("/", "/"),
    ("//evil.example/x", "/"),           # protocol-relative: another site
    ("https://evil.example/", "/"),
    ("/\\evil.example", "/"),
])
def test_next_only_goes_to_a_path_on_this_site(client, auth, role_users, target, expected):
    token = auth.csrf_token()
    response = client.post("/sign-in", data={"username": "mara", "password": PASSWORD, "csrf_token": token,
                                             "next": target})
    assert response.status_code == 302
    assert response.location == expected


def test_a_stopped_user_is_signed_out_at_the_next_request(client, auth, db, role_users):
    auth.login("ines")
    assert client.get("/").status_code == 200
    store_users.set_active(db, "ines", False)
    assert client.get("/").status_code == 302


def test_a_changed_role_ends_the_session(client, auth, db, role_users):
    auth.login("ines")
    db.execute("UPDATE web_user SET role = 'admin' WHERE username = 'ines'")
    assert client.get("/").status_code == 302


def test_api_errors_have_the_one_json_shape(client):
    response = client.get("/api/no-such-thing")
    assert response.status_code == 404
    assert set(response.json) == {"error"}
    assert set(response.json["error"]) == {"status", "message"}
    assert response.json["error"]["status"] == 404


def test_page_errors_are_pages(client):
    response = client.get("/no-such-page")
    assert response.status_code == 404
    assert response.mimetype == "text/html"
    assert alerts(response.get_data(as_text=True))


def test_security_headers(client):
    response = client.get("/sign-in")
    assert response.headers["X-Frame-Options"] == "DENY"
    assert "script-src 'self'" in response.headers["Content-Security-Policy"]
    assert response.headers["Cache-Control"] == "no-store"


def test_the_secret_key_is_generated_once_private_and_kept(instance):
    from showops.web import close_stores, create_app

    first = create_app({"INSTANCE": str(instance)})
    key_file = instance / "secret_key"
    assert key_file.stat().st_mode & 0o777 == 0o600
    second = create_app({"INSTANCE": str(instance)})
    assert first.secret_key == second.secret_key == key_file.read_text().strip()
    assert len(first.secret_key) == 64
    close_stores(first)
    close_stores(second)


def test_each_thread_opens_the_store_once(app):
    import threading

    stores = app.extensions["showops_stores"]
    seen = []

    def work():
        with app.app_context():
            seen.append((stores.get(), stores.get()))

    threads = [threading.Thread(target=work) for _ in range(3)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert all(a is b for a, b in seen)
    assert len({id(a) for a, _ in seen}) == 3


def test_a_sign_in_is_a_row_of_the_show_log(client, auth, db, role_users):
    from showops.store.log import verify_log

    auth.login("mara")
    auth.login("nobody", "wrong-password")  # a failed attempt is kept in login_attempt, not the log
    rows = db.execute("SELECT event, person_name, role, device, detail FROM step_log").fetchall()
    assert len(rows) == 1
    event, name, role, device, detail = rows[0]
    assert (event, name, role) == ("sign_in", "Mara Quill", "stage_manager")
    assert len(device) == 12
    assert '"method":"password"' in detail.replace(" ", "")
    assert verify_log(db) is None
