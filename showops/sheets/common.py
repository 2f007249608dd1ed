"""Building blocks shared by every showops PDF (crew sheet, show report, season audit).

Everything here is render-only: it takes plain values and returns reportlab
flowables or a finished PDF; it never queries anything. The look is built for paper
read at arm's length backstage, often under a blue work light, where blue and cyan
ink vanish and red reads as black. So:

- black on white, large type (body 12 pt, headings 18-26 pt), Helvetica only (the
  standard PDF fonts: nothing to embed, output byte-for-byte repeatable);
- a state is always said in words (``OK``, ``CAUTION``, ``DO NOT RUN``); grey tints
  and hatching only repeat what the words say, so a photocopy or a blue light loses
  nothing;
- tick boxes at least 9 mm square, written columns wide enough for initials and a
  time in marker pen.

How to build a report with these pieces (see DEVELOPERS.md "How to add a report"):

1. build a list of flowables with the helpers below (:func:`styles`,
   :func:`caution_block`, :class:`LimitBar`, :func:`limit_table`, :class:`QRCode`,
   :func:`banner`, :class:`TickBox`, :func:`grid_table`, :func:`signoff_table`);
2. put a :class:`FooterContext` marker (``footer.mark(...)``) wherever the footer
   should change (for example at the top of each cue's page);
3. call :func:`build_pdf` with the flowables, the page size, a title and the
   footer's fixed lines. It returns the PDF's bytes.

Output is deterministic: reportlab's ``invariant=1`` and a caller-given
``printed_at`` (never the clock inside this module).
"""

from __future__ import annotations

import io
import math
from dataclasses import dataclass, field
from datetime import datetime
from typing import Any, Iterable, Sequence
from xml.sax.saxutils import escape

from reportlab.lib import colors
from reportlab.lib.enums import TA_CENTER, TA_LEFT
from reportlab.lib.pagesizes import A4, LETTER
from reportlab.lib.styles import ParagraphStyle
from reportlab.lib.units import mm
from reportlab.pdfbase.pdfmetrics import stringWidth
from reportlab.pdfgen import canvas as rl_canvas
from reportlab.platypus import (BaseDocTemplate, CondPageBreak, Flowable, Frame, KeepTogether,
                                PageTemplate, Paragraph, Spacer, Table, TableStyle)

from showops import CAUTION, __version__
from showops.errors import ValidationError

#: Page sizes a sheet may be printed on (``"A4"`` is the default everywhere).
PAGE_SIZES: dict[str, tuple[float, float]] = {"A4": A4, "Letter": LETTER}

MARGIN = 12 * mm
#: room above the text frame for the running head of continued pages
TOP_MARGIN = 17 * mm
FOOTER_HEIGHT = 17 * mm

INK = colors.black
PAPER = colors.white
#: Tints that repeat, never replace, what a word says (a blue light turns them grey).
TINT_CAUTION = colors.Color(0.82, 0.82, 0.82)
TINT_HEAD = colors.Color(0.88, 0.88, 0.88)
TINT_ROW = colors.Color(0.95, 0.95, 0.95)

#: The words each verdict is shown with: never colour alone.
VERDICT_WORDS: dict[str, str] = {"ok": "OK", "caution": "CAUTION", "blocked": "DO NOT RUN"}


def page_size(name: str) -> tuple[float, float]:
    """Return the (width, height) in points of a page size named ``"A4"`` or ``"Letter"``.

    Case does not matter; ``"US Letter"`` is accepted for Letter.

    :raises ValidationError: for any other name.
    """
    key = name.strip().lower().replace("us ", "").replace("us-", "")
    for known, size in PAGE_SIZES.items():
        if known.lower() == key:
            return size
    raise ValidationError("pagesize", f"expected A4 or Letter, got {name!r}")


# --------------------------------------------------------------------------- text


