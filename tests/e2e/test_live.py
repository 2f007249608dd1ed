"""The show as people run it, in real browsers: four crew members and the stage
manager on their own screens (each a fresh Chromium context with its own cookies).

The data is the invented demo: at its next performance the orchard lift's cue 8
"Windfall" is ready (rider Saskia Dunmore; caller and stage manager Halden Voss; brake
Margit Oduya; lifters Fenn Castell and Joss Penhaligon; spotter Ama Kettering). The
procedure is procedures/orchard-lift.md. What the screens must do comes from issue 5;
the rules they show are the live runner's (tests/live test them one by one).
"""

from __future__ import annotations

import json
import statistics
import time

import pytest

from .conftest import open_as

pytestmark = [pytest.mark.browser, pytest.mark.timeout(240)]

CREW = ("margit", "fenn", "joss", "ama")


def last_log_id(db) -> int:
    return db.execute("SELECT COALESCE(MAX(id), 0) FROM step_log").fetchone()[0]


def wait_caught_up(pages, log_id, timeout_ms=5000):
    for page in pages:
        page.wait_for_function(
            "id => Number(document.getElementById('live-root').getAttribute('data-last-log-id') || 0) >= id",
            arg=log_id, timeout=timeout_ms)


def enabled_action(page, selector):
    button = page.locator(selector)
    if button.count() and button.is_visible() and button.is_enabled():
        return button
    return None


@pytest.fixture
def night(ready_demo, live_server, new_page):
    ids, _ = ready_demo
    perf = ids.performances[1]
    crew = {u: open_as(new_page, live_server, u, f"/performances/{perf}/crew") for u in CREW}
    sm = open_as(new_page, live_server, "halden", f"/performances/{perf}", width=1280, height=900)
    return ids, perf, crew, sm


def start_windfall(sm, ids, db):
    before = last_log_id(db)
    sm.click(f'[data-start="{ids.cues["8"]}"]')
    sm.wait_for_selector("#live-state.state-running")
    assert last_log_id(db) > before


def run_until_complete(pages_by_name, sm, db, *, max_presses=80, idle_s=5.0):
    """Whoever has an enabled action presses it, one at a time; after each press wait
    until every screen shows the new log row. Return (presses, seconds to every screen).

    When no screen offers an action, look again for up to ``idle_s`` (a screen may need
    one more poll before its button is enabled) before calling the cue stuck.
    """
    everyone = list(pages_by_name.values()) + [sm]
    presses, spread = [], []
    idle_since = None
    while len(presses) < max_presses:
        if sm.locator("#live-state").text_content() == "complete":
            return presses, spread
        for name, page in list(pages_by_name.items()) + [("halden", sm)]:
            button = enabled_action(page, "#my-next-button" if page is sm else "#confirm-button")
            if button is None:
                continue
            label = button.inner_text()
            before = last_log_id(db)
            button.click()
            page.wait_for_function("() => window.showopsLive.queue().length === 0")
            after = last_log_id(db)
            assert after > before, f"{name}'s press of {label!r} wrote nothing"
            wait_caught_up(everyone, after)
            # measured in the pages (one browser, one clock): press -> shown on each screen
            pressed = page.evaluate("() => window.showopsLive.lastPress().at")
            shown = [p.evaluate("id => window.showopsLive.seenAt(id)", after) for p in everyone]
            spread.append((max(shown) - pressed) / 1000)
            presses.append((name, label))
            idle_since = None
            break
        else:
            idle_since = idle_since or time.monotonic()
            if time.monotonic() - idle_since < idle_s:
                time.sleep(0.25)
                continue
            states = {n: p.locator("#card-title").inner_text() for n, p in pages_by_name.items()}
            cards = {n: p.locator("#card-cue").inner_text() for n, p in pages_by_name.items()}
            raise AssertionError(f"nobody can act and the cue is not complete: {states} {cards} after {presses}; "
                                 f"stage manager: {sm.locator('#live-state').inner_text()}")
    raise AssertionError("the cue did not complete")


