"""The audit's web pages: the same figures as the store, roles, forms that refuse bad
input with a message and store nothing, attachments served only to signed-in users.

Pages are parsed (tests/web_helpers.py), never substring-matched. Fixture data is
invented; ICAO Doc 9859 4th ed. cells from memory (see test_risk.py).
"""

from __future__ import annotations

import gc
import io
import re
from datetime import date

import pytest

from showops.store import audit as store
from web_helpers import ROLE_USERS, alerts, read_forms, read_text, texts_by

JPEG = b"\xff\xd8\xff\xe0\x00\x10JFIF\x00" + bytes(3000)


@pytest.fixture
def site(inst, app, role_users, client, auth):
    """The fixture instance (inst) opened by the web app, with one user per role."""
    inst.run_cue(inst.perf1, hold=True)
    return inst


def login(auth, role):
    response = auth.login(ROLE_USERS[role][0])
    assert response.status_code == 302


def token(client, path):
    return read_forms(client.get(path).get_data(as_text=True)).meta_token


def test_season_page_shows_the_store_figures(site, client, auth):
    login(auth, "viewer")
    page = client.get("/audit/?from=2026-11-01&to=2026-11-30")
    assert page.status_code == 200
    html = page.get_data(as_text=True)
    season = store.season_audit(site.db, date(2026, 11, 1), date(2026, 11, 30), with_margins=False)
    assert texts_by(html, "id", "n-performances") == [str(len(season.performances))] == ["3"]
    assert texts_by(html, "id", "n-deviations") == [str(season.total_deviations)] == ["1"]
    rows = dict(re.findall(r'data-kind="(\w+)">.*?class="count">(\d+)<', html, re.S))
    assert {k: int(v) for k, v in rows.items()} == season.by_kind
    assert 'data-cell="5C"' in html and len(re.findall(r"<g data-cell=", html)) == 25


@pytest.mark.parametrize("role,status", [("crew", 403), ("viewer", 200), ("stage_manager", 200)])
def test_season_page_roles(site, client, auth, role, status):
    login(auth, role)
    assert client.get("/audit/").status_code == status


def test_promote_from_the_deviations_page_and_classify(site, client, auth):
    login(auth, "crew")
    html = client.get("/audit/deviations").get_data(as_text=True)
    forms = [f for f in read_forms(html).forms if f["action"] == "/audit/deviations/promote"]
    assert len(forms) == 1 and forms[0]["inputs"]["key"].startswith("hold:")
    response = client.post("/audit/deviations/promote", data={"key": forms[0]["inputs"]["key"],
                                                             "csrf_token": token(client, "/audit/deviations")})
    assert response.status_code == 302
    record_id = int(response.headers["Location"].rsplit("/", 1)[1])
    assert store.get_record(site.db, record_id)["kind"] == "near_miss"
    # crew may not classify
    response = client.post(f"/audit/records/{record_id}/classify", data={
        "kind": "near_miss", "likelihood": "3", "severity_actual": "E", "severity_potential": "B",
        "csrf_token": token(client, f"/audit/records/{record_id}")})
    assert response.status_code == 403
    auth.logout()
    login(auth, "stage_manager")
    path = f"/audit/records/{record_id}"
    response = client.post(path + "/classify", data={"kind": "near_miss", "likelihood": "6", "severity_actual": "E",
                                                     "severity_potential": "B", "csrf_token": token(client, path)})
    assert response.status_code == 400 and "likelihood" in alerts(response.get_data(as_text=True))[0]
    assert store.get_record(site.db, record_id)["risk_cell"] is None
    response = client.post(path + "/classify", data={"kind": "near_miss", "likelihood": "3", "severity_actual": "E",
                                                     "severity_potential": "B", "csrf_token": token(client, path)})
    assert response.status_code == 302
    assert texts_by(client.get(path).get_data(as_text=True), "id", "risk")[0].startswith("3B tolerable")
    response = client.post(path + "/actions", data={"description": "Clear call before release", "owner": "Head",
                                                    "due": "2026-11-01", "control": "administrative",
                                                    "csrf_token": token(client, path)})
    assert response.status_code == 400 and "before the occurrence" in alerts(response.get_data(as_text=True))[0]
    assert store.get_record(site.db, record_id)["actions"] == []