def styles() -> dict[str, ParagraphStyle]:
    """Return the paragraph styles every showops PDF uses, by name.

    ``body`` (12 pt), ``small`` (10 pt, footers and versions only), ``h1`` (26 pt),
    ``h2`` (18 pt), ``h3`` (14 pt), ``cell`` and ``cell_bold`` (12 pt table text),
    ``banner`` (30 pt white on black), ``caution`` (11 pt, for the caution block).
    """
    base = ParagraphStyle("body", fontName="Helvetica", fontSize=12, leading=15, textColor=INK,
                          alignment=TA_LEFT, spaceAfter=3)
    out = {
        "body": base,
        "body_bold": ParagraphStyle("body_bold", parent=base, fontName="Helvetica-Bold"),
        "small": ParagraphStyle("small", parent=base, fontSize=10, leading=12, spaceAfter=0),
        "h1": ParagraphStyle("h1", parent=base, fontName="Helvetica-Bold", fontSize=26, leading=30,
                             spaceAfter=6),
        "h2": ParagraphStyle("h2", parent=base, fontName="Helvetica-Bold", fontSize=18, leading=22,
                             spaceBefore=8, spaceAfter=4),
        "h3": ParagraphStyle("h3", parent=base, fontName="Helvetica-Bold", fontSize=14, leading=17,
                             spaceBefore=6, spaceAfter=3),
        "cell": ParagraphStyle("cell", parent=base, fontSize=12, leading=14.5, spaceAfter=0),
        "cell_bold": ParagraphStyle("cell_bold", parent=base, fontName="Helvetica-Bold", fontSize=12,
                                    leading=14.5, spaceAfter=0),
        "cell_small": ParagraphStyle("cell_small", parent=base, fontSize=10.5, leading=12.5, spaceAfter=0),
        "banner": ParagraphStyle("banner", parent=base, fontName="Helvetica-Bold", fontSize=30, leading=34,
                                 textColor=PAPER, alignment=TA_CENTER, spaceAfter=0),
        "banner_sub": ParagraphStyle("banner_sub", parent=base, fontName="Helvetica-Bold", fontSize=13,
                                     leading=16, textColor=PAPER, alignment=TA_CENTER, spaceAfter=0),
        "caution": ParagraphStyle("caution", parent=base, fontSize=11, leading=13.5, spaceAfter=0),
    }
    out["bullet"] = ParagraphStyle("bullet", parent=base, leftIndent=14, firstLineIndent=-10)
    out["banner_dark"] = ParagraphStyle("banner_dark", parent=out["banner"], textColor=INK)
    out["banner_sub_dark"] = ParagraphStyle("banner_sub_dark", parent=out["banner_sub"], textColor=INK)
    out["cell_inverse"] = ParagraphStyle("cell_inverse", parent=out["cell_bold"], textColor=PAPER)
    return out


STYLES = styles()


def text(value: Any) -> str:
    """Return ``value`` as text safe inside a reportlab Paragraph (XML-escaped; None is empty)."""
    return "" if value is None else escape(str(value))


