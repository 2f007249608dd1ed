"""The crew sheet, read back with pypdf (an outside PDF reader) and checked against the plan.

The figures on the sheet are the rig solver's (checked against textbook statics and
PyNiteFEA in tests/rig); here the sheet must print them as the plan holds them.
Versions are recomputed with hashlib (SHA-256, FIPS 180-4) from the files' text.
"""

from __future__ import annotations

import hashlib
import io
import re

import pypdf
import pytest

from sheet_plans import MASSES, PRINTED_AT, PROCEDURE, RIG_FILE, make_plan
from showops.errors import ValidationError
from showops.sheets import live_url, render_crew_sheet
from showops.sheets.common import format_figure
from showops.sheets.crew import roles_of, sheet_checks
from showops.verdict import Reason


def pages_of(pdf: bytes) -> list[str]:
    reader = pypdf.PdfReader(io.BytesIO(pdf))
    return [page.extract_text() for page in reader.pages]


def flat(value: str) -> str:
    """Text with every run of whitespace made one space (pypdf breaks lines where the PDF does)."""
    return re.sub(r"\s+", " ", value)


def cue_pages(pages: list[str], number: str) -> str:
    """The text of every page whose footer names this cue (a cue may run over several pages)."""
    return flat(" ".join(p for p in pages if f"Cue {number} - rig " in p))


def role_pages(pages: list[str], role: str) -> str:
    """The text of a role's pages: from its ROLE heading to the next one."""
    out, inside = [], False
    for page in pages:
        if page.startswith("ROLE: ") or "\nROLE: " in page:
            inside = f"ROLE: {role.upper()}" in page
        if inside:
            out.append(page)
    return flat(" ".join(out))


@pytest.fixture(scope="module")
def heavy():
    plan = make_plan(5, heavy=True)
    return plan, pages_of(render_crew_sheet(plan, printed_at=PRINTED_AT))


@pytest.fixture(scope="module")
def plain():
    plan = make_plan(4)
    return plan, pages_of(render_crew_sheet(plan, printed_at=PRINTED_AT))


def test_cover_names_the_night(plain):
    plan, pages = plain
    cover = flat(pages[0])
    for expected in ("The Glass Orchard", "Kestrel Yard Dance Company", "Ferrier Street Drill Hall, Aldmouth",
                     "Sat 12 Dec 2026, 19:30", "Halden Voss", "Stage manager", "Head of stage", "Signature"):
        assert expected in cover, expected
    # every rig cue in the summary table with its verdict in words
    for cue in plan.rig_cues:
        assert cue.name in cover
    verdicts = [c.verdict for c in plan.rig_cues]
    assert verdicts == ["ok", "caution", "ok"]
    assert "3 rig cues of 7 cues: 2 OK, 1 CAUTION, none blocked." in cover


def test_every_page_has_the_caution_where_loads_show(plain):
    plan, pages = plain
    caution_start = "These figures and checks help a competent person"
    assert caution_start in flat(pages[0])
    for cue in plan.rig_cues:
        assert caution_start in cue_pages(pages, cue.number)


@pytest.mark.parametrize("which", ["plain", "heavy"])
def test_riders_crew_and_figures_are_printed(which, request):
    plan, pages = request.getfixturevalue(which)
    for cue in plan.rig_cues:
        text = cue_pages(pages, cue.number)
        assert f"CUE {cue.number}" in text
        for rider in cue.riders:
            assert rider in text
        for assignment in cue.crew:
            assert assignment.name in text, assignment
        # the riders' total (with allowance) against the rated payload: sum of masses plus 4 kg each
        # (the allowance of procedures/rigs/orchard-lift.toml), worked here by hand
        total = sum(MASSES[r] for r in cue.riders) + 4 * len(cue.riders)
        assert f"{total:,.0f} kg of 140 kg rated payload" in text
        shown, _ = sheet_checks(cue.load["checks"])
        for check in shown:
            assert format_figure(check["value"], check["unit"]) in text, check["label"]
            assert format_figure(check["allowed"], check["unit"]) in text
        assert cue.signal in text
        assert "rule set rules-2026.1" in text


