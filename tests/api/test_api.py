"""The JSON API through the real app factory: a cue run from five devices, refusals
as 409 in the one error shape, idempotent retries, roles per route, and the OpenAPI
document validated by openapi-spec-validator (an outside implementation of the
OpenAPI 3.0 specification)."""

from __future__ import annotations

import pytest

P1 = "/api/performances/1"
CUE = P1 + "/cues/3"


def shape(response, status):
    body = response.get_json()
    assert response.status_code == status, (response.status_code, body)
    assert set(body) == {"error"} and set(body["error"]) == {"status", "message"}, body
    assert body["error"]["status"] == status and isinstance(body["error"]["message"], str)
    assert body["error"]["message"]
    return body["error"]["message"]


def ok(response):
    assert response.status_code == 200, response.get_data(as_text=True)
    return response.get_json()


def test_five_devices_run_a_whole_cue(devices, lift):
    d = devices
    step = [s.key for s in lift.STEPS]
    script = [("halden", "start", None), ("margit", "confirm", 0), ("ama", "check", 0), ("halden", "confirm", 1),
              ("ama", "check", 1), ("margit", "standby", 2), ("halden", "go", 2), ("margit", "confirm", 2),
              ("ama", "check", 2), ("fenn", "standby", 3), ("joss", "standby", 3), ("halden", "go", 3),
              ("fenn", "confirm", 3), ("margit", "confirm", 4), ("margit", "standby", 5), ("halden", "go", 5),
              ("margit", "confirm", 5), ("fenn", "standby", 6), ("joss", "standby", 6), ("halden", "go", 6),
              ("joss", "confirm", 6), ("margit", "confirm", 7), ("ama", "check", 7), ("halden", "confirm", 8)]
    for n, (who, kind, i) in enumerate(script):
        body = {"client_id": f"t-{n}", "device_at": "2026-11-20T19:31:00+00:00"}
        if i is not None:
            body["step"] = step[i]
        out = ok(d[who].post(f"{CUE}/{kind}", body))
        assert out["row"]["person_name"] == lift.__dict__[{"halden": "SM", "margit": "BRAKE", "ama": "SPOTTER",
                                                           "fenn": "LIFTER_A", "joss": "LIFTER_B"}[who]].name
    last = ok(d["ama"].post(f"{CUE}/check", {"step": step[8], "client_id": "t-last"}))
    assert [r["event"] for r in last["rows"]] == ["check_confirmed", "cue_completed"]
    assert last["cue"]["status"] == "complete"
    night = ok(d["insp"].get(P1))
    assert [c["status"] for c in night["cues"]] == [None, "complete", "waiting", "waiting"]
    assert "qualified engineer" in night["caution"]
    verify = ok(d["insp"].get("/api/log/verify"))
    # each device's sign-in is a row too (showops.web.auth logs it)
    signed_in = sum(r["event"] == "sign_in" for r in ok(d["insp"].get("/api/log"))["rows"])
    assert verify["ok"] is True and verify["rows"] == len(script) + 2 + signed_in


def test_a_refusal_is_409_with_the_reason_and_kept_in_the_log(devices, lift):
    d = devices
    ok(d["halden"].post(f"{CUE}/start", {}))
    message = shape(d["margit"].post(f"{CUE}/confirm", {"step": lift.STEPS[2].key}), 409)
    assert message == "Step 3 'Release the brake' cannot be done yet: step 1 'Brake on' is not confirmed."
    message = shape(d["rook"].post(f"{CUE}/confirm", {"step": lift.STEPS[0].key}), 409)
    assert message.startswith("Rook Ellery is not assigned to brake on cue 3 'Blossom rise' tonight")
    rows = ok(d["halden"].get("/api/log?performance=1"))["rows"]
    assert [r["event"] for r in rows] == ["cue_started", "refused", "refused"]