class SheetParagraph(Paragraph):
    """A Paragraph that shares its parse and its line breaks with every equal paragraph.

    A crew sheet prints the same texts many times (a procedure's steps on every cue
    that uses it, again on the role pages), and a table wraps each cell to measure it,
    again to draw it and again on every page it is split over. The parse depends only
    on the text and the style, the line breaks also on the width, so both are kept in
    small bounded caches. Read-only use of the cached fragments and lines is what
    reportlab does with them when it draws (tests compare a cached and an uncached
    render byte for byte).
    """

    _parsed: dict[tuple, tuple] = {}
    _broken: dict[tuple, tuple] = {}
    #: entries kept in each cache before it is emptied (a few sheets' worth)
    CACHE_SIZE = 4096

    def __init__(self, text, style=None, bulletText=None, frags=None, **kwargs):  # noqa: N803
        cacheable = (frags is None and bulletText is None and not kwargs and style is not None
                     and STYLES.get(style.name) is style)
        self._key = (text, style.name) if cacheable else None
        hit = self._parsed.get(self._key) if cacheable else None
        if hit is None:
            super().__init__(text, style, bulletText=bulletText, frags=frags, **kwargs)
            if cacheable:
                if len(self._parsed) >= self.CACHE_SIZE:
                    self._parsed.clear()
                self._parsed[self._key] = (self.style, self.text, self.frags, self.bulletText)
        else:
            self.caseSensitive = 1
            self.encoding = "utf8"
            self.style, self.text, self.frags, self.bulletText = hit
            self.debug = 0

    def wrap(self, availWidth, availHeight):  # noqa: N803 (reportlab's names)
        if self._key is None:
            return super().wrap(availWidth, availHeight)
        key = (self._key, availWidth)
        hit = self._broken.get(key)
        if hit is not None:
            self.blPara, self.height, self._wrapWidths = hit
            self.width = availWidth
            return availWidth, self.height
        result = super().wrap(availWidth, availHeight)
        if availWidth >= 1e-8:
            if len(self._broken) >= self.CACHE_SIZE:
                self._broken.clear()
            self._broken[key] = (self.blPara, self.height, self._wrapWidths)
        return result

    @classmethod
    def clear_caches(cls) -> None:
        """Forget every cached parse and line break (tests use it to compare renders)."""
        cls._parsed.clear()
        cls._broken.clear()


class Bold(str):
    """A table cell's text to be set in bold (see :func:`grid_table`)."""


class Inverse(Bold):
    """A table cell's text in bold white, for a cell with a black background."""


def para(value: Any, style: str = "body", *, markup: bool = False) -> Paragraph:
    """Return a Paragraph of ``value`` in the named style; ``markup`` keeps reportlab tags."""
    return SheetParagraph(str(value) if markup else text(value), STYLES[style])


def short_hash(version: str | None, length: int = 10) -> str:
    """Return the first ``length`` hex digits of a SHA-256 version (``"none"`` when missing)."""
    return version[:length] if version else "none"


def format_figure(value: float, unit: str) -> str:
    """Return a computed figure for a sheet: whole numbers for N, N·m and kg, 2 decimals otherwise."""
    if value is None or not math.isfinite(value):
        return "n/a"
    if unit:
        digits = 0 if abs(value) >= 10 or abs(value - round(value)) < 1e-9 else 1
        return f"{value:,.{digits}f} {unit}"
    return f"{value:.2f}"


# --------------------------------------------------------------------------- flowables


class TickBox(Flowable):
    """An empty square to tick by hand (default 9 mm, a heavy outline)."""

    def __init__(self, size: float = 9 * mm, line_width: float = 1.6):
        super().__init__()
        self.size = size
        self.line_width = line_width
        self.width = self.height = size

    def wrap(self, avail_width, avail_height):
        return self.size, self.size

    def draw(self):
        self.canv.setLineWidth(self.line_width)
        self.canv.setStrokeColor(INK)
        self.canv.rect(0, 0, self.size, self.size, stroke=1, fill=0)


