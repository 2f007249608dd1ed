"""``showops due`` and ``showops care ...``: record and read rig care and readiness.

Each command opens the instance's database, calls :mod:`showops.store.care` and
prints the result; a refused record prints ``Error: <field>: <what is wrong>`` and
exits 2 (the group's handling of :class:`~showops.errors.ShowopsError`).
"""

from __future__ import annotations

import json
from datetime import date
from pathlib import Path

import click

from showops.cli import echo_caution, instance_option, main
from showops.errors import ValidationError
from showops.store import open_db
from showops.store import care as store


def _db(instance: Path):
    return open_db(instance, create=False)


def _performance(db, ref: str) -> int:
    from showops.store.show import find_performance

    return find_performance(db, ref)


def _day(text: str | None, field: str) -> date | None:
    return store.parse_day(text, field) if text else None


@main.command("due")
@instance_option
@click.option("--days", default=14, show_default=True, type=click.IntRange(0, 3650),
              help="How far ahead to look.")
@click.option("--today", "today_text", metavar="YYYY-MM-DD", help="Count from this day instead of today.")
@click.option("--json", "as_json", is_flag=True, help="Print a JSON list.")
def due(instance: Path, days: int, today_text: str | None, as_json: bool) -> None:
    """List the examinations that are overdue or fall due in the next DAYS days, every rig.

    \b
    Example:
      showops due --days 14
    """
    db = _db(instance)
    today = _day(today_text, "--today") or date.today()
    items = store.due(db, today, days)
    if as_json:
        click.echo(json.dumps([{"rig": d.rig, "rule": d.rule.key, "title": d.rule.title, "status": d.status,
                                "due_on": d.due_on.isoformat() if d.due_on else None,
                                "last_on": d.last_on.isoformat() if d.last_on else None, "days": d.days,
                                "source": d.rule.source} for d in items], indent=2))
        return
    if not items:
        click.echo(f"Nothing due on any rig in the next {days} days (from {today.isoformat()}).")
        return
    click.echo(f"Due in the next {days} days (from {today.isoformat()}):")
    for d in items:
        when = d.due_on.isoformat() if d.due_on else "now"
        click.echo(f"  {d.status.upper():15} {d.rig:14} {d.rule.title} - {when} ({d.reason})")
        click.echo(f"  {'':15} {'':14} rule: {d.rule.source}")


@main.group("care")
def care() -> None:
    """Rig care and readiness: inspections, pre-show checks, briefings, rehearsals,
    area release, safety objections and the equipment register."""


# --------------------------------------------------------------------------- rule sets

@care.command("rules")
@instance_option
@click.option("--rig", help="Show the set this rig follows.")
def rules(instance: Path, rig: str | None) -> None:
    """List the inspection rule sets, or the one RIG follows, each rule with its source.

    \b
    Example:
      showops care rules --rig orchard-lift
    """
    db = _db(instance)
    names = [store.rule_set_for(db, store.require_rig(db, rig)).name] if rig else store.rule_set_names(db)
    for name in names:
        rs = store.rule_set(db, name)
        click.echo(f"{rs.name}: {rs.title}")
        for r in rs.rules:
            every = f"every {r.months} months" if r.months else (
                "after " + ", ".join(r.events) if r.kind == "after_event" else "before each use")
            click.echo(f"  {r.key:14} {every:44} {r.title}")
            click.echo(f"  {'':14} source: {r.source}")


@care.command("use-rules")
@instance_option
@click.argument("rig")
@click.argument("rule_set")
@click.option("--by", "by", required=True, help="Who chooses (a person on the people list).")
def use_rules(instance: Path, rig: str, rule_set: str, by: str) -> None:
    """Make RIG follow RULE_SET from now on.

    \b
    Example:
      showops care use-rules orchard-lift uk-loler --by "Halden Voss"
    """
    chosen = store.choose_rule_set(_db(instance), rig, rule_set, by)
    click.echo(f"{rig} now follows {chosen.name}: {chosen.title}")


@care.command("edit-rule")
@instance_option
@click.argument("rule_set")
@click.argument("key")
@click.option("--months", type=int, help="A new interval, in months.")
@click.option("--source", help="Who decided it, or the regulation it comes from.")
@click.option("--title", help="The rule's title.")
@click.option("--kind", type=click.Choice(["before_each_use", "interval", "after_event"]),
              help="For a new rule: its kind.")
