"""Record validation: kinds (HSE HSG245; ISO 45001:2018 §3.35), injury and treatment
(OSHA 29 CFR 1904 Form 301; first aid per §1904.7(b)(5)(ii)), corrective actions and
their states (ISO 45001:2018 §10.2), controls (ISO 45001:2018 §8.1.2), attachment
signatures (JPEG SOI FF D8 FF, ITU-T T.81; PNG signature, ISO/IEC 15948 §5.2; PDF
header, ISO 32000-1 §7.5.2; WebP RIFF/WEBP, RFC 9649 §2)."""

from __future__ import annotations

from datetime import date, datetime, timezone

import pytest

from showops.audit import records
from showops.errors import ValidationError

NOW = datetime(2026, 11, 21, 23, 0, tzinfo=timezone.utc)
GOOD = {"kind": "near_miss", "occurred_at": "2026-11-21T21:40:00Z",
        "narrative": "Platform started to rise before the spotter called clear.",
        "people": "Ada Brennock (brake); Tomas Ilve (spotter)"}


def test_a_good_report_is_read():
    r = records.validate_report(GOOD, now=NOW)
    assert r.kind == "near_miss"
    assert r.occurred_at == datetime(2026, 11, 21, 21, 40, tzinfo=timezone.utc)
    assert [(p.name, p.role) for p in r.people] == [("Ada Brennock", "brake"), ("Tomas Ilve", "spotter")]
    assert r.treatment == "none" and not r.injured and r.warnings == ()


@pytest.mark.parametrize("change,field", [
    ({"kind": "accident!"}, "kind"),
    ({"kind": ""}, "kind"),
    ({"narrative": "  "}, "narrative"),
    ({"narrative": "x" * (records.NARRATIVE_MAX + 1)}, "narrative"),
    ({"occurred_at": "yesterday"}, "occurred_at"),
    ({"occurred_at": "2026-11-22T10:00:00Z"}, "occurred_at"),             # in the future
    ({"injured": "yes"}, "kind"),                                           # injury on a near miss
    ({"kind": "incident", "injured": "yes"}, "injury"),                     # Form 301: say what injury
    ({"treatment": "first_aid"}, "treatment"),                              # treatment without injury
    ({"kind": "incident", "injured": "yes", "injury": "graze, left shin", "treatment": "plaster"}, "treatment"),
    ({"people": "(brake)"}, "people"),
])
def test_bad_reports_are_refused_naming_the_field(change, field):
    with pytest.raises(ValidationError) as info:
        records.validate_report({**GOOD, **change}, now=NOW)
    assert info.value.field == field


def test_an_injury_report_keeps_form_301_fields():
    r = records.validate_report({**GOOD, "kind": "incident", "injured": "on", "injury": "bruised left hand",
                                 "treatment": "first_aid", "doing": "lowering the platform",
                                 "object_involved": "rear bar"}, now=NOW)
    assert (r.injured, r.injury, r.treatment, r.doing, r.object_involved) == (
        True, "bruised left hand", "first_aid", "lowering the platform", "rear bar")


@pytest.mark.parametrize("text,hint", [
    ("call her on +44 7700 900123 later", "phone"),
    ("mail ada@example.org for details", "e-mail"),
    ("rider (DOB 3 May) felt faint", "birth"),
])
def test_personal_data_in_the_narrative_is_warned_about(text, hint):
    # OSHA Form 301: do not put personal identifiers in narrative fields.
    r = records.validate_report({**GOOD, "narrative": text}, now=NOW)
    assert any(hint in w for w in r.warnings)


OCCURRED = datetime(2026, 11, 21, 21, 40, tzinfo=timezone.utc)


def test_a_good_action():
    a = records.validate_action({"description": "Add a clear call before release", "owner": "Head of stage",
                                 "due": "2026-11-28", "control": "administrative"}, occurred_at=OCCURRED)
    assert a.due == date(2026, 11, 28)


@pytest.mark.parametrize("change,field", [
    ({"due": "2026-11-20"}, "due"),        # before the incident
    ({"due": "soon"}, "due"),
    ({"owner": ""}, "owner"),
    ({"description": ""}, "description"),
    ({"control": "hope"}, "control"),
])
def test_bad_actions_are_refused(change, field):
    data = {"description": "x", "owner": "y", "due": "2026-11-28", **change}
    with pytest.raises(ValidationError) as info:
        records.validate_action(data, occurred_at=OCCURRED)
    assert info.value.field == field


def test_due_on_the_day_of_the_incident_is_allowed():
    assert records.validate_action({"description": "x", "owner": "y", "due": "2026-11-21"},
                                   occurred_at=OCCURRED).due == date(2026, 11, 21)


@pytest.mark.parametrize("current,new,ok", [
    ("open", "done", True), ("done", "verified", True), ("done", "open", True),
    ("open", "verified", False), ("verified", "open", False), ("verified", "done", False), ("open", "closed", False),
])
def test_action_state_moves(current, new, ok):
    if ok:
        records.check_action_move(current, new)
    else:
        with pytest.raises(ValidationError):
            records.check_action_move(current, new)


@pytest.mark.parametrize("state,due,today,overdue", [
    ("open", date(2026, 1, 1), date(2026, 1, 2), True),
    ("open", date(2026, 1, 2), date(2026, 1, 2), False),
    ("done", date(2026, 1, 1), date(2026, 2, 1), False),
])
def test_overdue(state, due, today, overdue):
    assert records.is_overdue(state, due, today) is overdue


def test_the_process_follows_iso_45001_10_2_order():
    assert [s for s, _ in records.PROCESS] == ["react", "investigate", "similar", "review", "act", "effective",
                                               "close"]
    assert list(records.CONTROLS) == ["eliminate", "substitute", "engineering", "administrative", "ppe"]


JPEG = b"\xff\xd8\xff\xe0\x00\x10JFIF\x00" + b"\x00" * 20
PNG = b"\x89PNG\r\n\x1a\n" + b"\x00" * 20
PDF = b"%PDF-1.7\n" + b"\x00" * 20
WEBP = b"RIFF\x24\x00\x00\x00WEBPVP8 " + b"\x00" * 20


@pytest.mark.parametrize("name,head,declared,expected", [
    ("brake.jpg", JPEG, "image/jpeg", "image/jpeg"),
    ("brake.JPEG", JPEG, None, "image/jpeg"),
    ("strap.png", PNG, "image/png", "image/png"),
    ("report.pdf", PDF, "application/pdf", "application/pdf"),
    ("pin.webp", WEBP, "application/octet-stream", "image/webp"),
])
def test_good_attachments(name, head, declared, expected):
    assert records.check_attachment(name, head, 1234, declared) == expected


@pytest.mark.parametrize("name,head,size,declared,words", [
    ("photo.jpg", b"MZ\x90\x00 not a jpeg at all", 1000, "image/jpeg", "says it is image/jpeg but is not"),
    ("photo.jpg", PNG, 1000, None, "bytes are image/png"),
    ("photo.png", JPEG, 1000, None, "bytes are image/jpeg"),
    ("photo.jpg", JPEG, 1000, "image/png", "sent as image/png"),
    ("photo.jpg", JPEG, 200 * 1024 * 1024, None, "200 MB"),
    ("photo.jpg", JPEG, 0, None, "empty"),
    ("notes.exe", b"MZ\x90\x00", 1000, None, "not an accepted type"),
    ("noext", JPEG, 1000, None, "extension"),
])
def test_bad_attachments_are_refused(name, head, size, declared, words):
    with pytest.raises(ValidationError, match=words):
        records.check_attachment(name, head, size, declared)
