"""The per-performance crew sheet: a cover, a page per rig cue, a page per role.

:func:`render_crew_sheet` renders only from a :class:`~showops.show.model.NightPlan`
(no queries). The plan never holds one person's mass, so neither can the sheet: it
prints the riders' total (with the rig's allowance) against the rated payload.
"""

from __future__ import annotations

import math
import re
from datetime import datetime, timezone
from typing import Any, Sequence

from reportlab.lib.units import mm
from reportlab.platypus import CondPageBreak, KeepTogether, PageBreak, Spacer, Table, TableStyle

from showops.sheets.common import (INK, PAPER, TINT_CAUTION, VERDICT_WORDS, Bold, Footer, FooterContext,
                                   LimitBar, QRCode, TickBox, banner, build_pdf, caution_block, content_width,
                                   grid_table, limit_table, page_size, para, short_hash, signoff_table, text,
                                   verdict_paragraph, verdict_style)
from showops.show.model import CueNight, NightPlan

#: The port the live show log listens on at the venue (the live app's default).
LIVE_PORT = 8150
#: The host a phone on the venue network reaches the live app by, unless given.
LIVE_HOST = "showops.local"

#: The procedure role filled by the cue's riders rather than by crew.
RIDER_ROLE = "rider"

#: Sign-off lines on the cover, in order.
SIGNOFF_ROLES = ("Stage manager", "Head of stage")


def live_url(plan: NightPlan, cue: CueNight, *, host: str = LIVE_HOST, port: int = LIVE_PORT,
             scheme: str = "http") -> str:
    """Return the address of ``cue``'s live page for this performance (the QR code's target).

    ``http://<host>:<port>/live/<performance_id>/cue/<cue_id>``; ``host`` may carry its
    own port (``"10.0.0.5:9000"``), which then wins over ``port``.
    """
    authority = host if ":" in host else f"{host}:{port}"
    return f"{scheme}://{authority}/live/{plan.performance_id}/cue/{cue.cue_id}"


def render_crew_sheet(plan: NightPlan, *, pagesize: str = "A4", live_url=None,
                      printed_at: datetime | None = None) -> bytes:
    """Return the crew sheet PDF of one performance.

    :param plan: the night's plan, verdicts filled in.
    :param pagesize: ``"A4"`` (default) or ``"Letter"``.
    :param live_url: a function ``(plan, cue) -> str`` for each cue's QR code, or a
        host string (``"10.0.0.5"`` or ``"stage.local:8150"``) for :func:`live_url`;
        None uses :data:`LIVE_HOST`.
    :param printed_at: the time printed in every footer (now, UTC, when None). Give a
        fixed time for a repeatable file.
    :raises ValidationError: for a page size other than A4 or Letter.
    """
    size = page_size(pagesize)
    if printed_at is None:
        printed_at = datetime.now(timezone.utc).replace(microsecond=0)
    url_for = _url_function(live_url)
    width = content_width(size)
    perf_line = (f"{plan.production} - performance {plan.performance_id}, "
                 f"{_when(plan.starts_at)} - {plan.venue}")
    footer = Footer(fixed=(perf_line,), printed_at=printed_at)
    story: list = []
    story += _cover(plan, width, footer)
    for cue in plan.rig_cues:
        story.append(PageBreak())
        story += _cue_pages(plan, cue, width, footer, url_for(plan, cue))
    for role in roles_of(plan):
        story.append(PageBreak())
        story += _role_pages(plan, role, width, footer)
    return build_pdf(story, pagesize=size, title=f"Crew sheet: {plan.production}, {_when(plan.starts_at)}",
                     subject=f"performance {plan.performance_id}", footer=footer)


def _url_function(live):
    if live is None:
        return lambda plan, cue: live_url(plan, cue)
    if callable(live):
        return live
    host = str(live)
    return lambda plan, cue: live_url(plan, cue, host=host)


# --------------------------------------------------------------------------- what the plan says


