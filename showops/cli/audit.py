"""``showops report``, ``showops audit`` and ``showops incident ...``: the night's show
report, the season audit, and incident records from the console."""

from __future__ import annotations

import json
from datetime import date, datetime, timezone
from pathlib import Path

import click

from showops.cli import echo_caution, instance_option, main
from showops.errors import ValidationError

ROLE_CHOICE = click.Choice(["admin", "stage_manager", "crew", "viewer"])


def _db(instance: Path):
    from showops.store import open_db

    return open_db(instance, create=False)


def _day(value: str, option: str) -> date:
    try:
        return date.fromisoformat(value.strip())
    except ValueError:
        raise ValidationError(option, f"cannot read {value!r} as a date (give YYYY-MM-DD)") from None


def _printed_at() -> str:
    return datetime.now(timezone.utc).isoformat(timespec="seconds")


def _actor(by: str, role: str):
    from showops.store.audit import Actor

    if not by or not by.strip():
        raise ValidationError("--by", "give the name of the person making this entry")
    return Actor(by.strip(), role)


@main.command("report")
@click.argument("performance")
@click.option("--out", "out", required=True, type=click.Path(dir_okay=False, path_type=Path),
              help="The PDF file to write.")
@instance_option
def report_command(performance: str, out: Path, instance: Path) -> None:
    """Write the show report of PERFORMANCE (its id, or YYYY-MM-DD HH:MM) as a PDF:
    running order with each cue's start and end, who confirmed what, deviations,
    incidents and near misses, the stage manager's notes and the sign-off.

    \b
    Example:
      showops report 3 --out out/report-3.pdf
    """
    from showops.sheets.report import render_show_report
    from showops.store.audit import show_report

    db = _db(instance)
    data = show_report(db, performance)
    out.parent.mkdir(parents=True, exist_ok=True)
    render_show_report(data, str(out), printed_at=_printed_at())
    click.echo(f"Wrote {out}: {len(data.running_order)} cues, {data.confirmations} steps confirmed, "
               f"{len(data.deviations)} deviations, {len(data.records)} records, "
               + ("signed off" if data.signoff_at else "NOT signed off"))


@main.command("audit")
@click.option("--from", "date_from", required=True, help="First day, YYYY-MM-DD.")
@click.option("--to", "date_to", required=True, help="Last day, YYYY-MM-DD.")
@click.option("--out", "out", type=click.Path(dir_okay=False, path_type=Path), help="The PDF file to write.")
@click.option("--csv", "csv_dir", type=click.Path(file_okay=False, path_type=Path),
              help="Also write the tables as CSV files into this folder.")
@instance_option
def audit_command(date_from: str, date_to: str, out: Path | None, csv_dir: Path | None, instance: Path) -> None:
    """Write the season audit for the performances between two dates: counts by kind,
    rig, cue and step, the trend per performance, each rig cue's load margin, open and
    overdue corrective actions, and the risk matrix.

    \b
    Example:
      showops audit --from 2026-11-01 --to 2026-11-30 --out out/audit.pdf --csv out/audit
    """
    from showops.sheets.audit import render_season_audit
    from showops.store.audit import season_audit, write_csv

    if out is None and csv_dir is None:
        raise ValidationError("--out", "give --out FILE.pdf, --csv DIR, or both")
    db = _db(instance)
    season = season_audit(db, _day(date_from, "--from"), _day(date_to, "--to"))
    if out is not None:
        out.parent.mkdir(parents=True, exist_ok=True)
        render_season_audit(season, str(out), printed_at=_printed_at())
        click.echo(f"Wrote {out}")
    if csv_dir is not None:
        paths = write_csv(season, csv_dir)
        click.echo(f"Wrote {len(paths)} CSV files to {csv_dir}/")
    click.echo(f"{len(season.performances)} performances, {season.total_deviations} deviations, "
               f"{season.total_records} records, {len(season.open_actions)} actions open "
               f"({len(season.overdue_actions)} overdue)")
    echo_caution()