def test_the_blocked_cue_cannot_be_started_from_any_screen(devices):
    message = shape(devices["halden"].post("/api/performances/2/cues/5/start", {}), 409)
    assert "blocked tonight and cannot be started" in message and "cast the first pair" in message
    cue = ok(devices["margit"].get("/api/performances/2/cues/5"))
    assert cue["verdict"] == "blocked" and cue["status"] == "waiting"
    assert cue["reasons"][0]["text"] == "riders 151 kg over the rated payload 140 kg"


def test_a_retry_with_the_same_client_id_gets_the_first_answer(devices, lift):
    ok(devices["halden"].post(f"{CUE}/start", {"client_id": "s-1"}))
    first = ok(devices["margit"].post(f"{CUE}/confirm", {"step": lift.STEPS[0].key, "client_id": "tap-77"}))
    again = ok(devices["margit"].post(f"{CUE}/confirm", {"step": lift.STEPS[0].key, "client_id": "tap-77"}))
    assert again["row"] == first["row"]
    assert ok(devices["halden"].post(f"{CUE}/start", {"client_id": "s-1"}))["row"]["event"] == "cue_started"
    rows = ok(devices["halden"].get("/api/log"))["rows"]
    assert [r["event"] for r in rows if r["event"] != "sign_in"] == ["cue_started", "step_confirmed"]


def test_hold_stops_everyone_and_only_the_stage_manager_resumes(devices, lift):
    d = devices
    ok(d["halden"].post(f"{CUE}/start", {}))
    ok(d["joss"].post(f"{CUE}/hold", {"note": "strap twisted"}))
    assert "is on HOLD (called by Joss Penhaligon" in shape(
        d["margit"].post(f"{CUE}/confirm", {"step": lift.STEPS[0].key}), 409)
    assert "Only the stage manager resumes" in shape(d["margit"].post(f"{CUE}/resume", {}), 409)
    for who in ("margit", "insp", "fenn"):
        assert ok(d[who].get(CUE))["held"] is True
    ok(d["halden"].post(f"{CUE}/resume", {}))
    ok(d["margit"].post(f"{CUE}/confirm", {"step": lift.STEPS[0].key}))


def test_the_cue_view_tells_each_person_their_next_action(devices, lift):
    ok(devices["halden"].post(f"{CUE}/start", {}))
    assert ok(devices["margit"].get(CUE))["next"]["action"] == "confirm"
    assert ok(devices["ama"].get(CUE))["next"] is None
    assert ok(devices["margit"].get(P1))["cues"][1]["next"]["step"] == lift.STEPS[0].key


def test_signoff_over_the_api(devices):
    assert "Only the stage manager signs off" in shape(devices["margit"].post(P1 + "/signoff", {}), 409)
    row = ok(devices["halden"].post(P1 + "/signoff", {"note": "show down"}))["row"]
    assert row["event"] == "signoff"
    assert "already signed off" in shape(devices["halden"].post(P1 + "/signoff", {}), 409)


ROUTES = [("GET", P1), ("GET", CUE), ("POST", CUE + "/start"), ("POST", CUE + "/standby"), ("POST", CUE + "/go"),
          ("POST", CUE + "/confirm"), ("POST", CUE + "/check"), ("POST", CUE + "/hold"), ("POST", CUE + "/resume"),
          ("POST", CUE + "/end"), ("POST", P1 + "/signoff"), ("GET", "/api/log"), ("GET", "/api/log/verify"),
          ("GET", "/api/openapi.json")]


@pytest.mark.parametrize("method, path", ROUTES)
def test_every_route_answers_401_in_the_shape_when_signed_out(anonymous, method, path):
    response = anonymous.get(path) if method == "GET" else anonymous.post(path, {"step": "x"})
    assert shape(response, 401) == "sign in first"


