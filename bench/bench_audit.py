"""Benchmark the audit on a generated season (invented data, seeded).

A season of 300 performances x 40 rig cues x 12 steps (about 190,000 log rows,
appended through ``store.log.append_events``; the rows name a stored 12-step
procedure, so the rules that need one run too), then:

1. the deviation scan: the rules over rows in memory; from the database with nothing
   stored (read, parse, scan, store: the first time, or after a rule change); with
   every performance's scan stored (a fresh process); after one more night's rows
   (only that night is scanned); and when the log is unchanged (remembered);
2. the season audit PDF: from nothing stored, with and without the load margins, and
   with the scans stored;
3. each web audit page (Flask test client, signed in as a stage manager): its first
   load in a fresh process on the database as it is, without and after the warm-up
   ``showops serve`` runs as it starts (``store.audit.warm_audit``), then warm (median
   of three); and the first load with no scan stored at all.

Each figure is printed with its goal (issue 7: scan < 1 s, season PDF < 3 s, each web
page < 200 ms) and its ratio to it (under 1.00 meets the goal), after the machine's
load and a calibration figure.

Run: ``.venv/bin/python bench/bench_audit.py [--performances 300] [--cues 40] [--steps 12]
[--instance DIR]`` (with ``--instance``, an existing season there is reused, else built
and kept).
"""

from __future__ import annotations

import argparse
import io
import json
import os
import random
import statistics
import subprocess
import sys
import tempfile
import time
from datetime import date, datetime, timedelta, timezone
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
SCAN_GOAL_S, PDF_GOAL_S, PAGE_GOAL_S = 1.0, 3.0, 0.2
USER, PASSWORD = "bench-sm", "bench-password-123"


def median_time(func, runs: int = 3) -> tuple[float, object]:
    times, result = [], None
    for _ in range(runs):
        start = time.perf_counter()
        result = func()
        times.append(time.perf_counter() - start)
    return statistics.median(times), result


def report(label: str, seconds: float, goal_s: float, note: str = "") -> None:
    print(f"{label:<46} {seconds * 1000:7.0f} ms  goal < {goal_s * 1000:.0f} ms, ratio {seconds / goal_s:4.2f}"
          + (f"  ({note})" if note else ""))


def procedure_text(steps: int) -> str:
    """A procedure of ``steps`` steps in one phase, every step with a 30 s ``hold``; step 4
    releases the brake (checked by the spotter, as step 2 is) and the last but one sets it on."""
    lines = ["Title: Bench lift (generated)", "Rig: example-lift", "Roles: caller, spotter, brake, lifters",
             "Signal: rider crosses both arms on the chest", "", "# Bench lift", "", "## Ride", ""]
    for n in range(1, steps + 1):
        lines += [f"### Step {n}", f"- by: {'lifters' if n % 2 else 'brake'}"]
        if n in (2, 4):
            lines.append("- check: spotter")
        if n == 4:
            lines.append("- sets: brake off")
        elif n == steps - 1:
            lines.append("- sets: brake on")
        lines += ["- hold: 30", ""]
    return "\n".join(lines)


def night_events(rnd, pid: int, day: int, cue_ids, proc) -> list[dict]:
    """One night's rows as the live runner writes them, with a few deviations of each kind."""
    events = []
    t = datetime(2026, 1, 5, 19, 30, tzinfo=timezone.utc) + timedelta(days=day)

    def add(event, cid=None, step=None, dt=4.0, person=(1, "Ada Brennock"), detail=None, lag=None):
        nonlocal t
        t += timedelta(seconds=dt)
        events.append({"event": event, "at_utc": t.isoformat(), "person_id": person[0],
                       "person_name": person[1], "role": "crew", "performance_id": pid, "cue_id": cid,
                       "step_key": step.key if step else None, "step_number": step.number if step else None,
                       "procedure_version": proc.version, "detail": detail,
                       "device_at": (t - timedelta(seconds=lag)).isoformat() if lag is not None else None})

    for cid in cue_ids:
        add("cue_started", cid)
        if rnd.random() < 0.01:
            add("hold", cid, detail={"note": "rider signalled"})
            add("resume", cid)
        for step in proc.steps:
            if rnd.random() < 0.004:
                add("refused", cid, step, detail={"code": "out_of_order", "reason": "not yet"})
            slow = 40.0 if rnd.random() < 0.002 else 4.0
            add("step_confirmed", cid, step, dt=slow, lag=90.0 if rnd.random() < 0.002 else 0.4)
            if step.check:
                same = rnd.random() < 0.002
                add("check_confirmed", cid, step, person=(1, "Ada Brennock") if same else (2, "Tomas Ilve"))
        add("cue_completed", cid)
    if rnd.random() > 0.02:
        add("signoff")
    return events


