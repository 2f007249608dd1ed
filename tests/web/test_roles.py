"""Who may open what: every route's allowed roles, as a table.

Two checks: (1) the table below is exactly what each view declares with
``roles_required`` (so a changed rule shows up here); (2) every GET route without URL
arguments, of every area, answers each role as its declaration says: allowed roles
do not get 403, others get 403, and a visitor who is not signed in is sent to sign in
(401 JSON under /api/). A route that declares no roles must be in PUBLIC.
"""

from __future__ import annotations

import pytest

from showops.store.users import ROLES
from web_helpers import ROLE_USERS

ALL = set(ROLES)
SIGNED_IN = "signed in"  # any role; the view itself reads the user

#: endpoint -> roles allowed (the web area's own routes; other areas test theirs too,
#: and the generic test below covers every area's argument-free GET routes).
EXPECTED = {
    "home.index": SIGNED_IN,
    "admin.users": {"admin"},
    "admin.add_user": {"admin"},
    "admin.set_password": {"admin"},
    "admin.set_pin": {"admin"},
    "admin.link_person": {"admin"},
    "admin.set_active": {"admin"},
    "night.tonight": {"admin", "stage_manager", "crew", "viewer"},
    "night.performances": {"admin", "stage_manager", "viewer"},
    "night.running_order": {"admin", "stage_manager", "viewer"},
    "night.crew_screen": {"crew"},
    "rigs.index": {"admin", "stage_manager", "viewer"},
    "rigs.show": {"admin", "stage_manager", "viewer"},
    "rigs.change_limits": {"admin"},
}

#: Routes anyone may open without signing in.
PUBLIC = {"static", "auth.sign_in", "auth.sign_in_pin", "auth.sign_out", "api.openapi"}


def declared(app, endpoint):
    return getattr(app.view_functions[endpoint], "allowed_roles", None)


@pytest.mark.parametrize("endpoint, roles", sorted(EXPECTED.items()))
def test_declared_roles_match_the_table(app, endpoint, roles):
    if roles == SIGNED_IN:
        assert declared(app, endpoint) is None
    else:
        assert set(declared(app, endpoint)) == set(roles)


def test_every_route_declares_its_roles_or_is_listed(app):
    undeclared = [rule.endpoint for rule in app.url_map.iter_rules()
                  if declared(app, rule.endpoint) is None
                  and rule.endpoint not in PUBLIC and EXPECTED.get(rule.endpoint) != SIGNED_IN]
    assert undeclared == []


def get_routes(app):
    return sorted({rule.rule: rule.endpoint for rule in app.url_map.iter_rules()
                   if "GET" in rule.methods and not rule.arguments and rule.endpoint not in PUBLIC}.items())


def sign_in_as(client, auth, role):
    if role is not None:
        response = auth.login(ROLE_USERS[role][0])
        assert response.status_code == 302, response.get_data(as_text=True)


@pytest.mark.parametrize("role", [None, *ROLES])
def test_each_role_reaches_only_its_routes(app, client, auth, role_users, role):
    sign_in_as(client, auth, role)
    checked = set()
    for path, endpoint in get_routes(app):
        response = client.get(path)
        allowed = declared(app, endpoint)
        if role is None:
            if path.startswith("/api/"):
                assert response.status_code == 401, path
            else:
                assert response.status_code == 302 and response.location.startswith("/sign-in"), path
        elif allowed is None or role in allowed:
            assert response.status_code != 403, (path, role)
        else:
            assert response.status_code == 403, (path, role)
        checked.add(path)
    assert {"/", "/admin/users"} <= checked


#: Every POST of the web area, with URL arguments filled in, and the roles it allows.
POSTS = [
    ("/admin/users", {"admin"}),
    ("/admin/users/ines/password", {"admin"}),
    ("/admin/users/ines/pin", {"admin"}),
    ("/admin/users/ines/person", {"admin"}),
    ("/admin/users/ines/active", {"admin"}),
    ("/rigs/orchard-lift/limits", {"admin"}),
]


@pytest.mark.parametrize("path, allowed", POSTS)
@pytest.mark.parametrize("role", [None, *ROLES])
def test_each_post_refuses_other_roles(app, client, auth, role_users, role, path, allowed):
    sign_in_as(client, auth, role)
    token = auth.csrf_token("/sign-in")
    response = client.post(path, data={"csrf_token": token})
    if role is None:
        assert response.status_code == 302 and response.location.startswith("/sign-in")
    elif role in allowed:
        assert response.status_code not in (401, 403)  # reaches the view (400 for an empty form, or done)
        assert not (response.location or "").startswith("/sign-in")
    else:
        assert response.status_code == 403


@pytest.mark.parametrize("path, allowed", POSTS)
def test_each_post_needs_the_csrf_token(client, auth, role_users, path, allowed):
    sign_in_as(client, auth, "admin")
    response = client.post(path, data={})
    assert response.status_code == 400
    assert "security token" in response.get_data(as_text=True)