class LimitBar(Flowable):
    """A bar showing one figure against its limit, so a glance shows the margin.

    The frame is the scale from 0 to ``scale_max`` times the limit; a heavy upright
    line marks the limit itself (100 %). The fill is solid for ``ok``, hatched for
    ``caution`` and solid black running past the limit line for ``blocked``; a figure
    beyond the scale ends in an open arrow. The level is also printed in words by
    :func:`limit_table`, so the bar never carries the meaning alone.

    :param usage: figure / limit (1.0 = at the limit); inf or NaN draws a full bar.
    """

    def __init__(self, usage: float, level: str = "ok", width: float = 40 * mm, height: float = 6 * mm,
                 scale_max: float = 1.25):
        super().__init__()
        self.usage = usage
        self.level = level
        self.width = width
        self.height = height
        self.scale_max = scale_max

    #: how far the limit line stands above and below the bar
    PROUD = 1.2 * mm

    def wrap(self, avail_width, avail_height):
        return self.width, self.height + 2 * self.PROUD

    @property
    def shown_usage(self) -> float:
        """The usage drawn: NaN, inf or a non-number count as over the scale; below 0 as 0."""
        usage = self.usage
        if isinstance(usage, bool) or not isinstance(usage, (int, float)) or not math.isfinite(usage):
            return self.scale_max * 2
        return max(float(usage), 0.0)

    @property
    def fill_width(self) -> float:
        """The length of the filled part of the bar (points)."""
        return min(self.shown_usage, self.scale_max) / self.scale_max * self.width

    @property
    def limit_x(self) -> float:
        """Where the limit line stands along the bar (points)."""
        return self.width / self.scale_max

    def draw(self):
        c = self.canv
        c.translate(0, self.PROUD)
        w, h, smax = self.width, self.height, self.scale_max
        usage = self.shown_usage
        filled = self.fill_width
        limit_x = self.limit_x
        c.saveState()
        c.setStrokeColor(INK)
        c.setLineWidth(0.8)
        c.setFillColor(PAPER)
        c.rect(0, 0, w, h, stroke=1, fill=1)
        if filled > 0:
            if self.level == "caution":
                c.setFillColor(TINT_CAUTION)
                c.rect(0, 0, filled, h, stroke=0, fill=1)
                path = c.beginPath()
                path.rect(0, 0, filled, h)
                c.clipPath(path, stroke=0, fill=0)
                c.setLineWidth(1.2)
                step = 2.2 * mm
                x = -h
                while x < filled:
                    c.line(x, 0, x + h, h)
                    x += step
                c.restoreState()
                c.saveState()
            else:
                c.setFillColor(colors.Color(0.35, 0.35, 0.35) if self.level == "ok" else INK)
                c.rect(0, 0, filled, h, stroke=0, fill=1)
        c.setStrokeColor(INK)
        c.setLineWidth(0.8)
        c.rect(0, 0, w, h, stroke=1, fill=0)
        # the limit: a heavy line standing proud of the bar, haloed so it shows on black
        c.setStrokeColor(PAPER)
        c.setLineWidth(4.4)
        c.line(limit_x, 0.6, limit_x, h - 0.6)
        c.setStrokeColor(INK)
        c.setLineWidth(2.4)
        c.line(limit_x, -self.PROUD, limit_x, h + self.PROUD)
        if usage > smax:
            c.setFillColor(PAPER)
            c.setStrokeColor(PAPER)
            c.setLineWidth(1.6)
            mid = h / 2
            c.line(w - 3.5 * mm, mid, w - 1 * mm, mid)
            c.line(w - 2.5 * mm, mid + 1.5 * mm, w - 1 * mm, mid)
            c.line(w - 2.5 * mm, mid - 1.5 * mm, w - 1 * mm, mid)
        c.restoreState()


class QRCode(Flowable):
    """A QR code (segno) drawn as vector squares, with a 4-module quiet zone.

    :param data: the text to encode (a URL).
    :param size: the printed width and height including the quiet zone.
    :param error: segno's error-correction level (``"m"``: about 15 % of the code
        may be scuffed or folded and still read).
    """

    def __init__(self, data: str, size: float = 30 * mm, error: str = "m"):
        super().__init__()
        import segno

        self.data = data
        self.qr = segno.make(data, error=error, micro=False)
        self.size = size
        self.width = self.height = size

    def wrap(self, avail_width, avail_height):
        return self.size, self.size

    def draw(self):
        matrix = self.qr.matrix
        border = 4
        n = len(matrix) + 2 * border
        module = self.size / n
        c = self.canv
        c.saveState()
        c.setFillColor(PAPER)
        c.rect(0, 0, self.size, self.size, stroke=0, fill=1)
        c.setFillColor(INK)
        for row_index, row in enumerate(matrix):
            y = self.size - (row_index + border + 1) * module
            col = 0
            while col < len(row):
                if row[col]:
                    start = col
                    while col < len(row) and row[col]:
                        col += 1
                    c.rect((start + border) * module, y, (col - start) * module, module, stroke=0, fill=1)
                else:
                    col += 1
        c.restoreState()