def roles_of(plan: NightPlan) -> tuple[str, ...]:
    """Return every role on tonight's rig cues, in order of first appearance.

    A role counts when a cue's procedure names it or somebody is assigned to it; the
    riders' role comes last.
    """
    seen: dict[str, None] = {}
    for cue in plan.rig_cues:
        proc_roles = tuple(getattr(cue.procedure, "roles", ()) or ())
        for role in proc_roles + tuple(a.role for a in cue.crew):
            if role != RIDER_ROLE:
                seen.setdefault(role, None)
    if any(cue.riders or RIDER_ROLE in (getattr(cue.procedure, "roles", ()) or ()) for cue in plan.rig_cues):
        seen.setdefault(RIDER_ROLE, None)
    return tuple(seen)


def people(cue: CueNight, role: str | None) -> str:
    """Return the names in ``role`` on this cue (riders for the riders' role), or ``NOBODY ASSIGNED``."""
    if not role:
        return ""
    if role == RIDER_ROLE:
        names = list(cue.riders)
    else:
        names = [a.name for a in cue.people_in(role)]
    return ", ".join(names) if names else "NOBODY ASSIGNED"


def _when(moment: datetime) -> str:
    return moment.strftime("%a %d %b %Y, %H:%M")


def _versions_line(cue: CueNight) -> str:
    return (f"Cue {cue.number} - rig {cue.rig} version {short_hash(cue.rig_version)} - "
            f"procedure version {short_hash(cue.procedure_version)} - checker rules "
            f"{cue.rule_set_version or 'not run'}")


def _all_versions(plan: NightPlan) -> tuple[str, ...]:
    rigs: dict[str, None] = {}
    procs: dict[str, None] = {}
    for cue in plan.rig_cues:
        rigs.setdefault(f"{cue.rig} {short_hash(cue.rig_version)}", None)
        procs.setdefault(short_hash(cue.procedure_version), None)
    if not rigs:
        return ("No rig cues tonight",)
    return ("Rigs: " + ", ".join(rigs) + " - procedures: " + ", ".join(procs),)


def _payload_check(cue: CueNight) -> dict[str, Any] | None:
    for check in (cue.load or {}).get("checks", ()):
        if check.get("limit") == "rated_payload":
            return check
    return None


def _riders_total(cue: CueNight) -> str:
    check = _payload_check(cue)
    total = cue.rider_total_kg if cue.rider_total_kg is not None else (check or {}).get("value")
    if total is None:
        return "not computed"
    out = f"{total:,.0f} kg"
    if check is not None:
        out += f" of {check['allowed']:,.0f} kg rated payload ({100 * check['usage']:.0f}%)"
    return out


def sheet_checks(checks: Sequence[dict[str, Any]]) -> tuple[list[dict[str, Any]], int]:
    """Return the checks a cue page shows, and how many tipping states were checked.

    Every limit is shown, except that of the tipping checks (limit ``tipping:<state>``,
    one per state of the ride) only the least margin and any that is not ``ok`` are
    kept, so the table stays on one page; nothing that limits tonight is dropped.
    """
    tipping = [c for c in checks if str(c.get("limit", "")).startswith("tipping:")]
    shown = [c for c in checks if c not in tipping]
    if tipping:
        worst = max(tipping, key=lambda c: c["usage"] if math.isfinite(c["usage"]) else math.inf)
        for check in tipping:
            if check is worst or check.get("level") != "ok":
                label = check.get("label", "")
                if check is worst and len(tipping) > 1:
                    label = f"least tipping margin: {label}"
                shown.append({**check, "label": label})
    return shown, len(tipping)


# --------------------------------------------------------------------------- cover