def test_four_crew_run_a_whole_lift_cue_from_boarding_to_disembark(night, db, screenshots):
    ids, perf, crew, sm = night
    sm.screenshot(path=str(screenshots / "stage-manager-before.png"), full_page=True)
    start_windfall(sm, ids, db)
    for page in crew.values():
        page.wait_for_function("() => document.getElementById('card-cue').textContent.indexOf('Windfall') >= 0")
    crew["margit"].screenshot(path=str(screenshots / "crew-brake-first-step.png"))
    presses, spread = run_until_complete(crew, sm, db)
    sm.screenshot(path=str(screenshots / "stage-manager-complete.png"), full_page=True)

    # every crew screen says the cue is complete and moves on to the person's next cue
    for page in crew.values():
        page.wait_for_function("() => document.getElementById('card-why').textContent === "
                               "'Last: Cue 8 · Windfall complete.'")
    rows = [dict(zip(("event", "person_name", "role", "step_key", "detail"), r)) for r in db.execute(
        "SELECT event, person_name, role, step_key, detail FROM step_log WHERE cue_id = ? AND performance_id = ? "
        "ORDER BY id", [ids.cues["8"], perf])]
    events = [r["event"] for r in rows]
    assert events[0] == "cue_started" and events[-1] == "cue_completed"
    assert "refused" not in events
    from showops.store.show import load_night_plan
    procedure = next(c for c in load_night_plan(db, perf).cues if c.cue_id == ids.cues["8"]).procedure
    confirmed = {r["step_key"]: r for r in rows if r["event"] == "step_confirmed"}
    checked = {r["step_key"]: r for r in rows if r["event"] == "check_confirmed"}
    assert list(confirmed) == [s.key for s in procedure.main_steps]
    for step in procedure.main_steps:
        # the rider has no screen: the caller answers for the rider's steps
        assert confirmed[step.key]["role"] == (step.by if step.by != "rider" else "caller"), step.key
        if step.check:
            assert checked[step.key]["role"] == step.check
            assert checked[step.key]["person_name"] != confirmed[step.key]["person_name"]
    # all four crew acted from their own screens
    assert {name for name, _ in presses} == {"margit", "fenn", "joss", "ama", "halden"}
    from showops.store.log import verify_log
    assert verify_log(db) is None
    # the issue asks that every screen shows a confirmation within a second
    print(f"\npresses: {len(spread)}; seconds from a press until all five screens show it: "
          f"median {statistics.median(spread):.2f}, max {max(spread):.2f}")
    assert statistics.median(spread) < 1.0


def test_an_out_of_order_confirmation_is_refused_with_the_reason_shown(night, db):
    ids, perf, crew, sm = night
    start_windfall(sm, ids, db)
    # the caller presses "Standby" (step 5) while the brake check (step 1) is not done
    sm.click('[data-confirm-step="Brake release/Standby"]')
    alert = sm.locator("#action-message")
    alert.wait_for(state="visible")
    sm.wait_for_function("() => document.getElementById('action-message').textContent.indexOf('Refused') === 0")
    text = alert.inner_text()
    assert text.startswith("Refused: Step 5 'Standby' cannot be done yet: step 1 'Brake on, platform down' "
                           "is not confirmed"), text
    row = db.execute("SELECT person_name, detail FROM step_log WHERE event = 'refused'").fetchone()
    assert row[0] == "Halden Voss"
    assert json.loads(row[1])["code"] == "out_of_order"


def test_the_heavy_understudy_nights_blocked_cue_cannot_be_started(ready_demo, live_server, new_page, db, screenshots):
    ids, _ = ready_demo
    heavy = ids.heavy_performance
    sm = open_as(new_page, live_server, "halden", f"/performances/{heavy}", width=1280, height=900)
    row = sm.locator(f'tr[data-cue="{ids.cues["5"]}"]')
    assert row.get_attribute("data-verdict") == "blocked"
    start = row.locator("[data-start]")
    assert start.is_disabled()
    assert "151 kg" in row.locator(".reasons").inner_text()
    assert row.locator(".fix-list").inner_text().strip() != ""
    sm.screenshot(path=str(screenshots / "stage-manager-heavy-night.png"), full_page=True)
    # forcing it from the page's own API client is refused too, and logged
    answer = sm.evaluate(f"""() => window.showops.api("POST", "/api/performances/{heavy}/cues/{ids.cues['5']}/start",
                                     {{client_id: "forced-1"}}).then(() => "started", e => e.status + " " + e.message)""")
    assert answer.startswith("409 ") and "cannot be started" in answer
    assert db.execute("SELECT COUNT(*) FROM step_log WHERE event = 'cue_started'").fetchone()[0] == 0


