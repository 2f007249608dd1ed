"""``showops demo``, ``showops performances``, ``showops import ...``, ``showops export ...``.

Riders' masses are personal data: nothing printed here shows one person's mass, only
the riders' total (with allowance) against the rig's rated payload.
"""

from __future__ import annotations

import json
import shutil
from datetime import date, datetime, timezone
from pathlib import Path

import click

from showops import CAUTION
from showops.cli import echo_caution, instance_option, main
from showops.errors import ShowopsError
from showops.store import DB_FILENAME, open_db
from showops.store import show as store

_MARK = {"ok": "ok", "caution": "CAUTION", "blocked": "BLOCKED"}


# --------------------------------------------------------------------------- demo


@main.command("demo")
@instance_option
@click.option("--force", is_flag=True,
              help="Build the demo even though the instance holds data (the old database is kept as a backup copy).")
def demo(instance: Path, force: bool) -> None:
    """Build the invented demo production into the instance folder.

    Kestrel Yard Dance Company's "The Glass Orchard" at the Ferrier Street Drill Hall:
    performers, crew with training, a cue list using the rigs, and six performances
    placed around today (one already past).

    \b
    Example:
      showops demo --instance ./instance
    """
    path = Path(instance) / DB_FILENAME
    backup = None
    if path.exists():
        db = open_db(instance)
        if store.holds_data(db):
            if not force:
                kind = "an earlier demo" if store.is_demo(db) else "data that is not the demo's"
                raise ShowopsError(f"{path} already holds {kind}; pass --force to set it aside "
                                   f"(it is kept as a backup copy) and build the demo, or use another --instance")
            db.conn.execute("PRAGMA wal_checkpoint(TRUNCATE)")  # the backup is then one whole file
            db.conn.close()
            backup = path.with_name(f"{path.name}.{datetime.now():%Y%m%d-%H%M%S}.bak")
            shutil.move(str(path), str(backup))
            for suffix in ("-wal", "-shm"):
                extra = path.with_name(path.name + suffix)
                if extra.exists():
                    extra.unlink()
        else:
            db.conn.close()
    db = open_db(instance)
    from showops.store.demo import build_demo

    report = build_demo(db, date.today())
    ids = report.ids
    plans = store.night_plans(db)
    try:
        papers = _write_demo_papers(db, Path(instance), plans, ids)
    finally:
        db.conn.close()

    from showops.show import demo_data as d

    click.echo(f"Built the demo in {path}")
    if backup:
        click.echo(f"  (the database that was there is kept as {backup})")
    click.echo(f"  {d.COMPANY}: \"{d.PRODUCTION}\" at {d.VENUE}, {d.TOWN}")
    click.echo(f"  {len(d.PERFORMERS)} performers, {len(d.CREW)} crew, {len(ids.cues)} cues "
               f"({sum(1 for p in plans[:1] for c in p.rig_cues)} on rigs: {', '.join(ids.rigs) or 'none'})")
    click.echo(f"  {len(plans)} performances:")
    for plan in plans:
        click.echo("    " + _summary_line(plan))
    for line in ids.skipped:
        click.echo(f"  not installed: {line}")
    for line in report.notes:
        click.echo(f"  {line}")
    if report.users:
        click.echo("  Sign-ins (demo only; change them before real use):")
        for user in report.users:
            pin = f", PIN {user['pin']}" if user.get("pin") else ""
            click.echo(f"    {user['username']:<10} {user['role']:<14} {user['name']}{pin}")
    heavy = next(p for p in plans if p.performance_id == ids.heavy_performance)
    click.echo("  Papers:")
    for what, path in papers:
        click.echo(f"    {what:<44} {path}")
    echo_caution()
    click.echo("")
    if shutil.which("showops") is None:
        import sys

        click.echo(f"(showops is in {Path(sys.executable).parent}/: run "
                   f"`source {Path(sys.executable).parent}/activate` to use the commands below)")
    click.echo("Next:")
    click.echo(f"  showops performances --instance {instance}")
    click.echo(f"  showops sheet \"{heavy.starts_at:%Y-%m-%d %H:%M}\" --out crew-sheet.pdf --instance {instance}")
    click.echo(f"  showops serve --instance {instance}")


