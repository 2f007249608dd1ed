"""The night's pages, server side: the performances list, the running order (verdicts,
reasons, what would clear them, start buttons) and the crew screen's frame.

The live parts are drawn by static/live.js from the JSON API; the browser tests in
tests/e2e drive them. The demo scenario (invented) supplies the data: at its
heavy-understudy performance the orchard lift's duet cue carries 88 + 55 kg riders
with 4 kg allowance each, 151 kg against a rated 140 kg, so it is blocked that night.
"""

from __future__ import annotations

from datetime import datetime
from html.parser import HTMLParser

import pytest

from showops import CAUTION
from showops.show import demo_data
from showops.store.users import DEMO_PASSWORD
from showops.web.areas.night import pick_tonight
from web_helpers import read_text, texts_by


class CueRows(HTMLParser):
    """Each running-order row: its data attributes, text per cell, and its buttons."""

    def __init__(self):
        super().__init__()
        self.rows: dict[str, dict] = {}
        self._row = None
        self._cell = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "tr" and "data-cue" in a:
            self._row = {"verdict": a.get("data-verdict"), "cells": [], "buttons": [], "reasons": []}
            self.rows[a["data-cue"]] = self._row
        elif self._row is not None and tag == "td":
            self._cell = ""
        elif self._row is not None and tag == "button":
            self._row["buttons"].append(a)
        elif self._row is not None and tag == "li" and "reason" in (a.get("class") or "").split():
            self._reason = ""

    def handle_endtag(self, tag):
        if tag == "li" and getattr(self, "_reason", None) is not None:
            self._row["reasons"].append(" ".join(self._reason.split()))
            self._reason = None
        if tag == "td" and self._cell is not None:
            self._row["cells"].append(" ".join(self._cell.split()))
            self._cell = None
        elif tag == "tr":
            self._row = None

    def handle_data(self, data):
        if self._cell is not None:
            self._cell += data
        if getattr(self, "_reason", None) is not None:
            self._reason += data


def cue_rows(html):
    parser = CueRows()
    parser.feed(html)
    return parser.rows


@pytest.fixture
def sm(client, auth, demo):
    assert auth.login("halden", DEMO_PASSWORD).status_code == 302
    return client


def test_the_heavy_understudy_night_shows_the_duet_blocked_with_why_and_no_start(sm, demo):
    ids, _ = demo
    html = sm.get(f"/performances/{ids.heavy_performance}").get_data(as_text=True)
    duet = cue_rows(html)[str(ids.cues["5"])]
    assert duet["verdict"] == "blocked"
    assert any("151 kg" in r and "140 kg" in r for r in duet["reasons"])
    start = [b for b in duet["buttons"] if "data-start" in b]
    assert len(start) == 1 and "disabled" in start[0]
    assert "Blocked: cannot be started" in duet["cells"][4]
    assert CAUTION in read_text(html)


def test_another_night_does_not_block_the_duet_for_its_load(sm, demo):
    ids, _ = demo
    html = sm.get(f"/performances/{ids.performances[1]}").get_data(as_text=True)
    duet = cue_rows(html)[str(ids.cues["5"])]
    assert not any("151 kg" in r for r in duet["reasons"])
    assert "124 kg" in duet["cells"][1]  # riders' total 55 + 61 + 2 x 4 kg allowance


def test_cues_without_a_rig_have_no_verdict_and_no_start(sm, demo):
    ids, _ = demo
    rows = cue_rows(sm.get(f"/performances/{ids.performances[1]}").get_data(as_text=True))
    first = rows[str(ids.cues["1"])]
    assert first["cells"][1] == "no rig" and first["buttons"] == []
    assert len(rows) == len(demo_data.CUES)


def test_a_viewer_sees_the_running_order_without_any_button(client, auth, demo):
    ids, _ = demo
    auth.login("odile", DEMO_PASSWORD)
    html = client.get(f"/performances/{ids.heavy_performance}").get_data(as_text=True)
    assert all(row["buttons"] == [] for row in cue_rows(html).values())
    root = texts_by(html, "id", "hold-button")
    assert root == []  # no HOLD for a read-only viewer


def test_performances_page_counts_verdicts(sm, demo):
    ids, _ = demo
    html = sm.get("/performances").get_data(as_text=True)
    assert read_text(html).count("Running order") == len(ids.performances)


def test_an_unknown_performance_is_a_404_page(sm):
    assert sm.get("/performances/999").status_code == 404


def test_the_crew_screen_lists_the_persons_cues_and_has_hold(client, auth, demo):
    ids, _ = demo
    auth.login("margit", DEMO_PASSWORD)
    html = client.get(f"/performances/{ids.performances[1]}/crew").get_data(as_text=True)
    text = read_text(html)
    assert "Cue 3 Blossom rise: brake" in text
    assert "Cue 6 Bough call: spotter" in text
    assert texts_by(html, "id", "hold-button") == ["HOLD"]


@pytest.mark.parametrize("now, expected", [
    ("2026-12-05T17:40", 2),   # within two hours of the 19:30 show
    ("2026-12-05T23:59", 2),   # still within five hours after it
    ("2026-12-06T09:00", 3),   # the next one to come (matinee)
    ("2026-11-01T12:00", 1),   # before the run: the first
    ("2027-01-01T12:00", 3),   # after the run: the last
])
def test_pick_tonight(now, expected):
    performances = [(1, "2026-11-30T19:30"), (2, "2026-12-05T19:30"), (3, "2026-12-06T14:30")]
    assert pick_tonight(performances, datetime.fromisoformat(now)) == expected


def test_tonight_sends_crew_to_their_screen_and_others_to_the_running_order(client, auth, demo):
    auth.login("margit", DEMO_PASSWORD)
    response = client.get("/tonight")
    assert response.status_code == 302 and response.location.endswith("/crew")
    auth.logout()
    auth.login("halden", DEMO_PASSWORD)
    response = client.get("/tonight")
    assert response.status_code == 302 and "/crew" not in response.location


def test_a_technical_director_may_hold_but_not_run_the_night(client, auth, demo):
    ids, _ = demo
    auth.login("lise", DEMO_PASSWORD)
    html = client.get(f"/performances/{ids.performances[1]}").get_data(as_text=True)
    assert texts_by(html, "id", "hold-button") == ["HOLD"]
    assert all(row["buttons"] == [] for row in cue_rows(html).values())
    assert texts_by(html, "id", "signoff-button") == []
