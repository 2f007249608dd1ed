"""Shared fixtures: an app on a temporary instance, its client and CLI runner, and an
``auth`` helper that signs in the way a person does (reading the CSRF token from the
page, then posting the form).

Password hashing uses werkzeug's scrypt in service (about 0.4 s a hash here); the
tests switch to a cheap PBKDF2 so the suite stays fast. Never do that in service.
"""

from __future__ import annotations

import pytest
from click.testing import CliRunner

from showops.store import users as store_users
from web_helpers import PASSWORD, ROLE_USERS, read_forms

TEST_HASH_METHOD = "pbkdf2:sha256:1000"


@pytest.fixture(autouse=True)
def _cheap_password_hashes(monkeypatch):
    monkeypatch.setattr(store_users, "DEFAULT_HASH_METHOD", TEST_HASH_METHOD)


@pytest.fixture
def instance(tmp_path):
    return tmp_path / "instance"


@pytest.fixture
def app(instance):
    from showops.web import close_stores, create_app
    from showops.web.areas.api import close_live

    application = create_app({"INSTANCE": str(instance), "TESTING": True})
    yield application
    close_live(application)
    close_stores(application)


@pytest.fixture
def db(app):
    """The app's own store (the test thread's connection)."""
    return app.extensions["showops_stores"].get()


@pytest.fixture
def client(app):
    return app.test_client()


@pytest.fixture
def runner():
    return CliRunner()


@pytest.fixture
def role_users(db):
    """Add one user per role (password PASSWORD); return {role: username}."""
    made = {}
    for role, (username, name) in ROLE_USERS.items():
        store_users.add_user(db, username, name, role, password=PASSWORD)
        made[role] = username
    return made


class AuthActions:
    """Sign in and out through the real forms."""

    def __init__(self, client):
        self.client = client

    def csrf_token(self, path: str = "/sign-in") -> str:
        page = read_forms(self.client.get(path).get_data(as_text=True))
        assert page.meta_token, f"no CSRF token on {path}"
        return page.meta_token

    def login(self, username: str, password: str = PASSWORD, *, address: str = "127.0.0.1"):
        token = self.csrf_token()
        return self.client.post("/sign-in", data={"username": username, "password": password,
                                                  "csrf_token": token},
                                environ_base={"REMOTE_ADDR": address})

    def login_pin(self, username: str, pin: str, *, address: str = "127.0.0.1"):
        token = self.csrf_token("/sign-in/pin")
        return self.client.post("/sign-in/pin", data={"username": username, "pin": pin, "csrf_token": token},
                                environ_base={"REMOTE_ADDR": address})

    def logout(self):
        token = self.csrf_token("/")
        return self.client.post("/sign-out", data={"csrf_token": token})


@pytest.fixture
def auth(client):
    return AuthActions(client)


@pytest.fixture
def demo(db):
    """The invented demo (show store) with its sign-ins; returns (DemoIds, users made)."""
    from datetime import date

    from showops.show import demo_data
    from showops.store.show import install_demo

    ids = install_demo(db, date.today())
    made = store_users.install_demo_users(db, stage_manager=demo_data.STAGE_MANAGER,
                                          crew=[c.name for c in demo_data.CREW])
    return ids, made
