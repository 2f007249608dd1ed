"""The season audit's every count against a season run through the live runner.

The demo (invented: Kestrel Yard Dance Company, *The Glass Orchard*) is built with
its day 20 days back, so all six performances are over; each is then run through
``showops.store.live.run_demo_performance`` (the live service functions, never rows
written by hand): the past night runs, the others' cues are refused where rig care
blocks them. The expected figures are counted here straight from ``step_log``
with SQL and the runner's own details (its ``overdue_s`` on a late step, its
``complete: false`` on an ended cue), independently of the audit's rules; the PDF
(read back with pypdf) and the CSV files must show exactly those.
"""

from __future__ import annotations

import csv
import json
import re
from collections import Counter
from datetime import date, datetime, timedelta, timezone

import pypdf
import pytest
from click.testing import CliRunner

from showops.cli import main

TODAY = datetime.now(timezone.utc).date() - timedelta(days=20)


@pytest.fixture(scope="module")
def season(tmp_path_factory):
    from showops.store import live, open_db
    from showops.store.demo import build_demo

    folder = tmp_path_factory.mktemp("season") / "instance"
    db = open_db(folder)
    report = build_demo(db, TODAY)
    for pid in report.ids.performances:
        if pid != report.ids.past_performance:
            live.run_demo_performance(db, pid, seed=pid)
    out = folder.parent / "out"
    result = CliRunner().invoke(main, ["audit", "--from", (TODAY - timedelta(days=30)).isoformat(), "--to",
                                       (TODAY + timedelta(days=30)).isoformat(), "--out", str(out / "audit.pdf"),
                                       "--csv", str(out / "csv"), "--instance", str(folder)])
    assert result.exit_code == 0, result.output
    yield db, report.ids, out
    db.conn.close()


def read_csv(path):
    return list(csv.DictReader(path.read_text(encoding="utf-8").splitlines()))


def brake_off_too_long(db) -> int:
    """Brake-off intervals longer than the procedure's hold times allow, counted from the
    runner's own ``sets`` detail on each confirmation and the procedure parser's steps."""
    from showops.procedure import parse_procedure

    allowance = {}
    for sha, text in db.execute("SELECT sha256, text FROM procedure_version"):
        steps = parse_procedure(text, source="stored").main_steps
        start = next((i for i, st in enumerate(steps) if "brake off" in st.sets), None)
        if start is None:
            continue
        end = next(i for i in range(start, len(steps)) if "brake on" in steps[i].sets)
        allowance[sha] = sum(st.hold_s or 0 for st in steps[start:end + 1])
    count, off = 0, {}
    for pid, cid, event, at, detail, version in db.execute(
            "SELECT performance_id, cue_id, event, at_utc, detail, procedure_version FROM step_log "
            "WHERE event IN ('step_confirmed', 'cue_completed') ORDER BY id"):
        sets = json.loads(detail).get("sets", []) if detail else []
        key = (pid, cid)
        if event == "step_confirmed" and "brake off" in sets:
            off[key] = at
        elif key in off and (event == "cue_completed" or "brake on" in sets):
            seconds = (datetime.fromisoformat(at) - datetime.fromisoformat(off.pop(key))).total_seconds()
            if event == "cue_completed" or seconds > allowance.get(version, float("inf")):
                count += 1
    return count


def expected_counts(db) -> Counter:
    """Each rule's count, straight from the log (no audit code)."""
    q = lambda sql: db.execute(sql).fetchall()  # noqa: E731
    c = Counter()
    c["refused_attempt"] = q("SELECT count(*) FROM step_log WHERE event = 'refused'")[0][0]
    c["hold"] = q("SELECT count(*) FROM step_log WHERE event = 'hold'")[0][0]
    c["past_hold_time"] = sum(1 for (d,) in q("SELECT detail FROM step_log WHERE event = 'step_confirmed'")
                              if d and "overdue_s" in json.loads(d))
    c["self_check"] = q("SELECT count(*) FROM step_log a JOIN step_log b ON a.performance_id = b.performance_id "
                        "AND a.cue_id = b.cue_id AND a.step_key = b.step_key AND a.person_id = b.person_id "
                        "WHERE a.event = 'step_confirmed' AND b.event = 'check_confirmed'")[0][0]
    c["unconfirmed_at_completion"] = sum(
        1 for (d,) in q("SELECT detail FROM step_log WHERE event = 'cue_completed'")
        if d and json.loads(d).get("complete") is False)
    c["late_record"] = sum(
        1 for at, dev in q("SELECT at_utc, device_at FROM step_log WHERE device_at IS NOT NULL "
                           "AND performance_id IS NOT NULL")
        if abs((datetime.fromisoformat(at) - datetime.fromisoformat(dev)).total_seconds()) > 60)
    c["brake_off_too_long"] = brake_off_too_long(db)
    ran = {p for (p,) in q("SELECT DISTINCT performance_id FROM step_log WHERE event = 'cue_started'")}
    signed = {p for (p,) in q("SELECT DISTINCT s.performance_id FROM step_log s WHERE s.event = 'signoff' AND s.id > "
                              "(SELECT max(id) FROM step_log c WHERE c.performance_id = s.performance_id AND "
                              "c.event IN ('cue_started', 'cue_completed', 'step_confirmed', 'check_confirmed'))")}
    c["signoff_missing"] = len(ran - signed)
    for kind, n in q("SELECT kind, count(*) FROM audit_record GROUP BY kind"):
        c[kind] = n
    return c


