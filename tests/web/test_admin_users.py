"""The technical director's People and users page, used through its forms."""

from __future__ import annotations

from html.parser import HTMLParser

import pytest
from werkzeug.security import check_password_hash

from showops.store import users as store_users
from web_helpers import alerts, read_forms, texts_by


class UserRows(HTMLParser):
    """The users table: data-username of each row and its cells' text."""

    def __init__(self):
        super().__init__()
        self.rows: dict[str, list[str]] = {}
        self._row = None
        self._cell = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "tr" and "data-username" in a:
            self._row = a["data-username"]
            self.rows[self._row] = []
        elif tag == "td" and self._row:
            self._cell = ""

    def handle_endtag(self, tag):
        if tag == "td" and self._row is not None and self._cell is not None:
            self.rows[self._row].append(" ".join(self._cell.split()))
            self._cell = None
        elif tag == "tr":
            self._row = None

    def handle_data(self, data):
        if self._cell is not None:
            self._cell += data


def user_rows(html: str) -> dict[str, list[str]]:
    parser = UserRows()
    parser.feed(html)
    return parser.rows


@pytest.fixture
def admin_client(client, auth, role_users):
    assert auth.login("tess").status_code == 302
    return client


def token(client):
    return read_forms(client.get("/admin/users").get_data(as_text=True)).meta_token


def test_the_page_lists_every_user_with_role_and_way_in(admin_client):
    rows = user_rows(admin_client.get("/admin/users").get_data(as_text=True))
    assert set(rows) == {"tess", "mara", "tomas", "ines"}
    assert rows["mara"][1] == "stage manager"
    assert rows["ines"][3] == "password"


def test_add_a_user_through_the_form(admin_client, db):
    response = admin_client.post("/admin/users", data={
        "csrf_token": token(admin_client), "username": "odile", "display_name": "Odile Brask",
        "role": "viewer", "password": "inspect-2026", "pin": "", "person_id": ""})
    assert response.status_code == 302
    page = admin_client.get(response.location).get_data(as_text=True)
    assert texts_by(page, "role", "status") == ["Added odile (viewer (read-only))."]
    assert user_rows(page)["odile"][1] == "viewer (read-only)"
    stored = db.execute("SELECT password_hash FROM web_user WHERE username = 'odile'").fetchone()[0]
    assert check_password_hash(stored, "inspect-2026")


def test_bad_input_re_renders_with_the_message_and_400(admin_client, db):
    response = admin_client.post("/admin/users", data={
        "csrf_token": token(admin_client), "username": "odile", "display_name": "Odile Brask",
        "role": "viewer", "password": "short"})
    assert response.status_code == 400
    page = response.get_data(as_text=True)
    assert alerts(page) == ["password: too short (5 characters); use at least 8"]
    # the form keeps what was typed, except secrets
    add_form = next(f for f in read_forms(page).forms if f["id"] == "add-user")
    assert add_form["inputs"]["username"] == "odile"
    assert add_form["inputs"]["password"] == ""
    assert db.execute("SELECT COUNT(*) FROM web_user WHERE username = 'odile'").fetchone()[0] == 0


def test_set_a_crew_pin_and_remove_it(admin_client, db):
    response = admin_client.post("/admin/users/tomas/pin", data={"csrf_token": token(admin_client), "pin": "4826"})
    assert response.status_code == 302
    assert store_users.find_user(db, "tomas").has_pin
    response = admin_client.post("/admin/users/tomas/pin", data={"csrf_token": token(admin_client), "remove": "1"})
    assert response.status_code == 302
    assert not store_users.find_user(db, "tomas").has_pin


def test_a_viewer_cannot_have_a_pin(admin_client):
    response = admin_client.post("/admin/users/ines/pin", data={"csrf_token": token(admin_client), "pin": "4826"})
    assert response.status_code == 400
    assert alerts(response.get_data(as_text=True)) == ["ines: pin: only crew sign in with a PIN"]


def test_an_admin_cannot_stop_their_own_sign_in(admin_client, db):
    response = admin_client.post("/admin/users/tess/active", data={"csrf_token": token(admin_client), "active": "0"})
    assert response.status_code == 400
    assert store_users.find_user(db, "tess").active


def test_stop_and_allow_another_user(admin_client, db):
    admin_client.post("/admin/users/ines/active", data={"csrf_token": token(admin_client), "active": "0"})
    assert not store_users.find_user(db, "ines").active
    admin_client.post("/admin/users/ines/active", data={"csrf_token": token(admin_client), "active": "1"})
    assert store_users.find_user(db, "ines").active