def test_report_form_picks_a_log_row(site, client, auth):
    login(auth, "crew")
    html = client.get(f"/audit/records/new?performance_id={site.perf1}").get_data(as_text=True)
    row = re.search(r'<option value="(\d+)">#\d+ [\d:]+ step_confirmed', html).group(1)
    data = {"performance_id": str(site.perf1), "step_log_id": row, "kind": "near_miss",
            "occurred_at": "2026-11-20T19:40", "narrative": "Brake handle slipped in the hand",
            "csrf_token": token(client, "/audit/records/new")}
    response = client.post("/audit/records/new", data={**data, "performance_id": str(site.perf2)})
    assert response.status_code == 400 and "belongs to performance" in alerts(response.get_data(as_text=True))[0]
    assert store.list_records(site.db) == []
    response = client.post("/audit/records/new", data=data)
    assert response.status_code == 302
    rec = store.list_records(site.db)[0]
    assert rec["step_log_id"] == int(row) and rec["step_key"] == "Board/Brake on"


def test_viewer_cannot_report(site, client, auth):
    login(auth, "viewer")
    assert client.get("/audit/records/new").status_code == 403


# werkzeug's test client spools a body over 500 KB to a temporary file it never closes;
# collect it inside this test so its warning does not land on another test.
@pytest.mark.filterwarnings("ignore::ResourceWarning", "ignore::pytest.PytestUnraisableExceptionWarning")
def test_attachments_are_checked_and_served_only_when_signed_in(site, client, auth):
    record_id, _ = store.report(site.db, store.Actor("Tomas", "crew"),
                                {"kind": "unsafe_condition", "occurred_at": "2026-11-20T18:00Z",
                                 "narrative": "Frayed strap"})
    login(auth, "crew")
    path = f"/audit/records/{record_id}"
    bad = client.post(path + "/attachments", data={"csrf_token": token(client, path),
                                                   "file": (io.BytesIO(b"GIF89a" + bytes(100)), "strap.jpg",
                                                            "image/jpeg")}, content_type="multipart/form-data")
    assert bad.status_code == 400 and "is not" in alerts(bad.get_data(as_text=True))[0]
    big = client.post(path + "/attachments", data={"csrf_token": token(client, path),
                                                   "file": (io.BytesIO(JPEG + bytes(3 * 1024 * 1024)), "big.jpg",
                                                            "image/jpeg")}, content_type="multipart/form-data")
    assert big.status_code == 302          # 3 MB: over the app's form limit, within the attachment limit
    del big
    gc.collect()
    good = client.post(path + "/attachments", data={"csrf_token": token(client, path),
                                                    "file": (io.BytesIO(JPEG), "strap.jpg", "image/jpeg")},
                       content_type="multipart/form-data")
    assert good.status_code == 302
    att = store.get_record(site.db, record_id)["attachments"][-1]
    with client.get(f"/audit/attachments/{att['id']}") as served:
        assert served.status_code == 200 and served.data == JPEG and served.mimetype == "image/jpeg"
    auth.logout()
    assert client.get(f"/audit/attachments/{att['id']}").status_code == 302    # to the sign-in page


def test_show_report_pages(site, client, auth):
    login(auth, "stage_manager")
    assert client.get(f"/audit/performances/{site.perf2}/report").status_code == 409     # never ran
    path = f"/audit/performances/{site.perf1}/report"
    page = client.get(path)
    assert page.status_code == 200
    text = read_text(page)
    assert "Show report: The Glass Orchard" in text and "HOLD by Tomas Ilve: rider signalled" in text
    response = client.post(path.replace("/report", "/notes"), data={"text": "Q4 held 5 s for a strap",
                                                                      "csrf_token": token(client, path)})
    assert response.status_code == 302
    assert texts_by(client.get(path).get_data(as_text=True), "id", "notes")[0].endswith("Q4 held 5 s for a strap")
    pdf = client.get(path + ".pdf")
    assert pdf.status_code == 200 and pdf.data[:5] == b"%PDF-"
