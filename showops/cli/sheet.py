"""``showops sheet``: write one performance's crew sheet as a PDF."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

import click

from showops.cli import echo_caution, instance_option, main
from showops.errors import ShowopsError


def _default_live_host() -> str:
    """This machine's address on the venue network, or the sheet's fallback name."""
    from showops.sheets.crew import LIVE_HOST

    try:
        from showops.cli.web import lan_address
    except ImportError:  # the web area is not installed
        return LIVE_HOST
    try:
        return lan_address()
    except (ShowopsError, OSError):
        return LIVE_HOST


def write_atomically(path: Path, data: bytes) -> None:
    """Write ``data`` to ``path`` through a temporary file, so a failed write leaves no half PDF.

    :raises ShowopsError: when the folder does not exist or cannot be written.
    """
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise ShowopsError(f"--out {path}: the folder {folder} does not exist")
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=folder)
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
        os.replace(tmp, path)
    except OSError as exc:
        raise ShowopsError(f"--out {path}: cannot write it ({exc.strerror or exc})") from None


@main.command("sheet")
@click.argument("performance")
@click.option("--out", "out", required=True, type=click.Path(dir_okay=False, path_type=Path),
              help="The PDF file to write.")
@click.option("--letter", is_flag=True, help="US Letter pages instead of A4.")
@click.option("--live-host", "live_host", default=None, metavar="HOST[:PORT]",
              help="Address the crew's phones reach the live app at, for each cue's QR code "
                   "(default: this machine's venue-network address, port 8150).")
@instance_option
def sheet(performance: str, out: Path, letter: bool, live_host: str | None, instance: Path) -> None:
    """Write the crew sheet of PERFORMANCE (its id, or its date and time) to a PDF.

    A cover with the night's verdicts and sign-off lines, a page for every rig cue
    (riders, figures against limits, crew, steps to tick, stop procedure), and a page
    for every role.

    \b
    Example:
      showops sheet "2026-12-12 19:30" --out crew-sheet.pdf --instance ./instance
      showops sheet 4 --out crew-sheet.pdf --letter
    """
    from showops.sheets import render_crew_sheet
    from showops.store import open_db
    from showops.store.show import load_night_plan

    folder = out.parent if str(out.parent) else Path(".")
    if not folder.is_dir():
        raise ShowopsError(f"--out {out}: the folder {folder} does not exist")

    db = open_db(instance, create=False)
    try:
        plan = load_night_plan(db, performance)
    finally:
        db.conn.close()
    pdf = render_crew_sheet(plan, pagesize="Letter" if letter else "A4",
                            live_url=live_host or _default_live_host())
    write_atomically(out, pdf)
    rig_cues = plan.rig_cues
    blocked = [c.number for c in rig_cues if c.verdict == "blocked"]
    caution = [c.number for c in rig_cues if c.verdict == "caution"]
    click.echo(f"Wrote the crew sheet for performance {plan.performance_id} "
               f"({plan.starts_at:%Y-%m-%d %H:%M}) to {out}")
    click.echo(f"  {len(rig_cues)} rig cues; DO NOT RUN: {', '.join(blocked) or 'none'}; "
               f"CAUTION: {', '.join(caution) or 'none'}")
    echo_caution()