def test_the_season_really_ran_through_the_runner(season):
    db, ids, _ = season
    # every night was attempted through the runner; the past night ran, and the others' starts were
    # refused where rig care blocks them (no pre-show check or briefing recorded for those nights)
    tried = db.execute("SELECT count(DISTINCT performance_id) FROM step_log WHERE event IN ('cue_started', "
                       "'refused')").fetchone()[0]
    started = db.execute("SELECT count(DISTINCT performance_id) FROM step_log WHERE event = 'cue_started'").fetchone()
    assert tried == len(ids.performances) == 6 and started[0] >= 1
    from showops.store.log import verify_log
    assert verify_log(db) is None


def test_every_count_in_the_csv_matches_the_log(season):
    db, ids, out = season
    expected = expected_counts(db)
    assert expected["refused_attempt"] >= 6 and expected["hold"] >= 1 and expected["near_miss"] == 1
    kinds = {r["kind"]: int(r["count"]) for r in read_csv(out / "csv" / "counts_by_kind.csv")}
    assert kinds == {k: expected.get(k, 0) for k in kinds}
    assert set(kinds) >= set(expected)
    # trend: per performance, deviations and records
    per_perf = Counter(p for (p,) in db.execute(
        "SELECT performance_id FROM step_log WHERE event IN ('refused', 'hold')"))
    trend = {int(r["performance_id"]): (int(r["deviations"]), int(r["records"])) for r in read_csv(out / "csv" / "trend.csv")}
    assert set(trend) == set(ids.performances)
    assert sum(d for d, _ in trend.values()) == sum(v for k, v in expected.items() if k not in
                                                   ("incident", "near_miss", "unsafe_condition"))
    for pid, (devs, _) in trend.items():
        assert devs >= per_perf[pid]      # refusals and holds at least; the rest from the rules above
    past = ids.past_performance
    assert trend[past][1] == 1            # the demo's near miss on its night
    # by rig: refusals and holds per rig, counted by SQL join on the cue's rig
    rig_rows = {r["rig"]: int(r["deviations"]) for r in read_csv(out / "csv" / "counts_by_rig.csv")}
    assert sum(rig_rows.values()) == sum(d for d, _ in trend.values())
    # actions and matrix
    actions = read_csv(out / "csv" / "actions.csv")
    assert len(actions) == db.execute("SELECT count(*) FROM audit_action WHERE state != 'verified'").fetchone()[0] == 1
    matrix = {r["cell"]: int(r["records"]) for r in read_csv(out / "csv" / "risk_matrix.csv")}
    cell = db.execute("SELECT risk_cell FROM audit_record").fetchone()[0]
    assert matrix[cell] == 1 and sum(matrix.values()) == 1 and len(matrix) == 25
    # every deviation row points at real log rows of its performance
    for r in read_csv(out / "csv" / "deviations.csv"):
        for rid in map(int, r["row_ids"].split()):
            assert db.execute("SELECT performance_id FROM step_log WHERE id = ?", [rid]).fetchone()[0] == \
                int(r["performance_id"])


def test_every_count_in_the_pdf_matches_the_log(season):
    db, ids, out = season
    expected = expected_counts(db)
    text = re.sub(r"\s+", " ", " ".join(p.extract_text() for p in pypdf.PdfReader(str(out / "audit.pdf")).pages))
    deviations = sum(v for k, v in expected.items() if k not in ("incident", "near_miss", "unsafe_condition"))
    records = sum(v for k, v in expected.items() if k in ("incident", "near_miss", "unsafe_condition"))
    assert f"6 performances; {deviations} deviations found in the log; {records} incidents" in text
    from showops.audit.deviations import RULES
    from showops.audit.records import KINDS
    for rule, (title, _) in RULES.items():
        assert f"{title} deviation {expected.get(rule, 0)}" in text, rule
    for kind, (label, _) in KINDS.items():
        assert f"{label} record {expected.get(kind, 0)}" in text, kind
    assert "Load margin of each rig cue across the run" in text


def test_show_report_of_the_past_night(season, tmp_path):
    db, ids, _ = season
    out = tmp_path / "report.pdf"
    folder = str(db.execute("PRAGMA database_list").fetchone()[2]).rsplit("/", 1)[0]
    result = CliRunner().invoke(main, ["report", str(ids.past_performance), "--out", str(out), "--instance", folder])
    assert result.exit_code == 0, result.output
    text = re.sub(r"\s+", " ", " ".join(p.extract_text() for p in pypdf.PdfReader(str(out)).pages))
    confirmations = db.execute("SELECT count(*) FROM step_log WHERE performance_id = ? AND event = 'step_confirmed'",
                               [ids.past_performance]).fetchone()[0]
    checks = db.execute("SELECT count(*) FROM step_log WHERE performance_id = ? AND event = 'check_confirmed'",
                        [ids.past_performance]).fetchone()[0]
    assert f"Steps confirmed {confirmations} ({checks} with a second person's check)" in text
    assert "Recorded as near miss #1" in text


def test_past_hold_time_agrees_with_the_runners_own_overdue_figure(season):
    from showops.store.audit import find_deviations

    db, ids, _ = season
    found = [d for d in find_deviations(db) if d.rule == "past_hold_time"]
    assert found
    for d in found:
        detail = json.loads(db.execute("SELECT detail FROM step_log WHERE id = ?", [d.row_ids[-1]]).fetchone()[0])
        assert d.detail["elapsed_s"] - d.detail["hold_s"] == pytest.approx(detail["overdue_s"], abs=0.051)
