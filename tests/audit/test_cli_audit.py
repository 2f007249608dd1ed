"""`showops report`, `showops audit` and `showops incident ...` through click's runner.

Counts are checked against the instance's own log (invented fixture data); PDFs are
read back with pypdf. Errors print one line and exit 2 (DEVELOPERS.md).
"""

from __future__ import annotations

import csv
import re

import pypdf
import pytest
from click.testing import CliRunner

from showops.cli import main


def run(inst, *args):
    result = CliRunner().invoke(main, [*args, "--instance", str(inst.folder)])
    return result


def pdf_text(path) -> str:
    return re.sub(r"\s+", " ", " ".join(p.extract_text() for p in pypdf.PdfReader(str(path)).pages))


def test_report_command(inst, tmp_path):
    inst.run_cue(inst.perf1, hold=True)
    out = tmp_path / "r.pdf"
    result = run(inst, "report", str(inst.perf1), "--out", str(out))
    assert result.exit_code == 0, result.output
    assert "1 deviations" in result.output and "signed off" in result.output
    text = pdf_text(out)
    assert "Show report: The Glass Orchard" in text and "HOLD by Tomas Ilve: rider signalled" in text


@pytest.mark.parametrize("args,message", [
    (["report", "2", "--out", "x.pdf"], "never ran"),
    (["report", "99", "--out", "x.pdf"], "does not exist"),
    (["audit", "--from", "2026-11-30", "--to", "2026-11-01", "--out", "x.pdf"], "before --from"),
    (["audit", "--from", "soon", "--to", "2026-11-01", "--out", "x.pdf"], "--from"),
    (["audit", "--from", "2026-11-01", "--to", "2026-11-30"], "--out"),
    (["incident", "classify", "1", "--kind", "near_miss", "--likelihood", "6", "--actual", "E", "--potential",
      "B", "--by", "June"], "does not exist"),
    (["incident", "promote", "hold:777", "--by", "June"], "not found"),
])
def test_bad_input_is_one_line_and_exit_2(inst, args, message, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    result = run(inst, *args)
    assert result.exit_code == 2, result.output
    assert message in result.output and "Traceback" not in result.output


def test_incident_commands_end_to_end(inst, tmp_path):
    inst.run_cue(inst.perf1, hold=True)
    result = run(inst, "incident", "deviations", "--performance", str(inst.perf1))
    assert result.exit_code == 0, result.output
    key = re.search(r"(hold:\d+)", result.output).group(1)
    result = run(inst, "incident", "promote", key, "--by", "June Okafor")
    assert result.exit_code == 0, result.output and "Record 1" in result.output
    result = run(inst, "incident", "classify", "1", "--kind", "near_miss", "--likelihood", "6", "--actual", "E",
                 "--potential", "B", "--by", "June Okafor")
    assert result.exit_code == 2 and "likelihood" in result.output
    result = run(inst, "incident", "classify", "1", "--kind", "near_miss", "--likelihood", "3", "--actual", "E",
                 "--potential", "B", "--by", "June Okafor")
    assert result.exit_code == 0 and "3B tolerable" in result.output, result.output
    result = run(inst, "incident", "action", "1", "--what", "Spotter calls clear before release", "--owner",
                 "Head of stage", "--due", "2026-11-19", "--by", "June Okafor")
    assert result.exit_code == 2 and "before the occurrence" in result.output
    result = run(inst, "incident", "action", "1", "--what", "Spotter calls clear before release", "--owner",
                 "Head of stage", "--due", "2026-11-25", "--by", "June Okafor")
    assert result.exit_code == 0, result.output
    result = run(inst, "incident", "report", "--kind", "unsafe_condition", "--when", "2026-11-21T18:00",
                 "--what", "Caster lock on the stand is loose", "--by", "Tomas Ilve")
    assert result.exit_code == 0 and "Record 2" in result.output, result.output
    result = run(inst, "incident", "list")
    assert result.exit_code == 0 and "2 records" in result.output

    out, folder = tmp_path / "audit.pdf", tmp_path / "csv"
    result = run(inst, "audit", "--from", "2026-11-01", "--to", "2026-11-30", "--out", str(out), "--csv", str(folder))
    assert result.exit_code == 0, result.output
    assert "3 performances, 1 deviations, 2 records, 1 actions open (1 overdue)" in result.output
    kinds = {r["kind"]: int(r["count"]) for r in csv.DictReader((folder / "counts_by_kind.csv").read_text().splitlines())}
    assert kinds["hold"] == 1 and kinds["near_miss"] == 1 and kinds["unsafe_condition"] == 1
    text = pdf_text(out)
    assert "3 performances; 1 deviations found in the log; 2 incidents" in text and "OVERDUE" in text


def test_every_command_has_an_example():
    for name, cmd in [("report", main.commands["report"]), ("audit", main.commands["audit"]),
                      *[(f"incident {n}", c) for n, c in main.commands["incident"].commands.items()]]:
        assert "Example:" in (cmd.help or ""), name