def test_no_single_rider_mass_is_printed(heavy, plain):
    for plan, pages in (heavy, plain):
        text = flat(" ".join(pages))
        for cue in plan.rig_cues:
            riders_total = round(sum(MASSES[r] for r in cue.riders) + 4 * len(cue.riders))
            for rider in cue.riders:
                mass = MASSES[rider]
                assert round(mass) != riders_total  # the fixture must be able to tell them apart
                assert f"{mass:g}" not in text
                assert f"{round(mass)} kg" not in text


def test_versions_in_every_footer(plain):
    plan, pages = plain
    rig_hash = hashlib.sha256(RIG_FILE.read_text(encoding="utf-8").encode()).hexdigest()
    proc_hash = hashlib.sha256(PROCEDURE.text.encode()).hexdigest()
    for number, page in enumerate(pages, start=1):
        assert f"Page {number} of {len(pages)}" in page
        assert "Printed 2026-12-11 17:45 UTC" in page
        assert f"performance {plan.performance_id}" in page
        assert rig_hash[:10] in page
        assert proc_hash[:10] in page


def test_blocked_cue_says_do_not_run_with_reasons_and_fixes(heavy):
    plan, pages = heavy
    blocked = [c for c in plan.rig_cues if c.verdict == "blocked"]
    assert [c.number for c in blocked] == ["5"]
    text = cue_pages(pages, "5")
    first_page = next(p for p in pages if "Cue 5 - rig " in p)
    assert "DO NOT RUN" in first_page.split("Level")[0]  # across the top, before the reasons
    assert "riders with allowance 148 kg is 105% of the 140 kg limit (8 kg over)" in text
    assert "What would clear it" in text
    for fix in blocked[0].fixes:
        assert flat(fix) in text
    assert "1 CUE DO NOT RUN" in flat(pages[0])


def test_ok_cues_never_say_do_not_run(heavy, plain):
    plan, pages = heavy
    for cue in plan.rig_cues:
        if cue.verdict != "blocked":
            assert "DO NOT RUN" not in cue_pages(pages, cue.number), cue.number
    _, pages = plain
    assert not any("DO NOT RUN" in page for page in pages)


def test_caution_cue_says_caution_in_words():
    plan = make_plan(6, n_rig_cues=2)
    cue = plan.rig_cues[1]  # two riders, 124 kg of 140 kg: 89 % of the rated payload
    assert cue.verdict == "caution"
    assert [r.limit for r in cue.reasons] == ["rated_payload"]
    pages = pages_of(render_crew_sheet(plan, printed_at=PRINTED_AT))
    text = cue_pages(pages, cue.number)
    assert "CAUTION" in text.split("Who Tonight")[0]
    assert "riders with allowance 124 kg is 89% of the 140 kg limit (16 kg to spare)" in text


def test_every_step_in_order_with_words_and_tick_columns(plain):
    plan, pages = plain
    text = cue_pages(pages, plan.rig_cues[0].number)
    positions = [text.index(step.title) for step in PROCEDURE.main_steps]
    assert positions == sorted(positions)
    for step in PROCEDURE.main_steps + PROCEDURE.stop_steps:
        if step.say:
            assert f'Say: "{step.say}"' in text
        if step.reply:
            assert f'Answer: "{step.reply}"' in text
    for column in ("Done", "Init.", "Time"):
        assert column in text
    assert "STOP PROCEDURE" in text
    assert "Lower a rider who is unwell or stuck" in text


def test_procedure_free_text_is_bound_to_tonight(plain):
    plan, pages = plain
    cue = plan.rig_cues[0]
    text = cue_pages(pages, cue.number)
    assert "{{" not in text
    pull = round(cue.load["operator_force_per_person_n"])
    assert f"Tonight {cue.riders[0]} ride; each lifter pulls about {pull} N" in text


