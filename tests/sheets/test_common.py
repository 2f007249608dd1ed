"""The shared sheet pieces: QR codes drawn as segno encodes them, limit bars, page sizes, figures."""

from __future__ import annotations

import io
import math
import shutil
import subprocess

import pytest
from PIL import Image
from reportlab.lib.units import mm
from reportlab.pdfgen.canvas import Canvas

from showops.errors import ValidationError
from showops.sheets.common import (LimitBar, QRCode, format_figure, format_printed, page_size,
                                   short_hash)


def rasterise(pdf: bytes, dpi: int, tmp_path) -> Image.Image:
    """Render page 1 with poppler's pdftoppm (an outside renderer) to a greyscale image."""
    exe = shutil.which("pdftoppm")
    assert exe, "pdftoppm (poppler-utils) is needed: apt-get install -y poppler-utils"
    src = tmp_path / "page.pdf"
    src.write_bytes(pdf)
    subprocess.run([exe, "-gray", "-r", str(dpi), "-png", "-singlefile", str(src), str(tmp_path / "page")],
                   check=True, timeout=60)
    return Image.open(tmp_path / "page.png").convert("L")


@pytest.mark.parametrize("url", [
    "http://10.0.0.5:8150/live/4/cue/17",
    "http://showops.local:8150/live/123/cue/4567",
])
def test_qr_code_draws_every_module_segno_encodes(url, tmp_path):
    size = 40 * mm
    flowable = QRCode(url, size=size)
    buffer = io.BytesIO()
    canvas = Canvas(buffer, pagesize=(size, size), invariant=1)
    flowable.wrapOn(canvas, size, size)
    flowable.drawOn(canvas, 0, 0)
    canvas.save()
    dpi = 300
    image = rasterise(buffer.getvalue(), dpi, tmp_path)
    matrix = flowable.qr.matrix
    modules = len(matrix) + 8  # segno's matrix plus a 4-module quiet zone each side (ISO/IEC 18004)
    pixel = image.width / modules
    assert pixel > 3  # enough pixels per module to sample its centre
    wrong = 0
    for row in range(modules):
        for col in range(modules):
            inside = 4 <= row < modules - 4 and 4 <= col < modules - 4
            dark = bool(matrix[row - 4][col - 4]) if inside else False
            value = image.getpixel((int((col + 0.5) * pixel), int((row + 0.5) * pixel)))
            wrong += (value < 128) != dark
    assert wrong == 0


@pytest.mark.parametrize("usage, fill, note", [
    (0.0, 0.0, "nothing used"),
    (0.5, 0.4, "half the limit: 0.5 / 1.25 of the bar"),
    (1.0, 0.8, "at the limit: the fill reaches the limit line"),
    (1.25, 1.0, "the end of the scale"),
    (3.0, 1.0, "past the scale: full bar (an arrow says so)"),
    (math.inf, 1.0, "an infinite usage (a tipping margin of 0)"),
    (math.nan, 1.0, "not a number is never drawn as safe"),
    (-0.2, 0.0, "negative usage is drawn as none"),
])
def test_limit_bar_geometry(usage, fill, note):
    bar = LimitBar(usage, "ok", width=100.0)
    assert bar.fill_width == pytest.approx(100.0 * fill), note
    assert bar.limit_x == pytest.approx(80.0)


@pytest.mark.parametrize("name, expected", [
    ("A4", (595.2756, 841.8898)),       # ISO 216: 210 x 297 mm
    ("a4", (595.2756, 841.8898)),
    ("Letter", (612.0, 792.0)),         # ANSI: 8.5 x 11 in
    ("US Letter", (612.0, 792.0)),
])
def test_page_size(name, expected):
    assert page_size(name) == pytest.approx(expected, abs=0.001)


@pytest.mark.parametrize("name", ["A3", "", "legal"])
def test_page_size_rejects_others(name):
    with pytest.raises(ValidationError, match="expected A4 or Letter"):
        page_size(name)


@pytest.mark.parametrize("value, unit, expected", [
    (147.2, "N", "147 N"), (1596.4, "N", "1,596 N"), (4.5, "kg", "4.5 kg"), (1.0, "riders", "1 riders"),
    (0.0, "N·m", "0 N·m"), (1.5716, "", "1.57"), (math.nan, "N", "n/a"),
])
def test_format_figure(value, unit, expected):
    assert format_figure(value, unit) == expected


def test_short_hash_and_printed_time():
    from datetime import datetime, timedelta, timezone
    assert short_hash("0123456789abcdef") == "0123456789"
    assert short_hash(None) == "none"
    assert format_printed(datetime(2026, 12, 11, 17, 45, tzinfo=timezone.utc)) == "2026-12-11 17:45 UTC"
    assert format_printed(datetime(2026, 12, 11, 17, 45, tzinfo=timezone(timedelta(hours=1)))) \
        == "2026-12-11 17:45 +01:00"
    assert format_printed(datetime(2026, 12, 11, 17, 45)) == "2026-12-11 17:45"
