"""The night's show report as a PDF (reportlab platypus), and the page furniture the
season audit shares (render only: no queries; the data comes from ``audit.report``).
"""
from __future__ import annotations

from xml.sax.saxutils import escape

from reportlab.lib import colors
from reportlab.lib.enums import TA_LEFT
from reportlab.lib.pagesizes import A4
from reportlab.lib.styles import ParagraphStyle, getSampleStyleSheet
from reportlab.lib.units import mm
from reportlab.platypus import Paragraph, SimpleDocTemplate, Table, TableStyle

from showops import CAUTION

PAGE = A4
MARGIN = 15 * mm
INK = colors.HexColor("#1d1d1d")
RULE = colors.HexColor("#8a8a8a")
HEAD_BG = colors.HexColor("#e4e1d8")
ZEBRA = colors.HexColor("#f4f2ec")

_base = getSampleStyleSheet()
TITLE = ParagraphStyle("AuditTitle", parent=_base["Title"], fontSize=18, leading=22, alignment=TA_LEFT,
                       spaceAfter=4, textColor=INK)
H2 = ParagraphStyle("AuditH2", parent=_base["Heading2"], fontSize=13, leading=16, spaceBefore=8, spaceAfter=4,
                    textColor=INK)
BODY = ParagraphStyle("AuditBody", parent=_base["BodyText"], fontSize=9.5, leading=12, textColor=INK)
SMALL = ParagraphStyle("AuditSmall", parent=BODY, fontSize=8, leading=10)
CELL = ParagraphStyle("AuditCell", parent=BODY, fontSize=8.5, leading=10.5)
CAUTION_STYLE = ParagraphStyle("AuditCaution", parent=SMALL, borderColor=RULE, borderWidth=0.6, borderPadding=4,
                               spaceBefore=6, spaceAfter=6)


def p(text, style=CELL) -> Paragraph:
    """A paragraph of plain text (escaped)."""
    return Paragraph(escape("" if text is None else str(text)), style)


def caution() -> Paragraph:
    return Paragraph("<b>Caution.</b> " + escape(CAUTION), CAUTION_STYLE)


def table(header: list[str], rows: list[list], widths: list[float], *, repeat: int = 1, numeric: tuple = ()) -> Table:
    """A grid table with a shaded header row, zebra rows and wrapped cells."""
    data = [[p(h, ParagraphStyle("th", parent=CELL, fontName="Helvetica-Bold")) for h in header]]
    for row in rows:
        data.append([c if not isinstance(c, (str, int, float)) and c is not None else p(c) for c in row])
    t = Table(data, colWidths=widths, repeatRows=repeat)
    style = [("GRID", (0, 0), (-1, -1), 0.4, RULE), ("BACKGROUND", (0, 0), (-1, 0), HEAD_BG),
             ("VALIGN", (0, 0), (-1, -1), "TOP"), ("TOPPADDING", (0, 0), (-1, -1), 2),
             ("BOTTOMPADDING", (0, 0), (-1, -1), 2)]
    for i in range(2, len(data), 2):
        style.append(("BACKGROUND", (0, i), (-1, i), ZEBRA))
    t.setStyle(TableStyle(style))
    return t


def document(out, title: str, footer: str) -> SimpleDocTemplate:
    """A4 portrait document with a footer on every page (title, footer text, page number)."""
    doc = SimpleDocTemplate(out, pagesize=PAGE, leftMargin=MARGIN, rightMargin=MARGIN, topMargin=MARGIN,
                            bottomMargin=MARGIN + 6 * mm, title=title, author="showops", invariant=1)

    def draw_footer(canvas, doc_):
        canvas.saveState()
        canvas.setFont("Helvetica", 7.5)
        canvas.setFillColor(RULE)
        canvas.drawString(MARGIN, MARGIN - 2 * mm, footer[:150])
        canvas.drawRightString(PAGE[0] - MARGIN, MARGIN - 2 * mm, f"page {doc_.page}")
        canvas.restoreState()

    doc._draw_footer = draw_footer
    return doc


def build(doc: SimpleDocTemplate, story: list) -> None:
    doc.build(story, onFirstPage=doc._draw_footer, onLaterPages=doc._draw_footer)


def hhmm(iso: str | None) -> str:
    """'2026-11-21T20:03:04+00:00' -> '20:03:04' (UTC), '' for None."""
    return iso[11:19] if iso else ""


def duration(start: str | None, end: str | None) -> str:
    if not start or not end:
        return ""
    from datetime import datetime
    s = (datetime.fromisoformat(end) - datetime.fromisoformat(start)).total_seconds()
    return f"{int(s // 60)}:{int(s % 60):02d}"


# -- the show report ----------------------------------------------------------------