@click.option("--remove", is_flag=True, help="Take the rule out of the set.")
@click.option("--by", "by", required=True, help="Who writes the change.")
def edit_rule(instance: Path, rule_set: str, key: str, months, source, title, kind, remove, by) -> None:
    """Add, change or remove one rule of RULE_SET (earlier versions are kept).

    \b
    Example:
      showops care edit-rule uk-loler thorough-6m --months 4 \\
        --source "venue competent person: examination scheme 2026" --by "Halden Voss"
    """
    rule = store.write_rule(_db(instance), rule_set, key, written_by=by, kind=kind, title=title, source=source,
                            months=months, remove=remove)
    click.echo(f"{rule_set}: removed {key}" if rule is None else
               f"{rule_set}: {rule.key} {rule.kind} {rule.months or ''} - {rule.title} ({rule.source})")


# --------------------------------------------------------------------------- inspections

@care.command("inspect")
@instance_option
@click.argument("rig")
@click.option("--on", "on", required=True, metavar="YYYY-MM-DD", help="The day of the inspection.")
@click.option("--scope", required=True, help="What was examined.")
@click.option("--examiner", required=True, help="Who examined it (on the people list).")
@click.option("--findings", required=True, help="What was found.")
@click.option("--objection", is_flag=True, help="The examiner objects to use: the rig goes out of service.")
@click.option("--follow-up", "follow_up", default="", help="Follow-up required.")
@click.option("--covers", default="", help="Rule keys it meets, comma-separated (default: every interval rule).")
def inspect(instance: Path, rig: str, on: str, scope: str, examiner: str, findings: str, objection: bool,
            follow_up: str, covers: str) -> None:
    """Record an inspection of RIG.

    \b
    Example:
      showops care inspect orchard-lift --on 2026-11-20 --scope "thorough examination" \\
        --examiner "Lise Armitage" --findings "brake pads 4 mm, straps intact"
    """
    keys = [k.strip() for k in covers.split(",") if k.strip()]
    iid = store.record_inspection(_db(instance), rig, on, scope=scope, examiner=examiner, findings=findings,
                                  objection_to_use=objection, follow_up=follow_up, covers=keys)
    state = "FAILED: out of service until a passing inspection" if objection else "passed"
    click.echo(f"Inspection {iid} of {rig} on {on} recorded ({state}).")


@care.command("remedy")
@instance_option
@click.argument("inspection_id", type=int)
@click.option("--on", "on", required=True, metavar="YYYY-MM-DD")
@click.option("--by", "by", required=True, help="Who acknowledges it.")
@click.option("--remedy", required=True, help="What was done.")
def remedy(instance: Path, inspection_id: int, on: str, by: str, remedy: str) -> None:
    """Acknowledge that the follow-up of INSPECTION_ID was done.

    \b
    Example:
      showops care remedy 3 --on 2026-11-21 --by "Halden Voss" --remedy "caster bolts re-torqued"
    """
    rid = store.acknowledge_remedy(_db(instance), inspection_id, on, person=by, remedy=remedy)
    click.echo(f"Remedy {rid} acknowledged for inspection {inspection_id}.")


@care.command("event")
@instance_option
@click.argument("rig")
@click.argument("kind", type=click.Choice(["incident", "overload", "modification"]))
@click.option("--on", "on", required=True, metavar="YYYY-MM-DD")
@click.option("--description", required=True)
@click.option("--by", "by", help="Who reports it.")
def event(instance: Path, rig: str, kind: str, on: str, description: str, by: str | None) -> None:
    """Record an incident, overload or modification of RIG (it needs an extraordinary examination).

    \b
    Example:
      showops care event orchard-lift modification --on 2026-11-19 --description "handle bar lengthened"
    """
    eid = store.record_rig_event(_db(instance), rig, kind, on, description, reported_by=by)
    click.echo(f"{kind.capitalize()} {eid} on {rig} recorded: {rig} needs an extraordinary examination before "
               "its next use.")


