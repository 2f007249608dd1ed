"""The season audit as a PDF: counts, the trend chart, load margins, actions and the
risk matrix with each record placed in it (reportlab platypus and reportlab's own
graphics; render only, the figures come from ``audit.season.SeasonAudit``).
"""

from __future__ import annotations

from xml.sax.saxutils import escape

from reportlab.graphics.charts.legends import Legend
from reportlab.graphics.charts.lineplots import LinePlot
from reportlab.graphics.shapes import Drawing, Line, Rect, String
from reportlab.lib import colors
from reportlab.lib.units import mm
from reportlab.platypus import CondPageBreak, Paragraph, Spacer

from showops.audit.records import KINDS
from showops.audit.risk import LIKELIHOODS, MATRIX, MATRIX_EDITION, REGION_MEANING, SEVERITIES
from showops.audit.season import SeasonAudit, _kind_title
from showops.sheets.report import (BODY, H2, MARGIN, PAGE, SMALL, TITLE, build, caution, document, p, table)

#: Region shading on the matrix (this project's own: dark, mid and light with the
#: region's name written in each cell, so it reads in greyscale too).
REGION_FILL = {"intolerable": colors.HexColor("#6b2d2a"), "tolerable": colors.HexColor("#c9a55a"),
               "acceptable": colors.HexColor("#dfe6da")}
REGION_INK = {"intolerable": colors.white, "tolerable": colors.black, "acceptable": colors.black}
DEV_LINE = colors.HexColor("#2f4f6f")
REC_LINE = colors.HexColor("#b0502a")