def render_show_report(report, out, *, printed_at: str) -> None:
    """Write the night's show report as a PDF.

    :param report: a :class:`showops.audit.report.ShowReport`.
    :param out: a path or a binary file object.
    :param printed_at: ISO time printed in the footer (passed in so a PDF can be
        reproduced byte for byte).
    """
    from reportlab.platypus import CondPageBreak, Spacer

    from showops.audit.deviations import RULES
    from showops.audit.records import KINDS
    from showops.audit.risk import MATRIX

    r = report
    footer = (f"Show report · performance {r.performance_id} · {r.production} · log rows "
              f"{r.first_row or '-'}-{r.last_row or '-'} · printed {printed_at[:16].replace('T', ' ')} UTC")
    doc = document(out, f"Show report, performance {r.performance_id}", footer)
    width = PAGE[0] - 2 * MARGIN
    story = [Paragraph(escape(f"Show report: {r.production}"), TITLE),
             p(f"{r.company} · {r.venue} · {r.starts_at[:16].replace('T', ' ')} · performance {r.performance_id}",
               BODY), Spacer(1, 4)]
    rig_runs = [c for c in r.running_order if c.cue.rig]
    ran = [c for c in r.running_order if c.started_at]
    facts = [
        ["Stage manager", r.stage_manager or "(not set)"],
        ["Cues run", f"{len(ran)} of {len(r.running_order)} ({sum(1 for c in rig_runs if c.started_at)} rig cues)"],
        ["Steps confirmed", f"{r.confirmations} ({r.checks} with a second person's check)"],
        ["Deviations found", str(len(r.deviations))],
        ["Incidents, near misses, unsafe conditions", str(len(r.records))],
        ["Signed off", f"{r.signoff_by} at {hhmm(r.signoff_at)} UTC" if r.signoff_at else "NOT SIGNED OFF"],
        ["Log", f"rows {r.first_row or '-'} to {r.last_row or '-'}; last hash {(r.last_hash or '-')[:16]}"],
    ]
    story.append(table(["", ""], facts, [0.38 * width, 0.62 * width]))

    story.append(Paragraph("Running order (times from the log, UTC)", H2))
    rows = []
    for c in r.running_order:
        rows.append([c.cue.number, c.cue.name, c.cue.rig or "", hhmm(c.started_at), hhmm(c.completed_at),
                     duration(c.started_at, c.completed_at), str(len(c.confirmations)), str(c.holds),
                     str(c.refusals), ("not run" if c.cue.rig else "no rig") if not c.started_at
                     else ("" if c.completed_at else "NOT COMPLETED")])
    story.append(table(["Cue", "Name", "Rig", "Started", "Ended", "Took", "Steps", "Holds", "Refused", ""], rows,
                       [w * width for w in (0.06, 0.21, 0.13, 0.09, 0.09, 0.06, 0.07, 0.07, 0.1, 0.12)]))

    story.append(Paragraph("Deviations found in the log", H2))
    cue_names = {c.cue.id: c.cue.number for c in r.running_order}
    if r.deviations:
        story.append(table(["Time", "Rule", "Cue", "What the log shows", "Rows"],
                           [[hhmm(d.at_utc), RULES[d.rule][0], cue_names.get(d.cue_id, ""), d.text,
                             " ".join(map(str, d.row_ids))] for d in r.deviations],
                           [w * width for w in (0.1, 0.22, 0.07, 0.49, 0.12)]))
    else:
        story.append(p("None found by the rules.", BODY))

    story.append(Paragraph("Incidents, near misses and unsafe conditions", H2))
    if r.records:
        story.append(table(["No.", "Kind", "Occurred", "Cue / step", "Risk", "Status"],
                           [[str(x.id), KINDS[x.kind][0], x.occurred_at[:16].replace("T", " "),
                             f"{cue_names.get(x.cue_id, '')} {x.step_key or ''}".strip(),
                             f"{x.cell} {MATRIX[x.cell]}" if x.cell else "not yet classified", x.status]
                            for x in r.records],
                           [w * width for w in (0.07, 0.15, 0.17, 0.3, 0.17, 0.14)]))
    else:
        story.append(p("None reported.", BODY))

    story.append(Paragraph("Stage manager's notes", H2))
    if r.notes:
        for n in r.notes:
            story.append(p(f"{hhmm(n.written_at)} {n.written_by}: {n.text}", BODY))
    else:
        story.append(p("No notes.", BODY))

    story.append(Paragraph("Sign-off", H2))
    if r.signoff_at:
        story.append(p(f"Signed off in the log by {r.signoff_by} at {r.signoff_at[:19].replace('T', ' ')} UTC.",
                       BODY))
    else:
        story.append(p("The log holds no sign-off after the night's last cue.", BODY))
    story.append(Spacer(1, 10))
    story.append(table(["Stage manager (name)", "Signature", "Date"], [["", "", ""]],
                       [0.4 * width, 0.4 * width, 0.2 * width]))

    runs = [c for c in rig_runs if c.confirmations]
    if runs:
        story.append(CondPageBreak(60 * mm))
        story.append(Paragraph("Who confirmed what", H2))
        for c in runs:
            story.append(Paragraph(escape(f"{c.cue.number} {c.cue.name} ({c.cue.rig})"),
                                   ParagraphStyle("cueh", parent=BODY, fontName="Helvetica-Bold", spaceBefore=6)))
            story.append(table(["Step", "Acted", "Role", "At", "Checked by", "At"],
                               [[f"{s.step_number or ''} {s.step_key}", s.by or "", s.by_role or "", hhmm(s.at_utc),
                                 s.checked_by or "", hhmm(s.checked_at)] for s in c.confirmations],
                               [w * width for w in (0.36, 0.16, 0.11, 0.1, 0.17, 0.1)]))
    story.append(caution())
    build(doc, story)
