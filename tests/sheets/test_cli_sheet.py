"""``showops sheet`` on the demo: the heavy-understudy night's sheet blocks the duet for its load.

The arithmetic of the block is the rig file's (procedures/rigs/orchard-lift.toml): the
understudy and his partner, 88 + 55 kg plus 4 kg allowance each, are 151 kg against a
rated payload of 140 kg (worked by hand in tests/show/test_demo.py).
"""

from __future__ import annotations

import io
import re

import pypdf
import pytest
from click.testing import CliRunner

from showops.cli import main
from showops.show import demo_data as d

DUET = "5"


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    folder = tmp_path_factory.mktemp("sheet") / "instance"
    runner = CliRunner()
    result = runner.invoke(main, ["demo", "--instance", str(folder)])
    assert result.exit_code == 0, result.output
    from showops.store import open_db
    db = open_db(folder)
    performances = [(row["id"], row["starts_at"]) for row in db.query("SELECT id, starts_at FROM performance ORDER BY starts_at")]
    db.conn.close()
    return folder, performances


def sheet_text(runner, folder, ref, out, *extra) -> tuple[list[str], str]:
    result = runner.invoke(main, ["sheet", str(ref), "--out", str(out), "--instance", str(folder),
                                  "--live-host", "10.0.0.5", *extra])
    assert result.exit_code == 0, result.output
    reader = pypdf.PdfReader(io.BytesIO(out.read_bytes()))
    return [re.sub(r"\s+", " ", p.extract_text()) for p in reader.pages], result.output


def run_sheet(runner, folder, ref, out) -> str:
    result = runner.invoke(main, ["sheet", str(ref), "--out", str(out), "--instance", str(folder),
                                  "--live-host", "10.0.0.5"])
    assert result.exit_code == 0, result.output
    return result.output


def duet_text(pdf_path) -> str:
    """The text of the duet's pages only (read page by page until the next cue begins: pypdf is slow)."""
    found = []
    for page in pypdf.PdfReader(pdf_path).pages:
        text = re.sub(r"\s+", " ", page.extract_text())
        if f"Cue {DUET} - rig " in text:
            found.append(text)
        elif found:
            break
    return " ".join(found)


def test_heavy_night_says_do_not_run_for_the_duet_and_no_other_night_blocks_it_for_load(demo, tmp_path):
    folder, performances = demo
    runner = CliRunner()
    heavy_id = performances[d.HEAVY_PERFORMANCE][0]
    over = "riders with allowance 151 kg is 108% of the 140 kg limit (11 kg over)"
    for perf_id, starts_at in performances:
        output = run_sheet(runner, folder, perf_id, tmp_path / f"{perf_id}.pdf")
        duet = duet_text(tmp_path / f"{perf_id}.pdf")
        assert duet, "the duet has a page"
        if perf_id == heavy_id:
            assert duet.index("DO NOT RUN") < duet.index("Reason")
            assert over in duet
            assert "down by 11 kg" in duet
            assert "151 kg of 140 kg rated payload" in duet
            assert d.UNDERSTUDY in duet
            assert "Caution:" in output and "DO NOT RUN:" in output and DUET in output
        else:
            assert over not in duet
            assert "rated payload (1" not in duet  # never over 100 % on another night


def test_by_date_and_time_and_letter(demo, tmp_path):
    folder, performances = demo
    perf_id, starts_at = performances[1]
    ref = starts_at.replace("T", " ")[:16]
    out = tmp_path / "letter.pdf"
    pages, output = sheet_text(CliRunner(), folder, ref, out, "--letter")
    assert f"performance {perf_id}" in pages[0]
    reader = pypdf.PdfReader(out)
    assert float(reader.pages[0].mediabox.width) == pytest.approx(612.0)   # 8.5 in, US Letter
    assert float(reader.pages[0].mediabox.height) == pytest.approx(792.0)  # 11 in


def test_no_performer_mass_on_any_sheet(demo, tmp_path):
    folder, performances = demo
    masses = {p.name: p.mass_kg for p in d.PERFORMERS}
    perf_id = performances[d.HEAVY_PERFORMANCE][0]
    pages, _ = sheet_text(CliRunner(), folder, perf_id, tmp_path / "s.pdf")
    text = " ".join(pages)
    totals = {int(m) for m in re.findall(r"(\d+) kg of 140 kg rated payload", text)}
    for name, mass in masses.items():
        if name not in text:
            continue
        assert round(mass) not in totals  # the demo's masses can be told from the riders' totals
        assert f"{mass:g} kg" not in text, name


@pytest.mark.parametrize("args, message", [
    (["99"], "Error: performance '99' does not exist"),
    (["2026-13-45 19:30"], "Error: "),
    (["1", "--out", "/no/such/folder/x.pdf"], "Error: --out /no/such/folder/x.pdf: the folder /no/such/folder does not exist"),
])
def test_bad_input_is_one_line_and_exit_2(demo, tmp_path, args, message):
    folder, _ = demo
    out = ["--out", str(tmp_path / "x.pdf")] if "--out" not in args else []
    result = CliRunner().invoke(main, ["sheet", *args, *out, "--instance", str(folder)])
    assert result.exit_code == 2, result.output
    assert message in result.output
    assert "Traceback" not in result.output
    assert not (tmp_path / "x.pdf").exists()


def test_missing_instance(tmp_path):
    result = CliRunner().invoke(main, ["sheet", "1", "--out", str(tmp_path / "x.pdf"),
                                       "--instance", str(tmp_path / "none")])
    assert result.exit_code == 2, result.output
    assert "Error: no showops database" in result.output
    assert not (tmp_path / "none" / "showops.db").exists()


def test_help_has_an_example():
    result = CliRunner().invoke(main, ["sheet", "--help"])
    assert result.exit_code == 0, result.output
    assert "Example:" in result.output and "--letter" in result.output