def banner(words: str, subtitle: str | None = None, *, width: float | None = None,
           solid: bool = True) -> Table:
    """Return a full-width banner: ``words`` in 30 pt capitals.

    ``solid`` gives white on black (for DO NOT RUN); otherwise black on a light grey
    tint inside a heavy double border (for CAUTION).
    """
    rows = [[para(words, "banner" if solid else "banner_dark")]]
    if subtitle:
        rows.append([para(subtitle, "banner_sub" if solid else "banner_sub_dark")])
    table = Table(rows, colWidths=[width] if width else None, hAlign="LEFT")
    cmds = [("TOPPADDING", (0, 0), (-1, -1), 5), ("BOTTOMPADDING", (0, 0), (-1, -1), 7)]
    if solid:
        cmds += [("BACKGROUND", (0, 0), (-1, -1), INK)]
    else:
        cmds += [("BACKGROUND", (0, 0), (-1, -1), TINT_CAUTION), ("BOX", (0, 0), (-1, -1), 3, INK),
                 ("INNERGRID", (0, 0), (-1, -1), 0, TINT_CAUTION)]
    table.setStyle(TableStyle(cmds))
    return table


def caution_block(width: float, caution: str = CAUTION) -> Table:
    """Return the caution (``showops.CAUTION``) in a boxed, labelled block.

    Every page that shows a computed load carries it.
    """
    table = Table([[para("CAUTION", "cell_bold"), para(caution, "caution")]],
                  colWidths=[26 * mm, width - 26 * mm], hAlign="LEFT")
    table.setStyle(TableStyle([("BOX", (0, 0), (-1, -1), 1.5, INK), ("VALIGN", (0, 0), (-1, -1), "TOP"),
                               ("LINEAFTER", (0, 0), (0, 0), 0.8, INK),
                               ("TOPPADDING", (0, 0), (-1, -1), 4), ("BOTTOMPADDING", (0, 0), (-1, -1), 5)]))
    return table


def grid_table(rows: Sequence[Sequence[Any]], col_widths: Sequence[float], *, header: bool = True,
               repeat_header: bool = True, extra: Iterable[tuple] = (), zebra: bool = False) -> Table:
    """Return a ruled table: strings become 12 pt paragraphs, flowables pass through.

    The first row is a bold header on a light tint (repeated on every page the table
    spans) unless ``header`` is false. ``extra`` adds TableStyle commands.
    """
    body = []
    fonts: list[tuple] = []
    for i, row in enumerate(rows):
        cells = []
        for j, cell in enumerate(row):
            if isinstance(cell, (int, float)):
                cell = str(cell)
            if cell is None or cell == "":
                cells.append("")
            elif isinstance(cell, str):
                bold = isinstance(cell, Bold) or (header and i == 0)
                font = "Helvetica-Bold" if bold else "Helvetica"
                room = col_widths[j] - 8 if j < len(col_widths) else 0
                if "\n" not in cell and stringWidth(cell, font, 12) <= room:
                    # short text is drawn as it is: no paragraph to parse and wrap
                    cells.append(str(cell))
                    if bold:
                        fonts.append(("FONTNAME", (j, i), (j, i), font))
                elif isinstance(cell, Inverse):
                    cells.append(inverse_cell(cell))
                else:
                    cells.append(para(cell, "cell_bold" if bold else "cell"))
            else:
                cells.append(cell)
        body.append(cells)
    table = Table(body, colWidths=list(col_widths), repeatRows=1 if header and repeat_header else 0,
                  hAlign="LEFT")
    cmds: list[tuple] = [
        ("FONT", (0, 0), (-1, -1), "Helvetica", 12, 14.5),
        ("TOPPADDING", (0, 0), (-1, -1), 4),
        ("GRID", (0, 0), (-1, -1), 0.8, INK),
        ("BOX", (0, 0), (-1, -1), 1.6, INK),
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("TOPPADDING", (0, 0), (-1, -1), 4), ("BOTTOMPADDING", (0, 0), (-1, -1), 5),
        ("LEFTPADDING", (0, 0), (-1, -1), 4), ("RIGHTPADDING", (0, 0), (-1, -1), 4),
    ]
    if header:
        cmds += [("BACKGROUND", (0, 0), (-1, 0), TINT_HEAD), ("LINEBELOW", (0, 0), (-1, 0), 1.6, INK)]
    if zebra:
        start = 1 if header else 0
        for r in range(start, len(body)):
            if (r - start) % 2 == 1:
                cmds.append(("BACKGROUND", (0, r), (-1, r), TINT_ROW))
    cmds += fonts
    cmds += list(extra)
    table.setStyle(TableStyle(cmds))
    return table


