"""The audit's store: records tied to real log rows, roles, amendments in the hash-
chained log, never deleted, attachments checked; bad input stores nothing.

Sources: HSE HSG245 and ISO 45001:2018 §3.35/§10.2 (kinds, the order of the
process, actions verified before closing); ICAO Doc 9859 4th ed. (the matrix, from
memory); OSHA 29 CFR 1904.33 (kept five years); signatures of JPEG (ITU-T T.81) and
PNG (ISO/IEC 15948). Data is invented fixture data.
"""

from __future__ import annotations

import io
import json
import sqlite3
from datetime import datetime, timezone

import pytest

from showops.errors import NotFound, PermissionDenied, Refused, ValidationError
from showops.store import audit as store

NOW = datetime(2026, 11, 23, 12, 0, tzinfo=timezone.utc)
JPEG = b"\xff\xd8\xff\xe0\x00\x10JFIF\x00" + bytes(2000)


def events(inst, name):
    return [r for r in inst.db.query("SELECT * FROM step_log WHERE event = ? ORDER BY id", [name])]


def near_miss(**extra):
    return {"kind": "near_miss", "occurred_at": "2026-11-20T19:31:00Z",
            "narrative": "Platform moved before the clear call.", **extra}


def test_a_report_points_at_its_log_row_and_is_logged(inst, crew):
    rows = inst.run_cue(inst.perf1)
    target = rows[1]
    record_id, warnings = store.report(inst.db, crew, near_miss(), step_log_id=target["id"],
                                       performance_id=inst.perf1, now=NOW)
    rec = store.get_record(inst.db, record_id)
    assert (rec["performance_id"], rec["cue_id"], rec["step_key"], rec["step_log_id"]) == (
        inst.perf1, inst.cue_lift, "Board/Brake on", target["id"])
    assert rec["status"] == "reported" and rec["reported_by"] == "Tomas Ilve" and warnings == ()
    assert rec["retain_until"] == "2032-01-01"          # 29 CFR 1904.33: five years after the year's end
    logged = events(inst, "incident_reported")
    assert len(logged) == 1 and json.loads(logged[0]["detail"])["record"] == record_id
    from showops.store.log import verify_log
    assert verify_log(inst.db) is None


def test_a_step_of_another_performance_is_refused_and_nothing_stored(inst, crew):
    rows = inst.run_cue(inst.perf1)
    before = inst.count("step_log")
    with pytest.raises(ValidationError, match="belongs to performance"):
        store.report(inst.db, crew, near_miss(), step_log_id=rows[1]["id"], performance_id=inst.perf2, now=NOW)
    with pytest.raises(ValidationError, match="does not exist"):
        store.report(inst.db, crew, near_miss(), step_log_id=9999, now=NOW)
    assert inst.count("audit_record") == 0 and inst.count("step_log") == before


def test_only_a_manager_classifies_and_a_likelihood_of_6_is_refused(inst, crew, sm):
    record_id, _ = store.report(inst.db, crew, near_miss(), performance_id=inst.perf1, now=NOW)
    with pytest.raises(PermissionDenied):
        store.classify(inst.db, crew, record_id, kind="near_miss", likelihood=3, severity_actual="E",
                       severity_potential="B", now=NOW)
    before = inst.count("step_log")
    with pytest.raises(ValidationError, match="likelihood"):
        store.classify(inst.db, sm, record_id, kind="near_miss", likelihood=6, severity_actual="E",
                       severity_potential="B", now=NOW)
    assert store.get_record(inst.db, record_id)["status"] == "reported" and inst.count("step_log") == before
    a = store.classify(inst.db, sm, record_id, kind="near_miss", likelihood=3, severity_actual="E",
                       severity_potential="B", now=NOW)
    rec = store.get_record(inst.db, record_id)
    assert (a["cell"], rec["risk_cell"], rec["risk_region"]) == ("3B", "3B", "tolerable")   # ICAO 9859 3B
    assert rec["matrix_edition"].startswith("ICAO Doc 9859")
    change = json.loads(events(inst, "incident_amended")[-1]["detail"])["changes"]
    assert change["risk_cell"] == [None, "3B"] and change["status"] == ["reported", "classified"]


def test_actions_in_order_and_closing_needs_them_verified(inst, sm):
    record_id, _ = store.report(inst.db, sm, near_miss(), now=NOW)
    with pytest.raises(ValidationError, match="before the occurrence"):
        store.add_action(inst.db, sm, record_id, {"description": "x", "owner": "y", "due": "2026-11-19"}, now=NOW)
    assert inst.count("audit_action") == 0
    action = store.add_action(inst.db, sm, record_id, {"description": "Spotter calls clear before release",
                                                      "owner": "Head of stage", "due": "2026-11-28"}, now=NOW)
    with pytest.raises(Refused, match="not classified"):
        store.close(inst.db, sm, record_id, now=NOW)
    store.classify(inst.db, sm, record_id, kind="near_miss", likelihood=2, severity_actual="E",
                   severity_potential="C", now=NOW)
    with pytest.raises(Refused, match="not yet verified"):
        store.close(inst.db, sm, record_id, now=NOW)
    with pytest.raises(ValidationError, match="cannot become verified"):
        store.move_action(inst.db, sm, action, "verified", now=NOW)
    store.move_action(inst.db, sm, action, "done", note="added to the procedure", now=NOW)
    store.move_action(inst.db, sm, action, "verified", note="seen on two nights", now=NOW)
    store.close(inst.db, sm, record_id, now=NOW)
    assert store.get_record(inst.db, record_id)["status"] == "closed"
    with pytest.raises(Refused, match="closed"):
        store.amend(inst.db, sm, record_id, {"narrative": "changed"}, now=NOW)