def build(folder: Path, performances: int, cues: int, steps: int, seed: int = 1) -> int:
    """Build the instance and a stage manager's sign-in; return the number of log rows."""
    from showops.audit.deviations import ProcedureFacts
    from showops.store import open_db
    from showops.store import show as s
    from showops.store import users
    from showops.store.log import append_events

    rnd = random.Random(seed)
    db = open_db(folder)
    s.add_rig(db, "example-lift", (REPO / "docs/examples/example-lift.toml").read_text(encoding="utf-8"))
    text = procedure_text(steps)
    s.add_procedure(db, "bench-lift", text, rig="example-lift")
    proc = ProcedureFacts.from_procedure(s.read_procedure(text, "procedures/bench-lift.md"))
    production = s.add_production(db, "The Glass Orchard", "Kestrel Yard Dance Company")
    venue = s.add_venue(db, "Ferrier Street Drill Hall", "Aldmouth")
    cue_ids = [s.add_cue(db, production, f"Q{n}", f"Lift {n}", rig="example-lift", procedure="bench-lift")
               for n in range(1, cues + 1)]
    first = datetime(2026, 1, 5, 19, 30)
    perf_ids = [s.add_performance(db, production, venue, (first + timedelta(days=i)).strftime("%Y-%m-%dT%H:%M"),
                                  allow_past=True) for i in range(performances)]
    events = []
    for day, pid in enumerate(perf_ids):
        events += night_events(rnd, pid, day, cue_ids, proc)
    append_events(db, events)
    users.add_user(db, USER, "Bench Stage Manager", "stage_manager", password=PASSWORD)
    db.conn.close()
    return len(events)


def add_night(folder: Path, seed: int = 2) -> int:
    """Append one more performance's rows (after the season); return how many."""
    from showops.audit.deviations import ProcedureFacts
    from showops.store import open_db
    from showops.store import show as s
    from showops.store.log import append_events

    db = open_db(folder)
    production, venue, last = db.execute("SELECT production_id, venue_id, max(starts_at) FROM performance").fetchone()
    day = (datetime.fromisoformat(last) - datetime(2026, 1, 5, 19, 30)).days + 1
    pid = s.add_performance(db, production, venue, (datetime.fromisoformat(last) + timedelta(days=1))
                            .strftime("%Y-%m-%dT%H:%M"), allow_past=True)
    sha, text = db.execute("SELECT sha256, text FROM procedure_version WHERE procedure_slug = 'bench-lift'").fetchone()
    proc = ProcedureFacts.from_procedure(s.read_procedure(text, "procedures/bench-lift.md"))
    cue_ids = [c for (c,) in db.execute("SELECT id FROM cue WHERE production_id = ? ORDER BY position, id",
                                        [production])]
    events = night_events(random.Random(seed), pid, day, cue_ids, proc)
    append_events(db, events)
    db.conn.close()
    return len(events)


def forget_stored(db) -> None:
    """Drop every stored scan and this process's memory of them: as after a rule change."""
    from showops.store import audit as store

    db.execute("DELETE FROM audit_scan")
    store.forget_scans_in_memory()


def bench_scan(folder: Path) -> None:
    from showops.audit.deviations import COLUMNS, scan_rows
    from showops.store import audit as store
    from showops.store import open_db

    db = open_db(folder)
    facts = store.procedure_facts(db)
    rows = db.execute(f"SELECT {', '.join(COLUMNS)} FROM step_log WHERE performance_id IS NOT NULL "
                      "ORDER BY id").fetchall()
    t, devs = median_time(lambda: scan_rows(rows, facts))
    report("deviation scan, rows in memory", t, SCAN_GOAL_S, f"{len(rows):,} rows, {len(devs):,} deviations")
    t_read, _ = median_time(lambda: db.execute(f"SELECT {', '.join(COLUMNS)} FROM step_log "
                                               "WHERE performance_id IS NOT NULL ORDER BY id").fetchall())
    print(f"{'  of which reading the rows from SQLite':<46} {t_read * 1000:7.0f} ms  (not in the line above)")

    def cold():
        forget_stored(db)
        return store.find_deviations(db)

    t, devs = median_time(cold)
    report("find_deviations, nothing stored", t, SCAN_GOAL_S, "read, scan, store: once, or after a rule change")

    def fresh():
        store.forget_scans_in_memory()
        return store.find_deviations(db)

    t, _ = median_time(fresh)
    report("find_deviations, scans stored", t, SCAN_GOAL_S, "a fresh process")
    t, _ = median_time(lambda: store.find_deviations(db))
    report("find_deviations, log unchanged", t, SCAN_GOAL_S, "remembered in this process")
    db.conn.close()
    rows_added = add_night(folder)
    db = open_db(folder)
    start = time.perf_counter()
    store.find_deviations(db)
    report("find_deviations after one more night", time.perf_counter() - start, SCAN_GOAL_S,
           f"{rows_added:,} new rows; only that night scanned")
    db.conn.close()