def _cover(plan: NightPlan, width: float, footer: Footer) -> list:
    story: list = [FooterContext(footer.state, _all_versions(plan))]
    story.append(para("CREW SHEET", "h3"))
    story.append(para(plan.production, "h1"))
    facts = [
        ["Company", plan.company], ["Venue", plan.venue], ["Date and time", _when(plan.starts_at)],
        ["Performance", str(plan.performance_id)], ["Stage manager", plan.stage_manager or "NOT NAMED"],
    ]
    table = Table([[para(k, "cell_bold"), para(v, "body_bold")] for k, v in facts],
                  colWidths=[45 * mm, width - 45 * mm], hAlign="LEFT")
    table.setStyle(TableStyle([("LINEBELOW", (0, 0), (-1, -1), 0.5, INK), ("VALIGN", (0, 0), (-1, -1), "TOP"),
                               ("LEFTPADDING", (0, 0), (-1, -1), 0)]))
    story += [table, Spacer(1, 4 * mm)]

    rig_cues = plan.rig_cues
    blocked = [c for c in rig_cues if c.verdict == "blocked"]
    caution = [c for c in rig_cues if c.verdict == "caution"]
    if blocked:
        story.append(banner(f"{len(blocked)} CUE{'S' if len(blocked) > 1 else ''} DO NOT RUN",
                            "Cue " + ", ".join(c.number for c in blocked)
                            + ": blocked tonight. See each cue's page for the reasons and what would clear it.",
                            width=width))
        story.append(Spacer(1, 3 * mm))
    counts = [f"{len(rig_cues) - len(blocked) - len(caution)} OK", f"{len(caution)} CAUTION"]
    counts.append(f"{len(blocked)} DO NOT RUN" if blocked else "none blocked")
    summary = (f"{len(rig_cues)} rig cue{'s' if len(rig_cues) != 1 else ''} of {len(plan.cues)} cues: "
               + ", ".join(counts) + ".")
    story.append(para(summary, "body_bold"))

    rows: list[list[Any]] = [["Cue", "Name", "Rig", "Riders", "Verdict", "Why"]]
    extra: list[tuple] = []
    for i, cue in enumerate(rig_cues, start=1):
        why = next((r.text for r in cue.reasons if r.level == "blocked"), None) \
            or next((r.text for r in cue.reasons), "every check within its limit")
        rows.append([Bold(cue.number), cue.name, cue.rig_name or cue.rig, ", ".join(cue.riders),
                     verdict_paragraph(cue.verdict), para(why, "cell_small")])
        extra += verdict_style(4, i, cue.verdict)
    if len(rows) > 1:
        story.append(grid_table(rows, [14 * mm, 34 * mm, 28 * mm, 38 * mm, 27 * mm, width - 141 * mm],
                                extra=extra))
    else:
        story.append(para("No cue uses a rig tonight.", "body"))

    story.append(para("Rig readiness", "h2"))
    if plan.readiness:
        rrows: list[list[Any]] = [["Level", "Readiness"]]
        rextra: list[tuple] = []
        for i, reason in enumerate(plan.readiness, start=1):
            rrows.append([verdict_paragraph(reason.level),
                          reason.text + (f" - to clear: {reason.fix}" if reason.fix else "")])
            rextra += verdict_style(0, i, reason.level)
        story.append(grid_table(rrows, [30 * mm, width - 30 * mm], extra=rextra))
    else:
        story.append(para("No readiness problem on record for tonight's rigs. Run the pre-show checks "
                          "as usual.", "body"))
    for note in plan.notes:
        story.append(para(note, "body"))

    story += [Spacer(1, 4 * mm), caution_block(width), Spacer(1, 4 * mm)]
    signoff = [para("Sign-off before the house opens", "h2"),
               para("I have read this sheet and the rigs, crew and riders are as it says.", "body"),
               signoff_table([(role, plan.stage_manager if role == "Stage manager" else None)
                              for role in SIGNOFF_ROLES], width)]
    story += [CondPageBreak(50 * mm), KeepTogether(signoff)]
    return story


# --------------------------------------------------------------------------- cue pages


def _cue_header(cue: CueNight, width: float, url: str) -> Table:
    left = [para(f"CUE {cue.number}", "h1"), para(cue.name, "h2"),
            para(f"Rig: {cue.rig_name or cue.rig} ({cue.rig})", "body_bold"),
            para(f"Procedure: {cue.procedure_title or 'none on record'}", "body")]
    qr_size = 30 * mm
    right = [QRCode(url, size=qr_size), para("Scan: this cue live", "cell_small")]
    table = Table([[left, right]], colWidths=[width - qr_size - 4 * mm, qr_size + 4 * mm], hAlign="LEFT")
    table.setStyle(TableStyle([("VALIGN", (0, 0), (-1, -1), "TOP"), ("LEFTPADDING", (0, 0), (-1, -1), 0),
                               ("RIGHTPADDING", (0, 0), (-1, -1), 0), ("ALIGN", (1, 0), (1, 0), "RIGHT"),
                               ("LINEBELOW", (0, 0), (-1, 0), 2.4, INK), ("BOTTOMPADDING", (0, 0), (-1, -1), 4)]))
    return table