@main.group("incident")
def incident() -> None:
    """Incidents, near misses and unsafe conditions, and their corrective actions."""


@incident.command("deviations")
@click.option("--performance", "performance", help="Only this performance (id or YYYY-MM-DD HH:MM).")
@click.option("--json", "as_json", is_flag=True, help="Print JSON.")
@instance_option
def deviations_command(performance: str | None, as_json: bool, instance: Path) -> None:
    """List the deviations the rules find in the log, each with its key and rows.

    \b
    Example:
      showops incident deviations --performance 3
    """
    from showops.store.audit import find_deviations

    db = _db(instance)
    ids = None
    if performance:
        from showops.store.show import find_performance

        ids = [find_performance(db, performance)]
    devs = find_deviations(db, ids)
    if as_json:
        click.echo(json.dumps([d.to_dict() for d in devs], indent=2))
        return
    for d in devs:
        click.echo(f"{d.key:<28} perf {d.performance_id:<4} {d.at_utc[:19]}  {d.title}: {d.text}")
    click.echo(f"{len(devs)} deviations")


@incident.command("promote")
@click.argument("key")
@click.option("--by", "by", required=True, help="Your name.")
@click.option("--role", type=ROLE_CHOICE, default="stage_manager", show_default=True, help="Your role.")
@instance_option
def promote_command(key: str, by: str, role: str, instance: Path) -> None:
    """Make the deviation KEY (from `incident deviations`) a near miss.

    \b
    Example:
      showops incident promote hold:212 --by "June Okafor"
    """
    from showops.store.audit import find_deviation, promote

    db = _db(instance)
    record_id = promote(db, _actor(by, role), find_deviation(db, key))
    click.echo(f"Record {record_id}: near miss from {key}")


@incident.command("report")
@click.option("--kind", type=click.Choice(["incident", "near_miss", "unsafe_condition"]), required=True)
@click.option("--when", "occurred_at", required=True, help="When it happened, YYYY-MM-DDTHH:MM (UTC).")
@click.option("--what", "narrative", required=True, help="What happened, in your words (no personal data).")
@click.option("--row", "step_log_id", type=int, help="The log row it is about (`showops log ...`).")
@click.option("--performance", "performance_id", type=int, help="The performance's id.")
@click.option("--people", help='People involved: "Name (role); Name (role)".')
@click.option("--injury", help="The injury and body part, when someone was hurt.")
@click.option("--treatment", default="none", show_default=True,
              type=click.Choice(["none", "first_aid", "medical", "emergency_room", "hospitalised"]))
@click.option("--action-taken", "immediate_action", help="What was done at once.")
@click.option("--by", "by", required=True, help="Your name.")
@click.option("--role", type=ROLE_CHOICE, default="crew", show_default=True, help="Your role.")
@instance_option
def report_incident(kind, occurred_at, narrative, step_log_id, performance_id, people, injury, treatment,
                    immediate_action, by, role, instance) -> None:
    """Report an incident, near miss or unsafe condition.

    \b
    Example:
      showops incident report --kind near_miss --when 2026-11-21T20:14 --row 212 \\
        --what "Platform began to rise before the clear call" --by "Tomas Ilve"
    """
    from showops.store.audit import report

    db = _db(instance)
    data = {"kind": kind, "occurred_at": occurred_at, "narrative": narrative, "people": people or "",
            "injured": "yes" if injury else "", "injury": injury or "", "treatment": treatment,
            "immediate_action": immediate_action or ""}
    record_id, warnings = report(db, _actor(by, role), data, step_log_id=step_log_id, performance_id=performance_id)
    click.echo(f"Record {record_id} stored")
    for w in warnings:
        click.echo(f"Warning: {w}")