def bench_pdf(folder: Path) -> None:
    from showops.sheets.audit import render_season_audit
    from showops.store import audit as store
    from showops.store import open_db

    db = open_db(folder)
    today = date(2027, 1, 1)

    def season_pdf(margins: bool, stored: bool):
        if not stored:
            forget_stored(db)
        season = store.season_audit(db, date(2026, 1, 1), date(2026, 12, 31), today=today, with_margins=margins)
        out = io.BytesIO()
        render_season_audit(season, out, printed_at="2027-01-01T00:00:00")
        return season, out.getbuffer().nbytes

    for label, margins, stored in (("season audit PDF, nothing stored", False, False),
                                   ("season audit PDF + margins, nothing stored", True, False),
                                   ("season audit PDF + margins, scans stored", True, True)):
        t, (season, size) = median_time(lambda: season_pdf(margins, stored), runs=1 if not stored else 3)
        report(label, t, PDF_GOAL_S, f"{size // 1024} KB, {season.total_deviations:,} deviations, "
                                     f"{len(season.margins)} margins")
    db.conn.close()


PAGES = ("/audit/", "/audit/deviations", "/audit/deviations?performance={pid}", "/audit/records",
         "/audit/performances", "/audit/performances/{pid}/report", "/audit/margins")


def page_times(folder: Path, page: str, runs: int, warm: bool = False) -> dict:
    """In this process: make the app (and run the warm-up ``showops serve`` starts, when
    ``warm``), sign in, time the page's first load, then ``runs`` more."""
    from showops.store.audit import warm_audit
    from showops.web import close_stores, create_app

    app = create_app({"INSTANCE": str(folder), "TESTING": True, "WTF_CSRF_ENABLED": False})
    if warm:
        warm_audit(folder)
    client = app.test_client()
    response = client.post("/sign-in", data={"username": USER, "password": PASSWORD})
    if response.status_code != 302:
        raise SystemExit(f"bench: sign-in answered {response.status_code}")
    start = time.perf_counter()
    status = client.get(page).status_code
    first = time.perf_counter() - start
    warm, _ = median_time(lambda: client.get(page), runs=runs) if runs else (None, None)
    close_stores(app)
    return {"status": status, "first": first, "warm": warm}


def bench_pages(folder: Path) -> None:
    """Each page's first load in a fresh process (Python and the app already loaded, the
    database as the steps above left it), then warm in that process."""
    from showops.store import open_db

    db = open_db(folder)
    pid = db.execute("SELECT min(id) FROM performance").fetchone()[0]
    db.conn.close()
    for page in PAGES:
        page = page.format(pid=pid)
        for warm in (False, True):
            out = subprocess.run([sys.executable, __file__, "--page", page, "--instance", str(folder)]
                                 + (["--warm"] if warm else []), capture_output=True, text=True, check=True)
            got = json.loads(out.stdout.strip().splitlines()[-1])
            report(f"web {page} first load" + (", warmed up" if warm else ""), got["first"], PAGE_GOAL_S,
                   f"status {got['status']}, fresh process" + (" after the serve warm-up" if warm else ""))
        report(f"web {page} warm", got["warm"], PAGE_GOAL_S)
    # the first load with no scan stored: after an upgrade or a rule change, before the
    # server's warm-up (``showops serve``) has stored the scans
    for page in PAGES[:2]:
        db = open_db(folder)
        forget_stored(db)
        db.conn.close()
        out = subprocess.run([sys.executable, __file__, "--page", page, "--instance", str(folder)],
                             capture_output=True, text=True, check=True)
        got = json.loads(out.stdout.strip().splitlines()[-1])
        report(f"web {page} first load, nothing stored", got["first"], PAGE_GOAL_S,
               f"status {got['status']}, fresh process")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--performances", type=int, default=300)
    parser.add_argument("--cues", type=int, default=40)
    parser.add_argument("--steps", type=int, default=12)
    parser.add_argument("--instance", type=Path, help="reuse (or build and keep) the season in this folder")
    parser.add_argument("--page", help=argparse.SUPPRESS)   # one page's times, in a fresh process
    parser.add_argument("--warm", action="store_true", help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.page:
        print(json.dumps(page_times(args.instance, args.page, runs=3, warm=args.warm)))
        return

    start = time.perf_counter()
    total = 0
    for i in range(5_000_000):
        total += i
    calib = time.perf_counter() - start
    print(f"machine: load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores; 5,000,000 Python integer "
          f"additions take {calib:.2f} s (about 0.3 s on an idle core): scale the figures below by that")
    with tempfile.TemporaryDirectory() as tmp:
        folder = args.instance or Path(tmp) / "instance"
        if (folder / "showops.db").exists():
            print(f"reusing the season in {folder} (a night is added to it on each run)")
        else:
            start = time.perf_counter()
            rows = build(folder, args.performances, args.cues, args.steps)
            print(f"built {args.performances} performances x {args.cues} cues x {args.steps} steps: "
                  f"{rows:,} log rows in {time.perf_counter() - start:.1f} s")
        bench_scan(folder)
        bench_pdf(folder)
        bench_pages(folder)


if __name__ == "__main__":
    main()