def test_a_page_per_role_with_only_that_role_s_steps(plain):
    plan, pages = plain
    roles = roles_of(plan)
    assert set(roles) == set(PROCEDURE.roles)
    for role in roles:
        assert any(f"ROLE: {role.upper()}" in page for page in pages), role
    brake = role_pages(pages, "brake")
    for step in PROCEDURE.main_steps:
        involved = "brake" in (step.by, step.check, step.go)
        assert (step.title in brake) == involved, step.title
    # each rig cue appears on the role page, with who holds the role
    for cue in plan.rig_cues:
        assert f"CUE {cue.number} - {cue.name}" in brake
    assert "Margit Oduya" in brake


def test_blocked_cue_is_marked_on_role_pages(heavy):
    plan, pages = heavy
    lifters = role_pages(pages, "lifters")
    part = lifters.split("CUE 5 - Orchard rise 2")[1].split("CUE 7 -")[0]
    assert "DO NOT RUN cue 5" in part
    assert "DO NOT RUN" not in lifters.split("CUE 7 -")[1]


def test_unstaffed_role_is_said_in_words():
    plan = make_plan(7, n_rig_cues=1)
    cue = plan.rig_cues[0]
    from dataclasses import replace
    cue = replace(cue, crew=tuple(a for a in cue.crew if a.role != "spotter"),
                  reasons=(Reason("nobody is assigned to spotter", limit="unstaffed:spotter"),),
                  verdict="blocked", fixes=("assign a person trained on orchard-lift to spotter: Ama Kettering",))
    plan = replace(plan, cues=tuple(cue if c.cue_id == cue.cue_id else c for c in plan.cues))
    text = flat(" ".join(pages_of(render_crew_sheet(plan, printed_at=PRINTED_AT))))
    assert "NOBODY ASSIGNED" in text
    assert "assign a person trained on orchard-lift to spotter" in text


@pytest.mark.parametrize("size, width, height", [
    ("A4", 595.2756, 841.8898),   # ISO 216: 210 x 297 mm at 72 pt per inch
    ("Letter", 612.0, 792.0),     # ANSI/ASME Y14.1: 8.5 x 11 in
    ("letter", 612.0, 792.0),
])
def test_page_size(size, width, height):
    pdf = render_crew_sheet(make_plan(n_rig_cues=1), pagesize=size, printed_at=PRINTED_AT)
    reader = pypdf.PdfReader(io.BytesIO(pdf))
    for page in reader.pages:
        assert float(page.mediabox.width) == pytest.approx(width, abs=0.01)
        assert float(page.mediabox.height) == pytest.approx(height, abs=0.01)


def test_bad_page_size():
    with pytest.raises(ValidationError, match="pagesize: expected A4 or Letter, got 'A3'"):
        render_crew_sheet(make_plan(n_rig_cues=1), pagesize="A3", printed_at=PRINTED_AT)


def test_output_is_deterministic():
    plan = make_plan(n_rig_cues=2, heavy=True)
    assert render_crew_sheet(plan, printed_at=PRINTED_AT) == render_crew_sheet(plan, printed_at=PRINTED_AT)


def test_readiness_lines_on_cover():
    readiness = (Reason("Orchard lift: pre-show check not recorded today", level="blocked", limit="preshow",
                        fix="record the pre-show check"),
                 Reason("Orchard lift: thorough examination due in 9 days", level="caution", limit="inspection"))
    pages = pages_of(render_crew_sheet(make_plan(n_rig_cues=1, readiness=readiness), printed_at=PRINTED_AT))
    cover = flat(pages[0] + pages[1])
    assert "Orchard lift: pre-show check not recorded today - to clear: record the pre-show check" in cover
    assert "thorough examination due in 9 days" in cover


@pytest.mark.parametrize("host, expected", [
    (None, "http://showops.local:8150/live/4/cue/10"),
    ("10.0.0.5", "http://10.0.0.5:8150/live/4/cue/10"),
    ("stage.local:9000", "http://stage.local:9000/live/4/cue/10"),
])
def test_live_url(host, expected):
    plan = make_plan(4, n_rig_cues=1)
    cue = plan.rig_cues[0]
    assert (live_url(plan, cue) if host is None else live_url(plan, cue, host=host)) == expected