def _verdict_block(cue: CueNight, width: float) -> list:
    out: list = []
    if cue.verdict == "blocked":
        out.append(banner("DO NOT RUN", f"Cue {cue.number} {cue.name} is blocked tonight", width=width))
    elif cue.verdict == "caution":
        out.append(banner("CAUTION", "Run only when the head of stage has read every caution below",
                          width=width, solid=False))
    else:
        out.append(para("Verdict: OK - every check within its limit.", "h3"))
    if cue.reasons:
        rows: list[list[Any]] = [["Level", "Reason"]]
        extra: list[tuple] = []
        for i, reason in enumerate(cue.reasons, start=1):
            rows.append([verdict_paragraph(reason.level), reason.text])
            extra += verdict_style(0, i, reason.level)
        out += [Spacer(1, 2 * mm), grid_table(rows, [30 * mm, width - 30 * mm], extra=extra)]
    if cue.verdict == "blocked":
        out.append(para("What would clear it", "h3"))
        if cue.fixes:
            for fix in cue.fixes:
                out.append(para(f"- {fix}", "body"))
        else:
            out.append(para("Nothing computed: ask the head of stage.", "body"))
    return out


def _riders_and_crew(cue: CueNight, width: float) -> list:
    rows: list[list[Any]] = [["Who", "Tonight"]]
    rows.append([Bold("Riders"), Bold(", ".join(cue.riders) or "NOBODY")])
    check = _payload_check(cue)
    total_cell: list = [para(_riders_total(cue), "cell_bold")]
    if check is not None:
        total_cell.append(LimitBar(check.get("usage"), check.get("level", "ok"), width=60 * mm))
    rows.append([Bold("Riders' total (with allowance)"), total_cell])
    rows.append([Bold("Emergency signal"), Bold(cue.signal or "NONE AGREED - do not run until one is agreed")])
    roles = tuple(getattr(cue.procedure, "roles", ()) or ())
    for role in dict.fromkeys(roles + tuple(a.role for a in cue.crew)):
        if role == RIDER_ROLE:
            continue
        rows.append([Bold(role.capitalize()), people(cue, role)])
    extra = [("BACKGROUND", (1, 3), (1, 3), TINT_CAUTION), ("BOX", (0, 3), (-1, 3), 2.4, INK)]
    return [grid_table(rows, [55 * mm, width - 55 * mm], extra=extra)]


def _who(cue: CueNight, role: str | None) -> str:
    if not role:
        return ""
    return f"{people(cue, role)} ({role})"


def _step_lines(step, *, timing_and_reason: bool = True) -> list[str]:
    """The lines of a step: what, when, the words; its time limit and reason on the cue
    page (``timing_and_reason``), left out on the shorter role pages; the caution."""
    parts = [f"<b>{text(step.title)}</b>"]
    if step.needs:
        parts.append(f"<i>Only when:</i> {text(', '.join(step.needs))}")
    if step.say:
        parts.append(f"<b>Say:</b> \"{text(step.say)}\"")
    if step.reply:
        parts.append(f"<b>Answer:</b> \"{text(step.reply)}\"")
    if timing_and_reason and step.hold_s:
        parts.append(f"<i>Within</i> {step.hold_s:g} s")
    if timing_and_reason and step.why:
        parts.append(f"<i>Why:</i> {text(step.why)}")
    if step.note:
        parts.append(f"<b>CAUTION:</b> {text(step.note)}")
    return parts


def _step_text(step) -> str:
    return "<br/>".join(_step_lines(step))


def _who_text(cue: CueNight, step) -> str:
    parts = [f"<b>Does:</b> {text(_who(cue, step.by) or 'NOT SAID')}"]
    if step.go:
        parts.append(f"<b>Go from:</b> {text(_who(cue, step.go))}")
    if step.check:
        parts.append(f"<b>Checks:</b> {text(_who(cue, step.check))}")
    return "<br/>".join(parts)


