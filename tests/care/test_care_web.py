"""The care pages in the Flask test client: due-soon list, readiness with the briefing
confirmed on a person's own screen and the area release, the pre-show check form, and
objections raised and resolved. Pages are parsed (web_helpers), not substring-matched.

Rules exercised and their sources: DGUV Vorschrift 17 §15 (area release) and §20
(safety objection) (from memory); answers that state the observed condition (Degani and
Wiener, NASA CR-177549, 1990).
"""

from __future__ import annotations

from datetime import date

import pytest

from showops.store import care
from showops.store import users as store_users
from web_helpers import PASSWORD, alerts, read_forms, read_text, texts_by

USERS = {"sam": ("Sam Okoro", "stage_manager"), "nell": ("Nell Varga", "crew"), "ada": ("Ada Fenn", "admin"),
         "vera": (None, "viewer")}


@pytest.fixture
def site(scene, monkeypatch):
    from showops.web import close_stores, create_app

    monkeypatch.setattr(store_users, "DEFAULT_HASH_METHOD", "pbkdf2:sha256:1000")
    for username, (person, role) in USERS.items():
        store_users.add_user(scene.db, username, person or "Vera Lusk", role, password=PASSWORD,
                             person_id=scene.people[person] if person else None)
    app = create_app({"INSTANCE": str(scene.instance), "TESTING": True})
    yield scene, app.test_client()
    close_stores(app)


def sign_in(client, username):
    page = read_forms(client.get("/sign-in").get_data(as_text=True))
    response = client.post("/sign-in", data={"username": username, "password": PASSWORD,
                                             "csrf_token": page.meta_token})
    assert response.status_code in (302, 303), response.get_data(as_text=True)


def token(client, path):
    return read_forms(client.get(path).get_data(as_text=True)).meta_token


def test_due_soon_list(site):
    scene, client = site
    care.record_inspection(scene.db, "orchard-lift", date(2026, 5, 25), scope="thorough examination",
                           examiner="Marta Quill", findings="pads 4 mm, straps intact", objection_to_use=False,
                           today=date(2026, 11, 20))
    sign_in(client, "vera")
    page = client.get("/care/due?days=3650")
    assert page.status_code == 200
    rows = texts_by(page.get_data(as_text=True), "id", "due-list")
    assert rows and "orchard-lift" in rows[0] and "LOLER 1998 reg 9" in rows[0]


def test_briefing_confirmed_on_own_screen_and_area_release(site):
    scene, client = site
    path = f"/care/performance/{scene.tonight}"
    sign_in(client, "sam")
    tok = token(client, path)
    assert client.post(f"{path}/orchard-lift/briefing", data={"csrf_token": tok, "note": "gauze"}).status_code == 302
    assert client.post(f"{path}/release", data={"csrf_token": tok, "role": "stage manager"}).status_code == 302
    text = read_text(client.get(path))
    assert "Stage released by Sam Okoro" in text and "Briefing: 1 of 4 confirmed" in text
    client.post("/sign-out", data={"csrf_token": tok})

    sign_in(client, "nell")
    page = client.get(path).get_data(as_text=True)
    (form,) = [f for f in read_forms(page).forms if f["action"] and f["action"].endswith("/confirm")]
    assert client.post(form["action"], data=form["inputs"]).status_code == 302
    text = read_text(client.get(path))
    assert "You confirmed the orchard-lift briefing" in text and "Briefing: 2 of 4 confirmed" in text
    (b,) = [care.briefing_for(scene.db, scene.tonight, "orchard-lift")]
    assert [a.name for a in b.attendees] == ["Nell Varga"]
    # a crew member cannot release the stage
    assert client.post(f"{path}/release", data={"csrf_token": token(client, path)}).status_code == 403


def test_preshow_form_refuses_ok_and_records_an_observation(site, tmp_path):
    scene, client = site
    from pathlib import Path

    text = (Path(__file__).resolve().parents[2] / "procedures" / "checks" / "orchard-lift-preshow.md").read_text()
    care.load_checklist(scene.db, "orchard-lift", text, "orchard-lift-preshow.md")
    path = f"/care/performance/{scene.tonight}/orchard-lift/preshow"
    sign_in(client, "nell")
    page = client.get(path).get_data(as_text=True)
    form = read_forms(page).forms[1]  # the first item's form (0 is sign-out)
    refused = client.post(path, data={**form["inputs"], "observation": "OK"})
    assert refused.status_code == 400
    assert any(a.startswith("observation: 'OK' does not say what you observed") for a in alerts(refused.get_data(as_text=True)))
    done = client.post(path, data={**form["inputs"], "observation": "pads 4 mm, lever springs back"})
    assert done.status_code == 302
    (answer,) = care.preshow_answers(scene.db, scene.tonight, "orchard-lift")
    assert answer.person.name == "Nell Varga" and answer.observation == "pads 4 mm, lever springs back"


def test_objection_raised_and_resolved_only_by_the_responsible_person(site):
    scene, client = site
    sign_in(client, "nell")
    tok = token(client, "/care/objections")
    empty = client.post("/care/objections", data={"csrf_token": tok, "target": "rig:orchard-lift", "role": "lifters",
                                                  "reason": "  ", "responsible": str(scene.people["Ada Fenn"])})
    assert empty.status_code == 400 and alerts(empty.get_data(as_text=True))[0].startswith("reason:")
    made = client.post("/care/objections", data={"csrf_token": tok, "target": f"cue:{scene.cue}", "role": "lifters",
                                                 "reason": "handle bar loose at the weld",
                                                 "responsible": str(scene.people["Ada Fenn"])})
    assert made.status_code == 302
    (o,) = care.objections(scene.db)
    assert o.open and o.cue_id == scene.cue and o.raised_by.name == "Nell Varga"
    # Nell is not the responsible person: no resolve form for her, and a forged post is refused
    page = client.get("/care/objections").get_data(as_text=True)
    assert not [f for f in read_forms(page).forms if (f["action"] or "").endswith("/resolve")]
    forged = client.post(f"/care/objections/{o.id}/resolve", data={"csrf_token": tok, "reason": "fine"})
    assert forged.status_code == 403
    client.post("/sign-out", data={"csrf_token": tok})
    sign_in(client, "ada")
    page = client.get("/care/objections").get_data(as_text=True)
    (form,) = [f for f in read_forms(page).forms if (f["action"] or "").endswith("/resolve")]
    assert client.post(form["action"], data={**form["inputs"], "reason": "weld repaired, load-tested"}).status_code == 302
    (o,) = care.objections(scene.db)
    assert not o.open and o.resolved_by.name == "Ada Fenn"


def test_viewer_reads_but_cannot_raise(site):
    scene, client = site
    sign_in(client, "vera")
    assert client.get("/care/objections").status_code == 200
    tok = token(client, "/care/objections")
    r = client.post("/care/objections", data={"csrf_token": tok, "target": "rig:orchard-lift", "role": "x",
                                              "reason": "y", "responsible": "1"})
    assert r.status_code == 403
    assert client.get(f"/care/performance/{scene.tonight}/orchard-lift/preshow").status_code == 403


def test_readiness_index_links_each_performance(site):
    scene, client = site
    sign_in(client, "vera")
    page = client.get("/care/")
    assert page.status_code == 200
    html = page.get_data(as_text=True)
    rows = texts_by(html, "id", "readiness-list")
    # no examination on record: both performances are blocked for the orchard lift
    assert rows and rows[0].count("blocking") == 2 and "no passing" in rows[0]
    assert f'href="/care/performance/{scene.tonight}"' in html