def test_records_are_never_deleted(inst, sm):
    record_id, _ = store.report(inst.db, sm, near_miss(), now=NOW)
    store.add_action(inst.db, sm, record_id, {"description": "x", "owner": "y", "due": "2026-11-28"}, now=NOW)
    for table in ("audit_record", "audit_action"):
        with pytest.raises(sqlite3.IntegrityError, match="never deleted"):
            inst.db.execute(f"DELETE FROM {table}")
    assert inst.count("audit_record") == 1


def test_amendments_keep_old_and_new_in_the_log(inst, crew, sm):
    record_id, _ = store.report(inst.db, crew, near_miss(), now=NOW)
    store.amend(inst.db, crew, record_id, {"narrative": "Platform moved 5 cm before the clear call."}, now=NOW)
    detail = json.loads(events(inst, "incident_amended")[-1]["detail"])
    assert detail["changes"]["narrative"] == ["Platform moved before the clear call.",
                                              "Platform moved 5 cm before the clear call."]
    with pytest.raises(ValidationError, match="root_causes"):
        store.amend(inst.db, crew, record_id, {"root_causes": "x"}, now=NOW)   # a reporter writes no causes
    store.investigate(inst.db, sm, record_id, {"immediate_causes": "release before the clear call",
                                               "root_causes": "no clear call in the procedure"}, now=NOW)
    assert store.get_record(inst.db, record_id)["root_causes"] == "no clear call in the procedure"
    other = store.Actor("Oskar Lind", "crew")
    with pytest.raises(PermissionDenied):
        store.amend(inst.db, other, record_id, {"narrative": "not mine"}, now=NOW)


class Zeros(io.RawIOBase):
    """A stream of a given size that never holds it in memory (a 200 MB upload)."""

    def __init__(self, head: bytes, size: int):
        self.head, self.left = head, size

    def readable(self):
        return True

    def read(self, n=-1):
        n = self.left if n is None or n < 0 else min(n, self.left)
        out = self.head[:n] + bytes(max(0, n - len(self.head)))
        self.head = self.head[n:]
        self.left -= n
        return out


def test_attachments(inst, crew):
    record_id, _ = store.report(inst.db, crew, near_miss(), now=NOW)
    att = store.add_attachment(inst.db, crew, inst.folder, record_id, "brake.jpg", io.BytesIO(JPEG), "image/jpeg",
                               now=NOW)
    path, media_type, name = store.attachment_file(inst.db, inst.folder, att)
    assert path.read_bytes() == JPEG and media_type == "image/jpeg" and name == "brake.jpg"
    files = sorted((inst.folder / "attachments").iterdir())
    with pytest.raises(ValidationError, match="says it is image/jpeg but is not"):
        store.add_attachment(inst.db, crew, inst.folder, record_id, "brake.jpg", io.BytesIO(b"GIF89a" + bytes(50)),
                             "image/jpeg", now=NOW)
    with pytest.raises(ValidationError, match="limit is 20 MB"):
        store.add_attachment(inst.db, crew, inst.folder, record_id, "big.jpg", Zeros(JPEG, 200 * 1024 * 1024),
                             "image/jpeg", now=NOW)
    assert sorted((inst.folder / "attachments").iterdir()) == files and inst.count("audit_attachment") == 1
    with pytest.raises(NotFound):
        store.attachment_file(inst.db, inst.folder, 99)


def test_a_deviation_is_promoted_once(inst, crew):
    inst.run_cue(inst.perf1, hold=True)
    devs = store.find_deviations(inst.db, [inst.perf1], now=NOW)
    hold = next(d for d in devs if d.rule == "hold")
    record_id = store.promote(inst.db, crew, store.find_deviation(inst.db, hold.key, now=NOW), now=NOW)
    rec = store.get_record(inst.db, record_id)
    assert rec["kind"] == "near_miss" and rec["step_log_id"] == hold.row_ids[-1] and rec["deviation_key"] == hold.key
    assert "rider signalled" in rec["narrative"]
    with pytest.raises(Refused, match="already"):
        store.promote(inst.db, crew, hold, now=NOW)
    assert inst.count("audit_record") == 1
    with pytest.raises(NotFound):
        store.find_deviation(inst.db, "hold:99999", now=NOW)


def test_show_report_of_a_night_that_never_ran_is_refused(inst):
    with pytest.raises(Refused, match="never ran"):
        store.show_report(inst.db, inst.perf2, now=NOW)
    with pytest.raises(NotFound):
        store.show_report(inst.db, 999, now=NOW)


def test_show_report_from_the_log(inst, crew, sm):
    rows = inst.run_cue(inst.perf1, hold=True, signoff=False)
    store.add_note(inst.db, sm, inst.perf1, "Q4 held for 5 s: rider's strap re-seated.", now=NOW)
    store.report(inst.db, crew, near_miss(), step_log_id=rows[1]["id"], now=NOW)
    rep = store.show_report(inst.db, inst.perf1, now=NOW)
    lift = next(c for c in rep.running_order if c.cue.id == inst.cue_lift)
    assert (lift.started_at, lift.completed_at) == (rows[0]["at_utc"], rows[-1]["at_utc"])
    assert lift.holds == 1 and lift.confirmations[0].by == "Ada Brennock"
    assert lift.confirmations[0].checked_by == "Tomas Ilve"
    assert {d.rule for d in rep.deviations} == {"hold", "signoff_missing"}
    assert len(rep.records) == 1 and rep.notes[0].text.startswith("Q4 held") and rep.signoff_at is None
    assert rep.running_order[0].cue.number == "Q1"       # running order follows the cue list's positions
