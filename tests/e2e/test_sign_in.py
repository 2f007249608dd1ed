"""Signing in and out in a real browser (Chromium via Playwright)."""

from __future__ import annotations

import pytest

from web_helpers import PASSWORD

from .conftest import sign_in

pytestmark = pytest.mark.browser


def test_a_person_signs_in_and_out(live_server, new_page, role_users):
    page = new_page()
    sign_in(page, live_server, "mara", PASSWORD)
    page.wait_for_url(f"{live_server}/")
    assert page.locator(".who-name").inner_text() == "Mara Quill"
    page.click("text=Sign out")
    page.wait_for_url(f"{live_server}/sign-in")
    assert page.locator("#sign-in-form").is_visible()


def test_a_wrong_password_shows_the_reason(live_server, new_page, role_users):
    page = new_page()
    sign_in(page, live_server, "mara", "not-the-password")
    assert page.get_by_role("alert").inner_text() == "user name or password not recognised"