@care.command("inspections")
@instance_option
@click.option("--rig")
def list_inspections(instance: Path, rig: str | None) -> None:
    """List the inspection records.

    \b
    Example:
      showops care inspections --rig orchard-lift
    """
    for i in store.inspections(_db(instance), rig):
        state = "passed" if i.passed else "FAILED"
        click.echo(f"{i.id:4} {i.on} {i.rig:14} {state:7} {i.examiner.name}: {i.scope}; {i.findings}")
        if i.follow_up:
            done = f"remedied {i.remedied_on} by {i.remedied_by.name}: {i.remedy}" if i.remedied_on else "OPEN"
            click.echo(f"{'':5} follow-up: {i.follow_up} ({done})")


# --------------------------------------------------------------------------- pre-show check

@care.command("checklist")
@instance_option
@click.argument("rig")
@click.argument("file", type=click.Path(exists=True, dir_okay=False, path_type=Path))
def load_checklist(instance: Path, rig: str, file: Path) -> None:
    """Load FILE (procedure file format) as RIG's pre-show checklist.

    \b
    Example:
      showops care checklist orchard-lift procedures/checks/orchard-lift-preshow.md
    """
    db = _db(instance)
    version = store.load_checklist(db, rig, file.read_text(encoding="utf-8"), str(file))
    items, _ = store.checklist(db, rig)
    click.echo(f"{rig}: checklist {version[:12]} loaded, {len(items)} items:")
    for n, item in enumerate(items, 1):
        click.echo(f"  {n:2}. {item.title}" + ("  (load trial in motion)" if item.load_trial else ""))


@care.command("preshow")
@instance_option
@click.argument("performance")
@click.argument("rig")
@click.argument("item")
@click.argument("observation")
@click.option("--by", "by", required=True, help="Who observed it.")
@click.option("--fault", is_flag=True, help="A defect was found: the rig's cues are blocked.")
def preshow(instance: Path, performance: str, rig: str, item: str, observation: str, by: str, fault: bool) -> None:
    """Answer ITEM of tonight's pre-show check of RIG with what was OBSERVED.

    ITEM is the item's number or title. "OK", "checked" or "done" are refused.

    \b
    Example:
      showops care preshow "2026-12-05 19:30" orchard-lift 1 "brake holds with 40 kg on the rear bar" \\
        --by "Margit Oduya"
    """
    db = _db(instance)
    perf = _performance(db, performance)
    store.answer_preshow(db, perf, rig, item, observation, person=by, result="fault" if fault else "pass")
    status = store.rig_status(db, perf, rig)
    click.echo(f"Recorded. {rig} pre-show check: {status['preshow']}.")


# --------------------------------------------------------------------------- briefing, rehearsal, release

@care.command("brief")
@instance_option
@click.argument("performance")
@click.argument("rig")
@click.option("--by", "by", required=True, help="Who gives the briefing.")
@click.option("--note", default="")
def brief(instance: Path, performance: str, rig: str, by: str, note: str) -> None:
    """Record that tonight's briefing for RIG was given; each person then confirms with `care attend`.

    \b
    Example:
      showops care brief "2026-12-05 19:30" orchard-lift --by "Halden Voss"
    """
    db = _db(instance)
    bid = store.give_briefing(db, _performance(db, performance), rig, given_by=by, note=note)
    click.echo(f"Briefing {bid} recorded; each person confirms: showops care attend {bid} NAME")


@care.command("attend")
@instance_option
@click.argument("briefing_id", type=int)
@click.argument("person")
def attend(instance: Path, briefing_id: int, person: str) -> None:
    """PERSON confirms they attended briefing BRIEFING_ID.

    \b
    Example:
      showops care attend 4 "Fenn Castell"
    """
    store.confirm_briefing(_db(instance), briefing_id, person, device="cli")
    click.echo(f"{person} confirmed briefing {briefing_id}.")


@care.command("rehearse")
@instance_option
@click.argument("rig")
@click.option("--on", "on", required=True, metavar="YYYY-MM-DD")
@click.option("--member", "members", multiple=True, required=True, metavar="NAME=ROLE",
              help="Who rehearsed and in which role (repeat); riders have the role rider.")