def verdict_cell(verdict: str) -> Paragraph:
    """Return the verdict in words (OK / CAUTION / DO NOT RUN), bold."""
    return para(VERDICT_WORDS.get(verdict, verdict.upper()), "cell_bold")


def verdict_style(col: int, row: int, verdict: str) -> list[tuple]:
    """Return TableStyle commands that repeat a verdict cell's words with a tint.

    ``blocked`` is white on black; ``caution`` a grey tint with a heavy box; ``ok`` plain.
    """
    if verdict == "blocked":
        return [("BACKGROUND", (col, row), (col, row), INK), ("TEXTCOLOR", (col, row), (col, row), PAPER)]
    if verdict == "caution":
        return [("BACKGROUND", (col, row), (col, row), TINT_CAUTION), ("BOX", (col, row), (col, row), 2.4, INK)]
    return []


def inverse_cell(value: str) -> Paragraph:
    """Return bold white-on-nothing text, for a cell whose background :func:`verdict_style` blackens."""
    return para(value, "cell_inverse")


def verdict_paragraph(verdict: str) -> Bold:
    """Return the verdict's words as bold cell text (its :func:`verdict_style` sets the colours)."""
    words = VERDICT_WORDS.get(verdict, verdict.upper())
    return Inverse(words) if verdict == "blocked" else Bold(words)


def limit_table(checks: Sequence[dict[str, Any]], width: float) -> Table:
    """Return the computed figures against their limits, a :class:`LimitBar` for each.

    :param checks: the rig solver's ``checks`` (dicts with ``label``, ``value``,
        ``allowed``, ``unit``, ``usage``, ``level``). A check with no unit is a
        stability margin (``value`` must be at least ``allowed``); it is shown as
        "margin 2.35, needs at least 1.00" and its bar shows ``usage`` = 1 / margin.
    """
    bar_w = 40 * mm
    widths = [width - (25 + 27 + 15 + 31) * mm - bar_w - 2, 25 * mm, 27 * mm, 15 * mm, bar_w + 2, 31 * mm]
    rows: list[list[Any]] = [["Figure (tonight)", "Value", "Limit", "Use", "Against limit |", "Level"]]
    extra: list[tuple] = []
    for i, check in enumerate(checks, start=1):
        unit = check.get("unit") or ""
        usage = check.get("usage")
        level = check.get("level", "ok")
        if unit:
            value, allowed = format_figure(check["value"], unit), format_figure(check["allowed"], unit)
        else:
            value = f"margin {format_figure(check['value'], '')}"
            allowed = f"at least {format_figure(check['allowed'], '')}"
        use = f"{100 * usage:.0f}%" if isinstance(usage, (int, float)) and math.isfinite(usage) else "over"
        rows.append([str(check.get("label", check.get("limit", ""))), Bold(value), allowed, Bold(use),
                     LimitBar(usage, level, width=bar_w), verdict_paragraph(level)])
        extra += verdict_style(5, i, level)
    extra.append(("VALIGN", (4, 1), (4, -1), "MIDDLE"))
    return grid_table(rows, widths, extra=extra)