def trend_chart(season: SeasonAudit, width: float, height: float = 170) -> Drawing:
    """Deviations and records per performance, as two lines over the run."""
    d = Drawing(width, height)
    points_dev = [(i + 1, dv) for i, (_, dv, _) in enumerate(season.trend)]
    points_rec = [(i + 1, rc) for i, (_, _, rc) in enumerate(season.trend)]
    if not points_dev:
        d.add(String(10, height / 2, "No performances in this period.", fontName="Helvetica", fontSize=9))
        return d
    lp = LinePlot()
    lp.x, lp.y, lp.width, lp.height = 36, 34, width - 50, height - 56
    lp.data = [points_dev, points_rec]
    lp.lines[0].strokeColor, lp.lines[1].strokeColor = DEV_LINE, REC_LINE
    lp.lines[0].strokeWidth, lp.lines[1].strokeWidth = 1.4, 1.4
    lp.lines[1].strokeDashArray = (3, 2)
    n = len(points_dev)
    lp.xValueAxis.valueMin, lp.xValueAxis.valueMax = 0.5, n + 0.5
    step = max(1, round(n / 10))
    lp.xValueAxis.valueSteps = list(range(1, n + 1, step))
    names = season.trend_labels
    lp.xValueAxis.labelTextFormat = lambda v: names[int(v) - 1] if 1 <= v <= n else ""
    lp.xValueAxis.labels.fontSize = 7
    lp.xValueAxis.labels.angle = 30 if n > 12 else 0
    lp.xValueAxis.labels.dy = -4
    top = max(max(v for _, v in points_dev), max(v for _, v in points_rec), 1)
    lp.yValueAxis.valueMin, lp.yValueAxis.valueMax = 0, top + max(1, top // 8)
    lp.yValueAxis.labels.fontSize = 7
    if n <= 40:
        from reportlab.graphics.widgets.markers import makeMarker
        lp.lines[0].symbol = makeMarker("FilledCircle", size=3)
        lp.lines[1].symbol = makeMarker("FilledSquare", size=3)
    d.add(lp)
    legend = Legend()
    legend.x, legend.y = 40, height - 6
    legend.fontSize, legend.columnMaximum, legend.dx, legend.dy = 8, 1, 14, 6
    legend.colorNamePairs = [(DEV_LINE, "deviations found in the log"), (REC_LINE, "records reported")]
    legend.deltax = 170
    d.add(legend)
    d.add(String(36, 4, "performances in order (month-day)", fontName="Helvetica", fontSize=7))
    return d


def matrix_drawing(season: SeasonAudit, width: float) -> Drawing:
    """The 5x5 risk matrix, each cell shaded by its region and holding its records."""
    label_w, head_h = 110, 30
    cell_w = (width - label_w) / 5
    cell_h = 38
    top = 5 * cell_h
    d = Drawing(width, top + head_h)
    for j, (letter, (name, _)) in enumerate(SEVERITIES.items()):
        x = label_w + j * cell_w
        d.add(String(x + cell_w / 2, top + 10, f"{letter} {name}", fontName="Helvetica-Bold", fontSize=7.5,
                     textAnchor="middle"))
    for i, (lik, (name, _)) in enumerate(LIKELIHOODS.items()):
        y = top - (i + 1) * cell_h
        d.add(String(4, y + cell_h / 2 - 3, f"{lik} {name}", fontName="Helvetica-Bold", fontSize=7.5))
        for j, letter in enumerate(SEVERITIES):
            cell = f"{lik}{letter}"
            region = MATRIX[cell]
            x = label_w + j * cell_w
            d.add(Rect(x, y, cell_w, cell_h, fillColor=REGION_FILL[region], strokeColor=colors.white,
                       strokeWidth=1.5))
            ink = REGION_INK[region]
            d.add(String(x + 4, y + cell_h - 10, cell, fontName="Helvetica", fontSize=7, fillColor=ink))
            d.add(String(x + cell_w - 4, y + cell_h - 10, region, fontName="Helvetica", fontSize=6,
                         fillColor=ink, textAnchor="end"))
            ids = season.matrix.get(cell, [])
            if ids:
                d.add(String(x + cell_w / 2, y + 12, str(len(ids)), fontName="Helvetica-Bold", fontSize=13,
                             fillColor=ink, textAnchor="middle"))
                shown = ", ".join(f"#{i}" for i in ids[:6]) + (" ..." if len(ids) > 6 else "")
                d.add(String(x + cell_w / 2, y + 3, shown, fontName="Helvetica", fontSize=5.5, fillColor=ink,
                             textAnchor="middle"))
    return d


def usage_bar(usage: float, width: float = 64, height: float = 9) -> Drawing:
    """A bar of figure / limit, with the limit marked (1.0)."""
    d = Drawing(width, height)
    scale = width / 1.25
    d.add(Rect(0, 0, width, height, fillColor=colors.HexColor("#f0eee8"), strokeColor=None))
    fill = REGION_FILL["intolerable"] if usage > 1 else (REGION_FILL["tolerable"] if usage >= 0.9 else DEV_LINE)
    d.add(Rect(0, 1, min(usage, 1.25) * scale, height - 2, fillColor=fill, strokeColor=None))
    d.add(Line(scale, 0, scale, height, strokeColor=colors.black, strokeWidth=1))
    return d


def render_season_audit(season: SeasonAudit, out, *, printed_at: str, title: str = "Season audit") -> None:
    """Write the season audit PDF.

    :param out: a path or a binary file object.
    :param printed_at: ISO time for the footer.
    """
    width = PAGE[0] - 2 * MARGIN
    period = f"{season.date_from.isoformat()} to {season.date_to.isoformat()}"
    doc = document(out, f"{title} {period}",
                   f"{title} · {period} · {len(season.performances)} performances · printed "
                   f"{printed_at[:16].replace('T', ' ')} UTC")
    story = [Paragraph(escape(f"{title}: {period}"), TITLE),
             p(f"{len(season.performances)} performances; {season.total_deviations} deviations found in the log; "
               f"{season.total_records} incidents, near misses and unsafe conditions reported; "
               f"{len(season.open_actions)} corrective actions not yet verified, {len(season.overdue_actions)} "
               "overdue. Every figure is counted from the log and the records.", BODY)]

    story.append(Paragraph("Counts by kind", H2))
    rows = [[_kind_title(k), "record" if k in KINDS else "deviation", str(n)] for k, n in season.by_kind.items()]
    story.append(table(["Kind", "From", "Count"], rows, [0.6 * width, 0.25 * width, 0.15 * width]))

    story.append(Paragraph("Trend per performance", H2))
    story.append(trend_chart(season, width))

    story.append(Paragraph("Counts by rig", H2))
    story.append(table(["Rig", "Deviations", "Records"], [[r, str(d), str(n)] for r, d, n in season.by_rig],
                       [0.6 * width, 0.2 * width, 0.2 * width]))
    story.append(Paragraph("Counts by cue", H2))
    story.append(table(["Cue", "Rig", "Deviations", "Records"],
                       [[c, r, str(d), str(n)] for c, r, d, n in season.by_cue],
                       [0.45 * width, 0.25 * width, 0.15 * width, 0.15 * width]))
    story.append(Paragraph("Counts by step", H2))
    story.append(table(["Rig", "Step", "Deviations", "Records"],
                       [[r, s, str(d), str(n)] for r, s, d, n in season.by_step],
                       [0.2 * width, 0.5 * width, 0.15 * width, 0.15 * width]))

    story.append(CondPageBreak(90 * mm))
    story.append(Paragraph("Load margin of each rig cue across the run", H2))
    story.append(p("For each rig cue and each limit: the closest night (highest figure / limit) and the share of "
                   "the limit left then. From each night's plan for its riders; the bar's mark is the limit.", SMALL))
    if season.margins:
        perf = {x.id: x for x in season.performances}
        rows = []
        for m in sorted(season.margins, key=lambda m: -m.worst_usage):
            night = perf.get(m.worst_performance)
            rows.append([m.cue, m.rig, m.label, f"{100 * m.worst_usage:.0f} %", (f"{100 * m.least_margin:.0f} %" if m.least_margin >= 0 else f"OVER {-100 * m.least_margin:.0f} %"),
                         night.day if night else str(m.worst_performance), usage_bar(m.worst_usage)])
        story.append(table(["Cue", "Rig", "Limit", "Worst", "Left", "Night", ""], rows,
                           [w * width for w in (0.2, 0.13, 0.25, 0.08, 0.08, 0.11, 0.15)]))
    else:
        story.append(p("No night plans with computed loads in this period.", BODY))
    story.append(caution())

    story.append(Paragraph("Corrective actions open or overdue", H2))
    if season.open_actions:
        overdue = {a.id for a in season.overdue_actions}
        story.append(table(["No.", "Record", "Action", "Owner", "Due", "State"],
                           [[str(a.id), f"#{a.record_id}", a.description, a.owner, a.due.isoformat(),
                             a.state + (" OVERDUE" if a.id in overdue else "")] for a in season.open_actions],
                           [w * width for w in (0.06, 0.09, 0.41, 0.16, 0.12, 0.16)]))
    else:
        story.append(p("None: every action is verified.", BODY))

    story.append(Paragraph("Risk matrix", H2))
    story.append(p(f"Each classified record placed at its likelihood and its worst credible severity "
                   f"({MATRIX_EDITION}). " + " ".join(f"{k.capitalize()}: {v}." for k, v in REGION_MEANING.items()),
                   SMALL))
    story.append(Spacer(1, 4))
    story.append(matrix_drawing(season, width))
    placed = [r for r in season.records if r.cell]
    if placed:
        story.append(Spacer(1, 6))
        story.append(table(["No.", "Kind", "Occurred", "Cell", "Region", "Status"],
                           [[f"#{r.id}", KINDS[r.kind][0], r.occurred_at[:16].replace("T", " "), r.cell,
                             MATRIX[r.cell], r.status] for r in placed],
                           [w * width for w in (0.08, 0.2, 0.24, 0.1, 0.2, 0.18)]))
    unplaced = len(season.records) - len(placed)
    if unplaced:
        story.append(p(f"{unplaced} record(s) not yet classified, so not in the matrix.", SMALL))
    build(doc, story)