def test_hold_stops_every_screen_and_only_the_stage_manager_resumes(night, db, screenshots):
    ids, perf, crew, sm = night
    start_windfall(sm, ids, db)
    crew["margit"].locator("#confirm-button").wait_for(state="visible")
    t0 = time.perf_counter()
    crew["fenn"].click("#hold-button")
    for page in list(crew.values()) + [sm]:
        page.locator("#hold-banner").wait_for(state="visible", timeout=3000)
    seconds = time.perf_counter() - t0
    print(f"\nHOLD on every screen after {seconds:.2f} s")
    # The banner shows as soon as the press is made; wait for the server's row too.
    deadline = time.monotonic() + 5
    while not db.execute("SELECT 1 FROM step_log WHERE event = 'hold' AND cue_id = ?",
                         [ids.cues["8"]]).fetchone() and time.monotonic() < deadline:
        time.sleep(0.05)
    crew["margit"].screenshot(path=str(screenshots / "crew-hold.png"))
    for page in crew.values():
        assert "held by Fenn Castell" in page.locator("#hold-banner").inner_text()
        button = page.locator("#confirm-button")
        assert not button.is_visible() or button.is_disabled()
        assert page.locator("#resume-button").count() == 0
    # a crew member cannot resume, even by calling the API from their page
    answer = crew["fenn"].evaluate(f"""() => window.showops.api("POST", "/api/performances/{perf}/cues/{ids.cues['8']}/resume", {{}})
                                          .then(() => "resumed", e => e.status + " " + e.message)""")
    assert answer.startswith("409 Only the stage manager resumes")
    sm.click("#resume-button")
    for page in list(crew.values()) + [sm]:
        page.locator("#hold-banner").wait_for(state="hidden", timeout=3000)
    assert crew["margit"].locator("#confirm-button").is_enabled()
    events = [r[0] for r in db.execute("SELECT event FROM step_log WHERE cue_id = ? ORDER BY id", [ids.cues["8"]])]
    assert events == ["cue_started", "hold", "refused", "resume"]


def test_a_reload_mid_cue_and_a_lost_network_lose_nothing(night, db, screenshots):
    ids, perf, crew, sm = night
    start_windfall(sm, ids, db)
    margit = crew["margit"]
    margit.locator("#confirm-button").wait_for(state="visible")
    # the network fails for her confirmation: the screen keeps it and says so
    def no_network(route):
        route.abort()

    margit.route("**/api/**/confirm", no_network)
    margit.click("#confirm-button")
    pending = margit.locator("#pending")
    pending.wait_for(state="visible")
    assert pending.inner_text().startswith("NOT YET RECORDED")
    margit.screenshot(path=str(screenshots / "crew-not-yet-recorded.png"))
    assert db.execute("SELECT COUNT(*) FROM step_log WHERE event = 'step_confirmed'").fetchone()[0] == 0
    # she reloads the page: the unsent confirmation is still there
    margit.reload()
    margit.locator("#pending").wait_for(state="visible")
    client_id = margit.evaluate("window.showopsLive.queue()[0].client_id")
    # the network returns, but the first answer is lost on the way back: sent again with the same id
    lost = []

    def lose_answer(route):
        response = route.fetch()
        lost.append(response.status)
        route.abort()

    # the last route registered runs first: no gap in which a retry could slip through
    margit.route("**/api/**/confirm", lose_answer)
    margit.unroute("**/api/**/confirm", no_network)
    for _ in range(100):
        if lost:
            break
        margit.wait_for_timeout(100)
    assert margit.locator("#pending").is_visible()  # the answer was lost: still not recorded here
    margit.unroute("**/api/**/confirm", lose_answer)
    margit.wait_for_function("() => window.showopsLive.queue().length === 0", timeout=8000)
    margit.locator("#pending").wait_for(state="hidden")
    rows = db.execute("SELECT client_id, person_name FROM step_log WHERE event = 'step_confirmed'").fetchall()
    assert rows == [(client_id, "Margit Oduya")]
    assert lost == [200]
    # the stage manager reloads mid-cue: the step and who confirmed it are still shown
    sm.reload()
    sm.wait_for_selector('#live-steps li[data-status="confirmed"]')
    first = sm.locator("#live-steps li").first.inner_text()
    assert "confirmed by Margit Oduya" in first


def test_an_answer_overtaken_by_a_newer_one_does_not_turn_the_screen_back(night, db):
    """A poll sent just before a confirmation can come back after it (a slow network):
    the screen must keep the newer state, not offer the confirmed step again."""
    ids, perf, crew, sm = night
    start_windfall(sm, ids, db)
    margit = crew["margit"]
    margit.locator("#confirm-button").wait_for(state="visible")
    first_title = margit.locator("#card-title").inner_text()
    cue_url = f"/api/performances/{perf}/cues/{ids.cues['8']}"
    stale = margit.evaluate("url => fetch(url, {headers: {Accept: 'application/json'}}).then(r => r.text())", cue_url)
    margit.click("#confirm-button")
    margit.wait_for_function("() => window.showopsLive.queue().length === 0")
    margit.wait_for_function("t => document.getElementById('card-title').textContent !== t", arg=first_title)
    served = []

    def old_answer(route):  # the poll that left before the press, arriving now
        served.append(route.request.url)
        route.fulfill(status=200, content_type="application/json", body=stale)

    margit.route(f"**{cue_url}", old_answer)
    margit.evaluate("window.showopsLive.poll(true)")
    for _ in range(50):
        if served:
            break
        margit.wait_for_timeout(100)
    assert served, "the screen did not poll the cue"
    margit.wait_for_timeout(300)  # let it render what it got
    margit.unroute(f"**{cue_url}", old_answer)
    assert margit.locator("#card-title").inner_text() != first_title