def step_table(cue: CueNight, phases: Sequence[tuple[str, Sequence]], width: float, *,
               tick: bool = True) -> Table:
    """Return the steps in order, a heading row per phase.

    Columns: number, the step and its words, who does / calls go / checks, and with
    ``tick`` a box to tick, a column for initials and one for the time.
    """
    if tick:
        header = ["No", "Step and the words", "Who", "Done", "Init.", "Time"]
        who_w = 50 * mm
        tail = [15 * mm, 18 * mm, 19 * mm]
    else:
        header = ["No", "Step and the words", "Who"]
        who_w = 62 * mm
        tail = []
    widths = [10 * mm, width - 10 * mm - who_w - sum(tail), who_w, *tail]
    rows: list[list[Any]] = [header]
    extra: list[tuple] = []
    for title, steps in phases:
        if title:
            r = len(rows)
            rows.append([para(title.upper(), "cell_bold")] + [""] * (len(header) - 1))
            extra += [("SPAN", (0, r), (-1, r)), ("BACKGROUND", (0, r), (-1, r), TINT_CAUTION),
                      ("LINEABOVE", (0, r), (-1, r), 1.6, INK)]
        for step in steps:
            row = [Bold(step.number), para(_step_text(step), "cell", markup=True),
                   para(_who_text(cue, step), "cell", markup=True)]
            if tick:
                row += [TickBox(), "", ""]
                extra += [("ALIGN", (3, len(rows)), (3, len(rows)), "CENTER"),
                          ("VALIGN", (3, len(rows)), (3, len(rows)), "MIDDLE")]
            rows.append(row)
    return grid_table(rows, widths, extra=extra)


def _phase_tables(cue: CueNight, width: float) -> list:
    procedure = cue.procedure
    if procedure is None:
        return [para("No procedure on record for this cue: DO NOT RUN it from this sheet.", "body_bold")]
    out: list = [CondPageBreak(60 * mm), para("Steps, in order", "h2"),
                 step_table(cue, [(p.title, p.steps) for p in procedure.main_phases if p.steps], width)]
    stop_phases = [(p.title, p.steps) for p in procedure.stop_phases if p.steps]
    stop = [CondPageBreak(60 * mm), para("STOP PROCEDURE - if anything goes wrong", "h2")]
    if cue.signal:
        stop.append(para(f"The rider's emergency signal: {cue.signal}. Anyone who sees it, or anything "
                         "wrong, calls HOLD.", "body_bold"))
    if stop_phases:
        stop.append(step_table(cue, stop_phases, width, tick=False))
    else:
        stop.append(para("This procedure has no stop phase: DO NOT RUN it until one is written.", "body_bold"))
    return out + stop


_PLACEHOLDER = re.compile(r"\{\{(.*?)\}\}", re.S)
_BOLD = re.compile(r"\*\*(.+?)\*\*", re.S)
_ITALIC = re.compile(r"(?<![*\w])\*(?!\s)(.+?)(?<!\s)\*(?![*\w])", re.S)


def procedure_intro(procedure) -> list[tuple[str, bool]]:
    """Return the procedure's free text under its title (its purpose and cautions).

    :returns: blocks of Markdown source, each with whether it is a list item; the
        text stops at the first phase heading.
    """
    if procedure is None or not getattr(procedure, "text", ""):
        return []
    blocks: list[tuple[str, bool]] = []
    current: list[str] = []
    bullet = False
    started = False

    def flush():
        if current:
            blocks.append((" ".join(current), bullet))
            current.clear()

    for line in procedure.text.splitlines():
        stripped = line.strip()
        if stripped.startswith("# ") and not started:
            started = True
            continue
        if not started:
            continue
        if stripped.startswith("##"):
            break
        if not stripped:
            flush()
            bullet = False
        elif stripped[:2] in ("- ", "* ") and not stripped.startswith("**"):
            flush()
            bullet = True
            current.append(stripped[2:].strip())
        else:
            current.append(stripped)
    flush()
    return blocks


def bind_placeholders(source: str, plan: NightPlan, cue: CueNight) -> str:
    """Bind ``{{ ... }}`` in a procedure's free text to tonight's cue, as the procedure
    package binds them for the web (``showops.procedure.render``: a sandbox, and a
    visible "[not bound: ...]" marker for anything that cannot be bound)."""
    if "{{" not in source:
        return source
    from showops.procedure.render import bind_placeholder, render_context

    crew: dict[str, list[str]] = {}
    for a in cue.crew:
        crew.setdefault(a.role, []).append(a.name)
    context = render_context(load=cue.load, riders=cue.riders, crew=crew,
                             performance={"id": plan.performance_id, "starts_at": plan.starts_at.isoformat()},
                             cue={"number": cue.number, "name": cue.name})
    return _PLACEHOLDER.sub(lambda m: bind_placeholder(m.group(1), context)[0], source)