def signoff_table(roles: Sequence[tuple[str, str | None]], width: float) -> Table:
    """Return sign-off lines: for each (role, name) a row to print a name, sign and write the time."""
    rows: list[list[Any]] = [["Role", "Name", "Signature", "Time"]]
    for role, name in roles:
        rows.append([Bold(role), name or "", "", ""])
    widths = [42 * mm, 50 * mm, width - 42 * mm - 50 * mm - 26 * mm, 26 * mm]
    table = grid_table(rows, widths, extra=[("ROWBACKGROUNDS", (0, 1), (-1, -1), [PAPER])])
    for r in range(1, len(rows)):
        table._argH[r] = 14 * mm
    return table


def section(title: str, flowables: Sequence[Flowable], *, keep: bool = True, min_space: float = 40 * mm) -> list:
    """Return a heading and its flowables, kept on one page where they fit."""
    items = [para(title, "h2"), *flowables]
    if keep:
        return [CondPageBreak(min_space), KeepTogether(items)]
    return [CondPageBreak(min_space), *items]


# --------------------------------------------------------------------------- footer and document


@dataclass
class FooterState:
    """What the footer shows for the page being laid out; changed by :class:`FooterContext`."""

    lines: tuple[str, ...] = ()
    #: a running head for the part's second and later pages ("CUE 5 ... continued")
    head: str | None = None
    #: whether the part's marker was drawn on the page being laid out
    fresh: bool = False


class FooterContext(Flowable):
    """An invisible marker: from the page it lands on, the footer shows ``lines``.

    Put one at the start of each part whose footer differs (a cue's page names its rig
    and procedure versions). It takes no space. ``head``, when given, is printed in
    bold at the top of the part's second and later pages, so a loose page still says
    which cue it belongs to (and DO NOT RUN when the cue is blocked).
    """

    def __init__(self, state: FooterState, lines: Sequence[str], head: str | None = None):
        super().__init__()
        self.state = state
        self.lines = tuple(lines)
        self.head = head
        self.width = self.height = 0

    def wrap(self, avail_width, avail_height):
        return 0, 0

    def draw(self):
        self.state.lines = self.lines
        self.state.head = self.head
        self.state.fresh = True


class _NumberedCanvas(rl_canvas.Canvas):
    """A canvas that draws each page's footer at the end, when the page count is known."""

    def __init__(self, *args, footer: "Footer", **kwargs):
        super().__init__(*args, **kwargs)
        self._footer = footer
        self._pages: list[dict] = []

    def showPage(self):  # noqa: N802 (reportlab's name)
        self._pages.append(dict(self.__dict__))
        self._startPage()

    def save(self):
        total = len(self._pages)
        for number, page in enumerate(self._pages, start=1):
            self.__dict__.update(page)
            self._footer.draw(self, number, total)
            super().showPage()
        super().save()