@click.option("--cue", "cue_id", type=int, help="The cue rehearsed (default: the rig in every cue).")
@click.option("--note", default="")
def rehearse(instance: Path, rig: str, on: str, members: tuple[str, ...], cue_id: int | None, note: str) -> None:
    """Record a rehearsal of RIG with its team in their roles.

    \b
    Example:
      showops care rehearse orchard-lift --on 2026-12-04 --member "Mateus Oyelaran=rider" \\
        --member "Margit Oduya=brake" --member "Fenn Castell=lifters"
    """
    team = []
    for m in members:
        name, sep, role = m.rpartition("=")
        if not sep or not name.strip() or not role.strip():
            raise ValidationError("--member", f"{m!r}: write NAME=ROLE, e.g. \"Fenn Castell=lifters\"")
        team.append((name.strip(), role.strip()))
    rid = store.record_rehearsal(_db(instance), rig, on, team, cue_id=cue_id, note=note)
    click.echo(f"Rehearsal {rid} of {rig} on {on} recorded with {len(team)} people.")


@care.command("release")
@instance_option
@click.argument("performance")
@click.option("--by", "by", required=True, help="The stage manager or the designated supervisor.")
@click.option("--role", default="stage manager", type=click.Choice(list(store.RELEASE_ROLES)),
              show_default=True)
@click.option("--note", default="")
def release(instance: Path, performance: str, by: str, role: str, note: str) -> None:
    """Release the stage for PERFORMANCE (DGUV Vorschrift 17 §15).

    \b
    Example:
      showops care release "2026-12-05 19:30" --by "Halden Voss" --note "stage clear, traps closed"
    """
    db = _db(instance)
    store.release_area(db, _performance(db, performance), person=by, role=role, note=note)
    click.echo("Stage released.")


# --------------------------------------------------------------------------- objections

@care.command("object")
@instance_option
@click.option("--by", "by", required=True, help="Who objects.")
@click.option("--role", required=True, help="Their stage role.")
@click.option("--reason", required=True, help="What is unsafe.")
@click.option("--responsible", required=True, help="The person who must resolve it.")
@click.option("--rig")
@click.option("--cue", "cue_id", type=int)
@click.option("--performance")
def object_(instance: Path, by: str, role: str, reason: str, responsible: str, rig: str | None,
            cue_id: int | None, performance: str | None) -> None:
    """Raise a safety objection against a rig or a cue; it blocks until resolved.

    \b
    Example:
      showops care object --by "Ama Kettering" --role spotter --rig orchard-lift \\
        --reason "handrail clamp slips" --responsible "Halden Voss"
    """
    db = _db(instance)
    perf = _performance(db, performance) if performance else None
    oid = store.raise_objection(db, person=by, role=role, reason=reason, responsible=responsible, rig=rig,
                                cue_id=cue_id, performance_id=perf, device="cli")
    click.echo(f"Objection {oid} raised; it blocks until {responsible} resolves it "
               f"(showops care resolve {oid} --by ... --reason ...).")


@care.command("resolve")
@instance_option
@click.argument("objection_id", type=int)
@click.option("--by", "by", required=True, help="The named responsible person.")
@click.option("--reason", required=True, help="Why it is resolved.")
def resolve(instance: Path, objection_id: int, by: str, reason: str) -> None:
    """Resolve objection OBJECTION_ID with a written reason (only its responsible person).

    \b
    Example:
      showops care resolve 2 --by "Halden Voss" --reason "clamp replaced by a bolted bracket, load-tested"
    """
    store.resolve_objection(_db(instance), objection_id, person=by, reason=reason)
    click.echo(f"Objection {objection_id} resolved.")


@care.command("objections")
@instance_option
@click.option("--open", "open_only", is_flag=True, help="Only the open ones.")
def list_objections(instance: Path, open_only: bool) -> None:
    """List safety objections and their resolutions (none is ever deleted).

    \b
    Example:
      showops care objections --open
    """
    for o in store.objections(_db(instance), open_only=open_only):
        target = f"cue {o.cue_id}" if o.cue_id else o.rig
        click.echo(f"{o.id:4} {o.at:%Y-%m-%d %H:%M} {target}: {o.reason} ({o.raised_by.name}, {o.role})")
        click.echo(f"{'':5} " + (f"OPEN until {o.responsible.name} resolves it" if o.open else
                                 f"resolved {o.resolved_at:%Y-%m-%d %H:%M} by {o.resolved_by.name}: {o.resolution}"))