@incident.command("classify")
@click.argument("record_id", type=int)
@click.option("--kind", type=click.Choice(["incident", "near_miss", "unsafe_condition"]), required=True)
@click.option("--likelihood", required=True, help="1 Extremely improbable .. 5 Frequent (ICAO Doc 9859).")
@click.option("--actual", "severity_actual", required=True, help="What happened: A Catastrophic .. E Negligible.")
@click.option("--potential", "severity_potential", required=True, help="The worst credible outcome, A..E.")
@click.option("--by", "by", required=True, help="Your name.")
@click.option("--role", type=ROLE_CHOICE, default="stage_manager", show_default=True)
@instance_option
def classify_command(record_id, kind, likelihood, severity_actual, severity_potential, by, role, instance) -> None:
    """Classify RECORD_ID and place it on the risk matrix.

    \b
    Example:
      showops incident classify 1 --kind near_miss --likelihood 3 --actual E --potential B --by "June Okafor"
    """
    from showops.store.audit import classify

    a = classify(_db(instance), _actor(by, role), record_id, kind=kind, likelihood=likelihood,
                 severity_actual=severity_actual, severity_potential=severity_potential)
    click.echo(f"Record {record_id}: {a['cell']} {a['region']} ({a['edition']})")


@incident.command("action")
@click.argument("record_id", type=int)
@click.option("--what", "description", required=True, help="The corrective action.")
@click.option("--owner", required=True, help="Who will do it.")
@click.option("--due", required=True, help="Due date, YYYY-MM-DD.")
@click.option("--control", default="administrative", show_default=True,
              type=click.Choice(["eliminate", "substitute", "engineering", "administrative", "ppe"]),
              help="Its level in the hierarchy of controls (ISO 45001 §8.1.2).")
@click.option("--by", "by", required=True, help="Your name.")
@click.option("--role", type=ROLE_CHOICE, default="stage_manager", show_default=True)
@instance_option
def action_command(record_id, description, owner, due, control, by, role, instance) -> None:
    """Add a corrective action to RECORD_ID.

    \b
    Example:
      showops incident action 1 --what "Spotter calls clear before release" --owner "Head of stage" \\
        --due 2026-11-28 --by "June Okafor"
    """
    from showops.store.audit import add_action

    action_id = add_action(_db(instance), _actor(by, role), record_id,
                           {"description": description, "owner": owner, "due": due, "control": control})
    click.echo(f"Action {action_id} added to record {record_id}")


@incident.command("move")
@click.argument("action_id", type=int)
@click.argument("state", type=click.Choice(["open", "done", "verified"]))
@click.option("--note", default="", help="What was done or checked.")
@click.option("--by", "by", required=True, help="Your name.")
@click.option("--role", type=ROLE_CHOICE, default="stage_manager", show_default=True)
@instance_option
def move_command(action_id, state, note, by, role, instance) -> None:
    """Move corrective action ACTION_ID to STATE (open, done, verified).

    \b
    Example:
      showops incident move 1 done --note "Added to the procedure" --by "June Okafor"
    """
    from showops.store.audit import move_action

    move_action(_db(instance), _actor(by, role), action_id, state, note=note)
    click.echo(f"Action {action_id} is {state}")


@incident.command("close")
@click.argument("record_id", type=int)
@click.option("--by", "by", required=True, help="Your name.")
@click.option("--role", type=ROLE_CHOICE, default="stage_manager", show_default=True)
@instance_option
def close_command(record_id, by, role, instance) -> None:
    """Close RECORD_ID (classified, every action verified).

    \b
    Example:
      showops incident close 1 --by "June Okafor"
    """
    from showops.store.audit import close

    close(_db(instance), _actor(by, role), record_id)
    click.echo(f"Record {record_id} closed")


@incident.command("list")
@click.option("--json", "as_json", is_flag=True, help="Print JSON.")
@instance_option
def list_command(as_json: bool, instance: Path) -> None:
    """List the records, newest first.

    \b
    Example:
      showops incident list
    """
    from showops.store.audit import list_records

    rows = list_records(_db(instance))
    if as_json:
        click.echo(json.dumps(rows, indent=2))
        return
    for r in rows:
        click.echo(f"{r['id']:>4} {r['occurred_at'][:16]} {r['kind']:<16} {r['risk_cell'] or '--':<3} "
                   f"{r['status']:<10} {r['narrative'][:60]}")
    click.echo(f"{len(rows)} records")