@dataclass
class Footer:
    """The footer of every page: fixed lines, the page's context lines, the time printed, page N of M."""

    fixed: tuple[str, ...]
    printed_at: datetime
    state: FooterState = field(default_factory=FooterState)
    per_page: list[tuple[tuple[str, ...], str | None]] = field(default_factory=list)

    def capture(self, canv, doc) -> None:
        """Record the context of the page just finished (a PageTemplate ``onPageEnd``)."""
        head = None if self.state.fresh else self.state.head
        self.per_page.append((self.state.lines, head))
        self.state.fresh = False

    def draw(self, canv, number: int, total: int) -> None:
        width, height = canv._pagesize
        lines = list(self.fixed)
        context, head = self.per_page[number - 1] if number - 1 < len(self.per_page) else ((), None)
        lines += list(context)
        canv.saveState()
        if head:
            canv.setFillColor(INK)
            size = 11
            while size > 7 and canv.stringWidth(head, "Helvetica-Bold", size) > width - 2 * MARGIN:
                size -= 0.5
            canv.setFont("Helvetica-Bold", size)
            canv.drawString(MARGIN, height - TOP_MARGIN + 5 * mm, head)
        canv.setStrokeColor(INK)
        canv.setLineWidth(1)
        top = MARGIN + FOOTER_HEIGHT - 4 * mm
        canv.line(MARGIN, top, width - MARGIN, top)
        canv.setFillColor(INK)
        lines = lines[:2] + ["Printed " + format_printed(self.printed_at)]
        page_label = f"Page {number} of {total}"
        canv.setFont("Helvetica-Bold", 11)
        canv.drawRightString(width - MARGIN, top - 12, page_label)
        room = width - 2 * MARGIN - canv.stringWidth(page_label, "Helvetica-Bold", 11) - 4 * mm
        y = top - 11
        for i, line in enumerate(lines):
            font = "Helvetica-Bold" if i == 0 else "Helvetica"
            size = 9.5
            while size > 6.5 and canv.stringWidth(line, font, size) > (room if i == 0 else width - 2 * MARGIN):
                size -= 0.5
            canv.setFont(font, size)
            canv.drawString(MARGIN, y, line)
            y -= 11.5
        canv.restoreState()


def format_printed(moment: datetime) -> str:
    """Return a printed-at time as ``YYYY-MM-DD HH:MM`` plus the UTC offset when known."""
    out = moment.strftime("%Y-%m-%d %H:%M")
    if moment.tzinfo is not None:
        offset = moment.strftime("%z")
        out += " UTC" if offset in ("+0000", "") else f" {offset[:3]}:{offset[3:]}"
    return out


def build_pdf(flowables: Sequence[Flowable], *, pagesize: tuple[float, float], title: str,
              footer: Footer, subject: str = "", author: str = "showops") -> bytes:
    """Lay out ``flowables`` on pages of ``pagesize`` with ``footer`` and return the PDF bytes.

    The PDF is deterministic for the same input (reportlab ``invariant=1``; the time
    printed comes from ``footer.printed_at``).
    """
    buffer = io.BytesIO()
    width, height = pagesize
    doc = BaseDocTemplate(buffer, pagesize=pagesize, leftMargin=MARGIN, rightMargin=MARGIN,
                          topMargin=TOP_MARGIN, bottomMargin=MARGIN + FOOTER_HEIGHT, title=title,
                          author=author, subject=subject, creator=f"showops {__version__}",
                          invariant=1)
    frame = Frame(MARGIN, MARGIN + FOOTER_HEIGHT, width - 2 * MARGIN, height - MARGIN - TOP_MARGIN - FOOTER_HEIGHT,
                  leftPadding=0, rightPadding=0, topPadding=0, bottomPadding=0, id="body")
    doc.addPageTemplates([PageTemplate(id="sheet", frames=[frame], onPageEnd=footer.capture)])
    doc.build(list(flowables), canvasmaker=lambda *a, **k: _NumberedCanvas(*a, footer=footer, **k))
    return buffer.getvalue()


def content_width(pagesize: tuple[float, float]) -> float:
    """Return the width of the text frame on a page of ``pagesize``."""
    return pagesize[0] - 2 * MARGIN


__all__ = [
    "PAGE_SIZES", "VERDICT_WORDS", "STYLES", "TickBox", "LimitBar", "QRCode", "Footer", "FooterState",
    "FooterContext", "banner", "build_pdf", "caution_block", "content_width", "format_figure",
    "format_printed", "grid_table", "limit_table", "page_size", "para", "section", "short_hash",
    "signoff_table", "styles", "text", "verdict_cell", "verdict_paragraph", "verdict_style", "Spacer",
]