def markdown_inline(source: str) -> str:
    """Return reportlab markup for Markdown text with ``**bold**`` and ``*italic*`` (escaped first)."""
    out = text(source)
    out = _BOLD.sub(r"<b>\1</b>", out)
    return _ITALIC.sub(r"<i>\1</i>", out)


def _cautions(plan: NightPlan, cue: CueNight, width: float) -> list:
    """The procedure's purpose and cautions and tonight's cautions: read before the steps."""
    items: list = [para("Read before the cue: purpose and cautions", "h2")]
    for source, bullet in procedure_intro(cue.procedure):
        markup = markdown_inline(bind_placeholders(source, plan, cue))
        items.append(para(("- " if bullet else "") + markup, "bullet" if bullet else "body", markup=True))
    for reason in cue.reasons:
        if reason.level == "caution":
            items.append(para(f"CAUTION tonight: {reason.text}", "body_bold"))
    if len(items) == 1:
        return []
    return [CondPageBreak(45 * mm), *items]


def _checker_block(cue: CueNight) -> list:
    out = [para("Procedure check", "h2")]
    rules = cue.rule_set_version or "not run"
    if cue.rule_set_version is None:
        out.append(para(f"The procedure checker did not run on this cue (rule set: {rules}).", "body_bold"))
    elif cue.findings:
        out.append(para(f"Procedure checker: {len(cue.findings)} FINDING{'S' if len(cue.findings) > 1 else ''} "
                        f"(rule set {rules}).", "body_bold"))
        for finding in cue.findings:
            out.append(para(f"- {finding}", "body"))
    else:
        out.append(para(f"Procedure checker: OK, no findings (rule set {rules}).", "body_bold"))
    return [KeepTogether(out)]


def _cue_pages(plan: NightPlan, cue: CueNight, width: float, footer: Footer, url: str) -> list:
    head = f"CUE {cue.number} {cue.name} (continued)"
    if cue.verdict != "ok":
        head += f" - {VERDICT_WORDS[cue.verdict]}"
    story: list = [FooterContext(footer.state, (_versions_line(cue),), head), _cue_header(cue, width, url),
                   Spacer(1, 3 * mm)]
    story += _verdict_block(cue, width)
    story += [Spacer(1, 3 * mm), *_riders_and_crew(cue, width)]
    checks = (cue.load or {}).get("checks", ())
    if checks:
        shown, tipping_states = sheet_checks(checks)
        story += [CondPageBreak(60 * mm), para("Tonight's figures against the rig's limits", "h2"),
                  limit_table(shown, width)]
        load = cue.load or {}
        notes = []
        if load.get("dynamic_factor"):
            notes.append(f"Riders' weight times a dynamic factor of {load['dynamic_factor']:g}.")
        if tipping_states > 1:
            notes.append(f"Tipping was checked in {tipping_states} states of the ride; the table shows the "
                         "least margin and any that is not OK.")
        notes.append("The heavy upright line on each bar is the limit.")
        story.append(para(" ".join(notes), "small"))
        for note in load.get("notes", ()):
            story.append(para(f"From the load check: {note}", "body_bold"))
    else:
        story.append(para("No load figures computed for this cue: DO NOT RUN it from this sheet.", "body_bold"))
    story += [Spacer(1, 2 * mm), caution_block(width)]
    story += _checker_block(cue)
    story += _cautions(plan, cue, width)
    story += _phase_tables(cue, width)
    return story


# --------------------------------------------------------------------------- role pages


def _steps_of(procedure, role: str) -> tuple[list, list]:
    if procedure is None:
        return [], []
    involved = [s for s in procedure.main_steps if role in (s.by, s.check, s.go)]
    stop = [s for s in procedure.stop_steps if role in (s.by, s.check, s.go)]
    return involved, stop


