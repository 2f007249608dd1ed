"""The crew sheet's QR target (showops.sheets.crew.live_url) is a real route of the app."""

from __future__ import annotations

from types import SimpleNamespace

import pytest

from showops.sheets.crew import live_url


def test_the_sheet_qr_address_is_routed(app):
    # The path the sheet prints, built by the renderer itself, must match a route.
    url = live_url(SimpleNamespace(performance_id=2), SimpleNamespace(cue_id=5), host="venue.local")
    path = "/" + url.split("/", 3)[3]
    endpoint, args = app.url_map.bind("localhost").match(path)
    assert endpoint == "cue_links.cue_link"
    assert args == {"performance_id": 2, "cue_id": 5}


@pytest.mark.parametrize("role, page", [("stage_manager", "/performances/2"), ("viewer", "/performances/2"),
                                        ("admin", "/performances/2"), ("crew", "/performances/2/crew")])
def test_a_scanned_code_lands_on_the_right_page(client, auth, role_users, role, page):
    auth.login(role_users[role])
    response = client.get("/live/2/cue/5")
    assert response.status_code == 302
    assert response.headers["Location"].endswith(f"{page}#cue-5")


def test_a_visitor_is_sent_to_sign_in(client):
    response = client.get("/live/2/cue/5")
    assert response.status_code == 302
    assert "/sign-in" in response.headers["Location"]
