"""The API's fixtures: the real app factory on a temporary instance, invented people
signed in on their own test clients (each a "device" with its own cookies), the
night plan of tests/live/lift.py, and the CSRF token read from a page as the pages do."""

from __future__ import annotations

import importlib.util
from pathlib import Path

import pytest

from showops.store import users as store_users
from web_helpers import PASSWORD, read_forms


@pytest.fixture(scope="session")
def lift():
    spec = importlib.util.spec_from_file_location(
        "api_lift_fixture", Path(__file__).parent.parent / "live" / "lift.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@pytest.fixture
def app(instance, lift):
    from showops.web import close_stores, create_app
    from showops.web.areas.api import close_live

    application = create_app({"INSTANCE": str(instance), "TESTING": True, "LIVE_PLANS": lift.plans})
    yield application
    close_live(application)
    close_stores(application)


class Device:
    """One person's phone: a test client signed in, sending the CSRF header like the pages."""

    def __init__(self, client, token):
        self.client = client
        self.token = token

    def get(self, path):
        return self.client.get(path)

    def post(self, path, body=None, *, token=True, **kw):
        headers = {"X-CSRFToken": self.token} if token else {}
        if body is None and "data" not in kw:
            body = {}
        return self.client.post(path, json=body, headers=headers, **kw) if body is not None else \
            self.client.post(path, headers=headers, **kw)


#: username -> (role, lift actor attribute)
PEOPLE = {"halden": ("stage_manager", "SM"), "margit": ("crew", "BRAKE"), "fenn": ("crew", "LIFTER_A"),
          "joss": ("crew", "LIFTER_B"), "ama": ("crew", "SPOTTER"), "rook": ("crew", "STRANGER"),
          "insp": ("viewer", "VIEWER")}


class Devices(dict):
    """{username: Device}, each person signed in on first use (sign-ins cost time)."""

    def __init__(self, app):
        super().__init__()
        self.app = app

    def __missing__(self, username):
        client = self.app.test_client()
        token = read_forms(client.get("/sign-in").get_data(as_text=True)).meta_token
        response = client.post("/sign-in", data={"username": username, "password": PASSWORD, "csrf_token": token},
                               environ_base={"REMOTE_ADDR": f"10.0.0.{len(self) + 1}"})
        assert response.status_code in (302, 303), response.get_data(as_text=True)
        token = read_forms(client.get("/").get_data(as_text=True)).meta_token
        assert token
        device = self[username] = Device(client, token)
        return device


@pytest.fixture
def devices(app, db, lift):
    """Every invented person with a sign-in, on their own device: ``devices[username]``."""
    for username, (role, attr) in PEOPLE.items():
        actor = getattr(lift, attr)
        db["person"].insert({"id": actor.person_id, "name": actor.name})
        store_users.add_user(db, username, actor.name, role, password=PASSWORD, person_id=actor.person_id)
    store_users.add_user(db, "tess", "Tess Okonjo", "admin", password=PASSWORD)
    return Devices(app)


@pytest.fixture
def anonymous(app):
    client = app.test_client()
    token = read_forms(client.get("/sign-in").get_data(as_text=True)).meta_token
    return Device(client, token)