@pytest.mark.parametrize("who, method, path, status", [
    ("insp", "POST", CUE + "/confirm", 403), ("insp", "POST", CUE + "/hold", 403),
    ("insp", "POST", CUE + "/resume", 403), ("insp", "POST", CUE + "/end", 403),
    ("insp", "POST", P1 + "/signoff", 403), ("margit", "GET", "/api/log", 403),
    ("margit", "POST", CUE + "/resume", 409), ("margit", "POST", CUE + "/end", 409),
    ("margit", "POST", P1 + "/signoff", 409),
    ("margit", "GET", "/api/log/verify", 403),
    ("insp", "GET", "/api/log", 200), ("tess", "GET", "/api/log/verify", 200), ("insp", "GET", CUE, 200),
    ("margit", "GET", P1, 200), ("halden", "POST", CUE + "/start", 200), ("margit", "POST", CUE + "/hold", 200),
])
def test_roles_per_route(devices, who, method, path, status):
    device = devices[who]
    response = device.get(path) if method == "GET" else device.post(path, {})
    if status == 200:
        ok(response)
    else:
        shape(response, status)
    if status == 409:  # reached the runner: the refused attempt is in the log
        rows = ok(devices["halden"].get("/api/log?performance=1"))["rows"]
        assert rows[-1]["event"] == "refused" and rows[-1]["person_name"] == "Margit Oduya"


@pytest.mark.parametrize("make, status, message", [
    (lambda d: d.post(CUE + "/confirm", data="not json", content_type="text/plain"), 400, "body: send a JSON object"),
    (lambda d: d.post(CUE + "/confirm", [1, 2]), 400, "body: send a JSON object"),
    (lambda d: d.post(CUE + "/confirm", {}), 400, "step: is required"),
    (lambda d: d.post(CUE + "/confirm", {"step": "x", "client_id": "no spaces!"}), 400, "client_id:"),
    (lambda d: d.post(CUE + "/confirm", {"step": "x", "device_at": "tonight"}), 400,
     "device_at: 'tonight' is not an ISO 8601 time"),
    (lambda d: d.post(CUE + "/confirm", {"step": 5}), 400, "step: must be text"),
    (lambda d: d.post(CUE + "/confirm", {"step": "x"}, token=False), 400, "security token"),
    (lambda d: d.post(P1 + "/cues/99/start", {}), 404, "cue 99 is not in the running order of performance 1"),
    (lambda d: d.get("/api/performances/42"), 404, "no performance 42"),
    (lambda d: d.get("/api/nowhere"), 404, ""),
    (lambda d: d.get(CUE + "/confirm"), 405, ""),
    (lambda d: d.get("/api/log?after=abc"), 400, "after: 'abc' is not a whole number"),
    (lambda d: d.post(CUE + "/confirm", {"step": "Board/Nope"}), 409, "There is no step 'Board/Nope'"),
])
def test_one_error_shape_for_every_failure(devices, make, status, message):
    if status == 409:
        ok(devices["halden"].post(CUE + "/start", {}))
    text = shape(make(devices["halden"]), status)
    assert message in text


def test_the_openapi_document_is_valid_and_lists_every_route(app, devices):
    from openapi_spec_validator import validate

    doc = ok(devices["insp"].get("/api/openapi.json"))
    validate(doc)  # raises on any violation of the OpenAPI 3.0 schema
    listed = {(m.upper(), p) for p, ops in doc["paths"].items() for m in ops}
    import re
    for rule in app.url_map.iter_rules():
        if rule.rule.startswith("/api/"):
            path = re.sub(r"<(?:[a-z]+:)?([a-z_]+)>", r"{\1}", rule.rule)
            for method in rule.methods - {"HEAD", "OPTIONS"}:
                assert (method, path) in listed, (method, path)
    assert doc["paths"]["/api/performances/{performance_id}/cues/{cue_id}/confirm"]["post"]["responses"]["409"]


def test_record_sign_in_writes_a_sign_in_row(app, devices):
    from showops.store import users as store_users
    from showops.store.log import iter_log
    from showops.web.areas.api import record_sign_in

    user = store_users.find_user(app.extensions["showops_stores"].get(), "margit")
    with app.test_request_context("/sign-in", method="POST"):
        row = record_sign_in(user, method="pin", performance_id=1)
    assert (row["event"], row["person_id"], row["role"], row["performance_id"]) == ("sign_in", 2, "crew", 1)
    assert row["detail"] == '{"method":"pin"}'
    assert list(iter_log(app.extensions["showops_stores"].get()))[-1]["id"] == row["id"]
