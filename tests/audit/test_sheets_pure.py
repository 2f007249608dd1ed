"""The two PDFs render the figures they are given: read back with pypdf.

Data here is invented fixture data; the end-to-end check of the figures against a
season run through the live runner is in test_season_run.py.
"""

from __future__ import annotations

import io
import re
from datetime import date

import pypdf

from showops import CAUTION
from showops.audit.deviations import Deviation
from showops.audit.report import CueRun, Confirmation, Note, ShowReport
from showops.audit.season import ActionRef, CueRef, Margin, PerformanceRef, RecordRef, build_season
from showops.sheets.audit import render_season_audit
from showops.sheets.report import render_show_report


def text_of(data: bytes) -> str:
    reader = pypdf.PdfReader(io.BytesIO(data))
    return re.sub(r"\s+", " ", " ".join(page.extract_text() for page in reader.pages))


def test_season_pdf_shows_every_count_and_the_caution():
    perfs = [PerformanceRef(i, f"2026-11-{i:02d}T19:30:00+00:00") for i in range(1, 5)]
    cues = {10: CueRef(10, "Q4", "Orchard rises", "orchard-lift")}
    devs = [Deviation("hold", 1 + i % 4, 10, "Ride/Raise", (i,), "2026-11-01T20:00:00+00:00", "x") for i in range(7)]
    recs = [RecordRef(1, "near_miss", 2, 10, "Ride/Raise", "2026-11-02T20:00:00+00:00", "3B")]
    acts = [ActionRef(5, 1, "Add a clear call before release", "Head of stage", date(2026, 11, 3), "open")]
    margins = [Margin("Q4 Orchard rises", "orchard-lift", "pull", "pull per lifter", ((1, 0.5), (3, 0.83)))]
    s = build_season(date(2026, 11, 1), date(2026, 11, 30), perfs, cues, devs, recs, acts, margins,
                     today=date(2026, 12, 1))
    out = io.BytesIO()
    render_season_audit(s, out, printed_at="2026-12-01T10:00:00")
    text = text_of(out.getvalue())
    assert "4 performances; 7 deviations found in the log; 1 incidents" in text
    assert "HOLD called deviation 7" in text and "Near miss record 1" in text
    assert "orchard-lift 7 1" in text                       # counts by rig
    assert "Q4 Orchard rises orchard-lift 7 1" in text      # counts by cue
    assert "83 % 17 % 2026-11-03" in text                   # worst night, margin left
    assert "open OVERDUE" in text and "#1 Near miss 2026-11-02 20:00 3B tolerable" in text
    assert CAUTION[:60] in text


def test_show_report_pdf():
    cue = CueRef(10, "Q4", "Orchard rises", "orchard-lift")
    run = CueRun(cue, "2026-11-21T20:01:00+00:00", "2026-11-21T20:04:30+00:00",
                 (Confirmation(1, "Board/Brake on", "Ada Brennock", "brake", "2026-11-21T20:01:10+00:00",
                               "Tomas Ilve", "2026-11-21T20:01:20+00:00", (2, 3)),))
    report = ShowReport(7, "The Glass Orchard", "Kestrel Yard Dance Company", "Ferrier Street Drill Hall",
                        "2026-11-21T19:30:00+00:00", "June Okafor", [run, CueRun(CueRef(11, "Q5", "Blackout"), None,
                                                                                  None, ())],
                        [Deviation("hold", 7, 10, None, (4,), "2026-11-21T20:02:00+00:00", "HOLD by Tomas Ilve")],
                        [], [Note("2026-11-21T22:10:00+00:00", "June Okafor", "Lift cue ran late by a minute.")],
                        None, None, 1, 9, "ab" * 32)
    out = io.BytesIO()
    render_show_report(report, out, printed_at="2026-11-21T23:00:00")
    text = text_of(out.getvalue())
    assert "Show report: The Glass Orchard" in text
    assert "Q4 Orchard rises orchard-lift 20:01:00 20:04:30 3:30 1 0 0" in text
    assert "Q5 Blackout 0 0 0 no rig" in text and "NOT SIGNED OFF" in text
    assert "HOLD by Tomas Ilve" in text and "Lift cue ran late by a minute." in text
    assert "Ada Brennock brake 20:01:10 Tomas Ilve 20:01:20" in text
    assert CAUTION[:60] in text