def _write_demo_papers(db, instance: Path, plans, ids) -> list[tuple[str, Path]]:
    """Write the papers a stage manager would print from the demo: the crew sheets of
    the next performance and of the heavy-understudy night, and the past night's show
    report. Returns (what, path) pairs."""
    from showops.cli.sheet import _default_live_host, write_atomically
    from showops.sheets import render_crew_sheet
    from showops.sheets.report import render_show_report
    from showops.store.audit import show_report

    folder = instance / "papers"
    folder.mkdir(parents=True, exist_ok=True)
    written: list[tuple[str, Path]] = []
    upcoming = [p for p in plans if p.performance_id != ids.past_performance and p.starts_at >= datetime.now()]
    chosen = {p.performance_id: p for p in upcoming[:1]}
    chosen.update({p.performance_id: p for p in plans if p.performance_id == ids.heavy_performance})
    for plan in sorted(chosen.values(), key=lambda p: p.starts_at):
        path = folder / f"crew-sheet-{plan.starts_at:%Y-%m-%d-%H%M}.pdf"
        write_atomically(path, render_crew_sheet(plan, live_url=_default_live_host()))
        label = "crew sheet, " + f"{plan.starts_at:%a %d %b %H:%M}"
        if plan.performance_id == ids.heavy_performance:
            label += " (understudy night)"
        written.append((label, path))
    past = next(p for p in plans if p.performance_id == ids.past_performance)
    path = folder / f"show-report-{past.starts_at:%Y-%m-%d-%H%M}.pdf"
    render_show_report(show_report(db, str(ids.past_performance)), str(path),
                       printed_at=datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M UTC"))
    written.append((f"show report, {past.starts_at:%a %d %b %H:%M}", path))
    return written


# --------------------------------------------------------------------------- performances


def _summary_line(plan) -> str:
    rig = plan.rig_cues
    counts = {v: sum(1 for c in rig if c.verdict == v) for v in ("ok", "caution", "blocked")}
    return (f"{plan.performance_id:>3}  {plan.starts_at:%a %Y-%m-%d %H:%M}  {len(rig)} rig cues: "
            f"{counts['ok']} ok, {counts['caution']} caution, {counts['blocked']} blocked")


@main.group("performances", invoke_without_command=True)
@instance_option
@click.option("--json", "as_json", is_flag=True, help="Print a JSON list (id, starts_at, cues with verdicts and reasons).")
@click.pass_context
def performances(ctx: click.Context, instance: Path, as_json: bool) -> None:
    """List every performance with each rig cue's verdict and its reasons.

    \b
    Examples:
      showops performances
      showops performances --json
      showops performances add "2026-12-19 19:30"
    """
    if ctx.invoked_subcommand is not None:
        return
    db = open_db(instance, create=False)
    plans = store.night_plans(db)
    if as_json:
        click.echo(json.dumps([store.plan_to_dict(p) for p in plans], indent=2))
        return
    if not plans:
        click.echo("No performances yet (run `showops demo`, or `showops performances add`).")
        return
    for plan in plans:
        click.echo(_summary_line(plan) + f"  {plan.production}, {plan.venue}")
        for c in plan.rig_cues:
            total = "" if c.rider_total_kg is None else f", riders' total {c.rider_total_kg:.0f} kg"
            click.echo(f"       cue {c.number} {c.name} ({c.rig}{total}): {_MARK[c.verdict]}")
            for r in c.reasons:
                click.echo(f"         - {r.text}")
            for fix in c.fixes:
                click.echo(f"         fix: {fix}")
    echo_caution()


@performances.command("add")
@click.argument("starts_at")
@instance_option
@click.option("--production", "production_id", type=int, default=None, help="Production id (default: the only one).")
@click.option("--venue", "venue_id", type=int, default=None, help="Venue id (default: the only one).")
def performances_add(starts_at: str, instance: Path, production_id: int | None, venue_id: int | None) -> None:
    """Add a performance at STARTS_AT (ISO 8601 venue time, YYYY-MM-DD HH:MM).

    \b
    Example:
      showops performances add "2026-12-19 19:30"
    """
    db = open_db(instance, create=False)
    production_id = production_id or _only(db, "production")
    venue_id = venue_id or _only(db, "venue")
    with store.transaction(db):
        pid = store.add_performance(db, production_id, venue_id, starts_at)
    click.echo(f"Added performance {pid} at {store.parse_starts_at(starts_at):%Y-%m-%d %H:%M}.")


def _only(db, table: str) -> int:
    ids = [r[0] for r in db.execute(f"SELECT id FROM {table}")]
    if len(ids) != 1:
        raise ShowopsError(f"there are {len(ids)} {table}s; name one with --{table}")
    return ids[0]


# --------------------------------------------------------------------------- import and export


@main.group("import")
def import_group() -> None:
    """Import cast or crew from CSV (all rows or none)."""


@import_group.command("cast")
@click.argument("csv_file", type=click.Path(dir_okay=False, path_type=Path))
@instance_option
def import_cast(csv_file: Path, instance: Path) -> None:
    """Import performers from CSV_FILE: columns name, mass_kg, and optionally rigs
    (separated by ";"). Nothing is imported when any row is bad.

    \b
    Example:
      showops import cast cast.csv
    """
    text = _read_text(csv_file)
    db = open_db(instance)
    report = store.import_cast_csv(db, text, source=str(csv_file))
    click.echo(f"Imported {len(report.added)} performers from {csv_file}: {', '.join(report.added)}")


@import_group.command("crew")
@click.argument("csv_file", type=click.Path(dir_okay=False, path_type=Path))
@instance_option
def import_crew(csv_file: Path, instance: Path) -> None:
    """Import crew from CSV_FILE: columns name, roles (separated by ";"), and optionally
    rig, trained_on, trained_by, expires_on (one row per rig). Nothing is imported when
    any row is bad.

    \b
    Example:
      showops import crew crew.csv
    """
    text = _read_text(csv_file)
    db = open_db(instance)
    report = store.import_crew_csv(db, text, source=str(csv_file))
    click.echo(f"Imported {len(report.added)} crew from {csv_file}: {', '.join(report.added)}")


def _read_text(path: Path) -> str:
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise ShowopsError(f"{path}: cannot read the file ({exc.strerror or exc})") from None
    if len(data) > 5_000_000:
        raise ShowopsError(f"{path}: {len(data):,} bytes; a cast or crew list is a few kB")
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError:
        raise ShowopsError(f"{path}: not UTF-8 text (save the spreadsheet as CSV UTF-8)") from None


@import_group.command("cues")
@click.argument("csv_file", type=click.Path(dir_okay=False, path_type=Path))
@instance_option
@click.option("--production", "production_id", type=int, default=None, help="Production id (default: the only one).")
def import_cues(csv_file: Path, instance: Path, production_id: int | None) -> None:
    """Append cues to the cue list from CSV_FILE: columns number, name, and optionally
    rig and procedure (slugs). Nothing is imported when any row is bad.

    \b
    Example:
      showops import cues cues.csv
    """
    text = _read_text(csv_file)
    db = open_db(instance, create=False)
    report = store.import_cues_csv(db, text, production_id or _only(db, "production"), source=str(csv_file))
    click.echo(f"Imported {len(report.added)} cues from {csv_file}: {', '.join(report.added)}")


@import_group.command("rig")
@click.argument("rig_file", type=click.Path(dir_okay=False, path_type=Path))
@instance_option
@click.option("--slug", default=None, help="The rig's slug (default: the file name without .toml).")
def import_rig(rig_file: Path, instance: Path, slug: str | None) -> None:
    """Store RIG_FILE's text as the rig's current version (a changed file is a new version;
    every verdict from then on uses it).

    \b
    Example:
      showops import rig procedures/rigs/orchard-lift.toml
    """
    text = _read_text(rig_file)
    db = open_db(instance)
    with store.transaction(db):
        version = store.add_rig(db, slug or rig_file.stem, text, source=str(rig_file))
    click.echo(f"Rig {slug or rig_file.stem}: version {version[:12]} on record.")


@import_group.command("procedure")
@click.argument("procedure_file", type=click.Path(dir_okay=False, path_type=Path))
@instance_option
@click.option("--slug", default=None, help="The procedure's slug (default: the file name without .md).")
def import_procedure(procedure_file: Path, instance: Path, slug: str | None) -> None:
    """Store PROCEDURE_FILE's text as the procedure's current version; its ``Rig:``
    header names the rig, which must be on record. Cues on that rig with no procedure
    yet are given this one.

    \b
    Example:
      showops import procedure procedures/orchard-lift.md
    """
    text = _read_text(procedure_file)
    db = open_db(instance)
    rig = store._header(text, "Rig") or None
    with store.transaction(db):
        version = store.add_procedure(db, slug or procedure_file.stem, text, rig=rig)
        linked = store.link_procedure(db, slug or procedure_file.stem, rig) if rig else 0
    click.echo(f"Procedure {slug or procedure_file.stem} (rig {rig or 'none named'}): version {version[:12]} on record"
               + (f"; linked to {linked} cue{'s' if linked != 1 else ''} that had none." if linked else "."))


@main.group("export")
def export_group() -> None:
    """Export the cue list or the night's verdicts as CSV or JSON."""


_FORMAT = click.option("--format", "fmt", type=click.Choice(["csv", "json"]), default="csv", show_default=True)
_OUT = click.option("--out", type=click.Path(dir_okay=False, path_type=Path), default=None,
                    help="Write to this file instead of standard output.")


def _emit(text: str, out: Path | None) -> None:
    if out is None:
        click.echo(text, nl=not text.endswith("\n"))
    else:
        out.write_text(text, encoding="utf-8")
        click.echo(f"Wrote {out}", err=True)


@export_group.command("cues")
@instance_option
@_FORMAT
@_OUT
def export_cues(instance: Path, fmt: str, out: Path | None) -> None:
    """Export the cue list in running order.

    \b
    Example:
      showops export cues --format json --out cues.json
    """
    rows = store.cue_list(open_db(instance, create=False))
    columns = ("id", "production", "number", "name", "rig", "procedure")
    _emit(json.dumps(rows, indent=2) + "\n" if fmt == "json" else store.to_csv(rows, columns), out)


@export_group.command("verdicts")
@click.argument("performance", required=False)
@instance_option
@_FORMAT
@_OUT
def export_verdicts(performance: str | None, instance: Path, fmt: str, out: Path | None) -> None:
    """Export every cue's verdict for PERFORMANCE (id or "YYYY-MM-DD HH:MM"), or for all.

    \b
    Example:
      showops export verdicts "2026-12-12 19:30" --format csv --out verdicts.csv
    """
    db = open_db(instance, create=False)
    plans = [store.load_night_plan(db, performance)] if performance else store.night_plans(db)
    if fmt == "json":
        text = json.dumps({"caution": CAUTION, "performances": [store.plan_to_dict(p) for p in plans]}, indent=2) + "\n"
    else:
        text = store.to_csv(store.verdict_rows(plans), store.VERDICT_COLUMNS)
    _emit(text, out)