# --------------------------------------------------------------------------- equipment register

@care.command("part")
@instance_option
@click.argument("rig")
@click.argument("name")
@click.option("--kind", required=True, type=click.Choice(list(store.PART_KINDS)))
@click.option("--rating", "rating_n", type=float, help="Working load limit or rated holding force, N.")
@click.option("--factor", "design_factor", type=float, help="The design factor of that rating (e.g. 7).")
@click.option("--sees", type=click.Choice(list(store.FIGURES)), help="The solver figure it carries.")
@click.option("--share", type=float, default=1.0, show_default=True, help="Its fraction of that figure.")
@click.option("--people/--goods", "carries_people", default=True, show_default=True,
              help="Whether it carries people (checked at the people-carrying factor).")
@click.option("--note", default="")
def part(instance: Path, rig: str, name: str, kind: str, rating_n, design_factor, sees, share, carries_people,
         note) -> None:
    """Add NAME to RIG's equipment register.

    \b
    Example:
      showops care part orchard-lift "rear bar brake" --kind brake --rating 2400 --factor 2 --sees brake_n
    """
    pid = store.add_part(_db(instance), rig, name, kind, carries_people=carries_people, rating_n=rating_n,
                         design_factor=design_factor, sees=sees, share=share, note=note)
    click.echo(f"Part {pid} added to {rig}.")


@care.command("retire-part")
@instance_option
@click.argument("part_id", type=int)
@click.option("--on", "on", required=True, metavar="YYYY-MM-DD")
@click.option("--reason", required=True)
def retire_part(instance: Path, part_id: int, on: str, reason: str) -> None:
    """Record that PART_ID came off its rig (the register keeps it).

    \b
    Example:
      showops care retire-part 3 --on 2026-11-20 --reason "webbing worn at the buckle"
    """
    store.retire_part(_db(instance), part_id, on, reason)
    click.echo(f"Part {part_id} retired.")


@care.command("parts")
@instance_option
@click.argument("rig")
def list_parts(instance: Path, rig: str) -> None:
    """List RIG's fitted parts with their ratings.

    \b
    Example:
      showops care parts orchard-lift
    """
    db = _db(instance)
    for p in store.parts(db, store.require_rig(db, rig)):
        rating = f"{p.rating_n:,.0f} N at {p.design_factor or 1:g}:1" if p.rating_n else "no rating"
        who = "people" if p.carries_people else "goods"
        click.echo(f"{p.id:4} {p.kind:20} {p.name:30} {rating:22} {who:6} {p.sees or ''}")


# --------------------------------------------------------------------------- readiness

@care.command("status")
@instance_option
@click.argument("performance")
@click.option("--json", "as_json", is_flag=True)
def status(instance: Path, performance: str, as_json: bool) -> None:
    """Show each rig's readiness for PERFORMANCE and what would clear each block.

    \b
    Example:
      showops care status "2026-12-05 19:30"
    """
    db = _db(instance)
    perf = _performance(db, performance)
    rigs = [r[0] for r in db.execute("SELECT DISTINCT c.rig_slug FROM cue c JOIN performance p ON "
                                     "p.production_id = c.production_id WHERE p.id = ? AND c.rig_slug IS NOT NULL "
                                     "ORDER BY c.rig_slug", [perf])]
    out = [store.rig_status(db, perf, rig) for rig in rigs]
    if as_json:
        click.echo(json.dumps(out, indent=2))
        return
    for s in out:
        click.echo(s["line"])
        click.echo(f"  examined {s['last_examined'] or 'never'}, next due {s['next_due'] or '-'} ({s['rule_set']}); "
                   f"pre-show check {s['preshow']}; briefing {s['briefing']}; "
                   f"stage {'released' if s['area_released'] else 'not released'}; "
                   f"open objections {s['open_objections']}")
        for r in s["reasons"]:
            click.echo(f"  {r['level'].upper():8} {r['text']}")
            if r["fix"]:
                click.echo(f"  {'':8} to clear: {r['fix']}")
    echo_caution()