def _part(step, role: str) -> str:
    parts = []
    if step.by == role:
        parts.append("DO")
    if step.go == role:
        parts.append("CALL GO")
    if step.check == role:
        parts.append("CHECK")
    return " + ".join(parts)


def _role_step_text(cue: CueNight, step, role: str) -> str:
    """A step as the person in ``role`` needs it: what, when, the words, the caution, who else."""
    parts = _step_lines(step, timing_and_reason=False)
    others = []
    for label, other in (("does", step.by), ("go from", step.go), ("checks", step.check)):
        if other and other != role:
            others.append(f"{label} {_who(cue, other)}")
    if others:
        parts.append("<i>With:</i> " + text("; ".join(others)))
    return "<br/>".join(parts)


def _role_pages(plan: NightPlan, role: str, width: float, footer: Footer) -> list:
    """Everything ``role`` does all night: one table, a heading row per cue, a row per step."""
    title = "Riders" if role == RIDER_ROLE else role.capitalize()
    story: list = [FooterContext(footer.state, _all_versions(plan), f"ROLE: {title.upper()} (continued)"),
                   para(f"ROLE: {title.upper()}", "h1"),
                   para(f"Everything the {role} does tonight, cue by cue. {plan.production}, "
                        f"{_when(plan.starts_at)}.", "body_bold")]
    roster: list[list[Any]] = [["Cue", "Name", "Who", "Verdict"]]
    extra: list[tuple] = []
    for i, cue in enumerate(plan.rig_cues, start=1):
        roster.append([Bold(cue.number), cue.name, people(cue, role), verdict_paragraph(cue.verdict)])
        extra += verdict_style(3, i, cue.verdict)
    story += [grid_table(roster, [16 * mm, 50 * mm, width - 16 * mm - 50 * mm - 32 * mm, 32 * mm], extra=extra),
              Spacer(1, 4 * mm)]

    rows: list[list[Any]] = [["No", "Your part", "Step and the words", "Done"]]
    extra = [("ALIGN", (3, 1), (3, -1), "CENTER"), ("VALIGN", (3, 1), (3, -1), "MIDDLE")]

    def heading(value: str, *, dark: bool = False, tint=TINT_CAUTION, style: str = "cell_bold") -> None:
        r = len(rows)
        rows.append([para(value, "cell_inverse" if dark else style), "", "", ""])
        extra.extend([("SPAN", (0, r), (-1, r)), ("BACKGROUND", (0, r), (-1, r), INK if dark else tint),
                      ("LINEABOVE", (0, r), (-1, r), 2.4, INK)])

    for cue in plan.rig_cues:
        main, stop = _steps_of(cue.procedure, role)
        heading(f"CUE {cue.number} - {cue.name} ({cue.rig_name or cue.rig}). You: {people(cue, role)}. "
                f"Riders: {', '.join(cue.riders) or 'none'}. Emergency signal: {cue.signal or 'NONE AGREED'}.")
        if cue.verdict == "blocked":
            heading(f"DO NOT RUN cue {cue.number}: blocked tonight, see the cue's page", dark=True)
        elif cue.verdict == "caution":
            heading(f"CAUTION on cue {cue.number}: see the cue's page before it runs", tint=PAPER)
        if not main and not stop:
            rows.append(["", "", f"No step for the {role} on this cue.", ""])
        for step in main:
            rows.append([Bold(step.number), Bold(_part(step, role)),
                         para(_role_step_text(cue, step, role), "cell", markup=True), TickBox()])
        if stop:
            heading(f"Cue {cue.number}: if anything goes wrong (stop procedure)", tint=PAPER, style="cell_bold")
            for step in stop:
                rows.append([Bold(step.number), Bold(_part(step, role)),
                             para(_role_step_text(cue, step, role), "cell", markup=True), ""])
    story.append(grid_table(rows, [10 * mm, 26 * mm, width - 10 * mm - 26 * mm - 16 * mm, 16 * mm], extra=extra))
    story += [Spacer(1, 4 * mm), caution_block(width)]
    return story


__all__ = ["LIVE_HOST", "LIVE_PORT", "live_url", "people", "render_crew_sheet", "roles_of", "step_table",
           "bind_placeholders", "procedure_intro", "markdown_inline"]