def test_live_url_function_is_used_for_each_cue():
    plan = make_plan(4, n_rig_cues=3)
    seen = []

    def target(p, cue):
        seen.append(cue.number)
        return f"http://x/{cue.cue_id}"

    render_crew_sheet(plan, live_url=target, printed_at=PRINTED_AT)
    assert seen == [c.number for c in plan.rig_cues]


def test_shared_paragraph_caches_change_nothing():
    """The parse and line-break caches (SheetParagraph) give the same bytes as a cold render."""
    from showops.sheets.common import SheetParagraph

    plan = make_plan(8, heavy=True, n_rig_cues=4)
    SheetParagraph.clear_caches()
    cold = render_crew_sheet(plan, printed_at=PRINTED_AT)
    warm = render_crew_sheet(plan, printed_at=PRINTED_AT)
    assert SheetParagraph._parsed and SheetParagraph._broken
    assert cold == warm


def test_the_shipped_procedure_prints_whole(tmp_path):
    """procedures/orchard-lift.md through the real parser: every step, its cautions bound to tonight."""
    from dataclasses import replace

    from sheet_plans import ROOT
    from showops.procedure import load_procedure

    procedure = load_procedure(ROOT / "procedures" / "orchard-lift.md")
    plan = make_plan(9, n_rig_cues=1)
    cue = replace(plan.rig_cues[0], procedure=procedure, procedure_title=procedure.title,
                  procedure_version=procedure.version, signal=procedure.signal)
    plan = replace(plan, cues=tuple(cue if c.cue_id == cue.cue_id else c for c in plan.cues))
    pages = pages_of(render_crew_sheet(plan, printed_at=PRINTED_AT))
    text = cue_pages(pages, cue.number)
    for step in procedure.main_steps + procedure.stop_steps:
        assert flat(step.title) in text, step.title
    assert "{{" not in text and "[not bound" not in text
    assert "Caller Halden Voss" in text            # {{ crew.caller }} bound
    assert "lifters Fenn Castell, Joss Penhaligon" in text
    assert "**" not in text                         # Markdown emphasis became bold, not stars
    assert procedure.version[:10] in text


@pytest.mark.parametrize("source, expected", [
    ("**the brake stays on** always", "<b>the brake stays on</b> always"),
    ("*The Glass Orchard*, Aldmouth", "<i>The Glass Orchard</i>, Aldmouth"),
    ("load < 140 kg & 2 * 3", "load &lt; 140 kg &amp; 2 * 3"),
])
def test_markdown_inline(source, expected):
    from showops.sheets.crew import markdown_inline
    assert markdown_inline(source) == expected


def test_continued_pages_name_their_cue_and_say_do_not_run(heavy):
    """A loose page of a blocked cue still says which cue it is and DO NOT RUN."""
    plan, pages = heavy
    cue5 = [p for p in pages if "Cue 5 - rig " in p]
    assert len(cue5) >= 2
    assert "(continued)" not in cue5[0]
    for page in cue5[1:]:
        assert "CUE 5 Orchard rise 2 (continued) - DO NOT RUN" in page
    cue3 = [p for p in pages if "Cue 3 - rig " in p]
    for page in cue3[1:]:
        assert "CUE 3 Orchard rise 1 (continued)" in page
        assert "DO NOT RUN" not in page


def test_cue_with_no_rig_file_and_no_procedure_still_prints_and_says_so():
    from dataclasses import replace

    plan = make_plan(10, n_rig_cues=1)
    cue = replace(plan.rig_cues[0], load=None, procedure=None, procedure_title=None, procedure_version=None,
                  rider_total_kg=None, rule_set_version=None, signal=None, verdict="blocked",
                  reasons=(Reason("rig 'orchard-lift' has no readable rig file on record", limit="rig"),))
    plan = replace(plan, cues=tuple(cue if c.cue_id == cue.cue_id else c for c in plan.cues))
    text = cue_pages(pages_of(render_crew_sheet(plan, printed_at=PRINTED_AT)), cue.number)
    assert "DO NOT RUN" in text
    assert "No load figures computed for this cue" in text
    assert "No procedure on record for this cue" in text
    assert "NONE AGREED" in text
    assert "procedure version none" in text
