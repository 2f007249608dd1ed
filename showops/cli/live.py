"""``showops log ...``: check the show log's hash chain."""

from __future__ import annotations

import sys

import click

from showops.cli import instance_option, main
from showops.store import open_db


@main.group("log")
def log_group() -> None:
    """The show log: every confirmation, refusal, HOLD and record, hash-chained."""


@log_group.command("verify")
@instance_option
def verify_command(instance) -> None:
    """Check every row of the log against its hash chain.

    Prints the number of rows and the last hash when the log is intact (write that
    hash on the signed show report); otherwise names the first row that was changed,
    inserted or removed and exits with status 1.

    Example: showops log verify --instance ./instance
    """
    from showops.store.log import log_head, verify_log

    db = open_db(instance, create=False)
    try:
        problem = verify_log(db)
        if problem is not None:
            click.echo(f"Log check FAILED at row {problem.row_id}: {problem.message}", err=True)
            sys.exit(1)
        last_id, last_hash = log_head(db)
        click.echo(f"Log intact: {last_id} rows, every hash matches; last hash {last_hash}")
    finally:
        db.conn.close()


@log_group.command("show")
@instance_option
@click.option("--performance", "performance_id", type=int, default=None, help="Only this performance's rows.")
@click.option("--cue", "cue_id", type=int, default=None, help="Only this cue's rows.")
@click.option("--after", "after_id", type=int, default=0, show_default=True, help="Only rows after this id.")
@click.option("--limit", type=click.IntRange(1, 100000), default=200, show_default=True, help="At most this many rows.")
@click.option("--json", "as_json", is_flag=True, help="One JSON object per line, every column (hashes included).")
def show_command(instance, performance_id, cue_id, after_id, limit, as_json) -> None:
    """Print log rows in order: time, event, who in which role, cue and step, detail.

    Example: showops log show --performance 1 --cue 3
    """
    import json

    from showops.store.log import iter_log

    db = open_db(instance, create=False)
    try:
        for n, row in enumerate(iter_log(db, performance_id=performance_id, cue_id=cue_id, after_id=after_id)):
            if n >= limit:
                click.echo(f"... more rows: continue with --after {row['id'] - 1}")
                break
            if as_json:
                click.echo(json.dumps(row, ensure_ascii=False))
                continue
            who = row["person_name"] or "-"
            if row["role"]:
                who += f" ({row['role']})"
            where = " ".join(x for x in (f"perf {row['performance_id']}" if row["performance_id"] else "",
                                         f"cue {row['cue_id']}" if row["cue_id"] else "",
                                         f"step {row['step_number']}" if row["step_number"] else "") if x)
            line = f"{row['id']:>6}  {row['at_utc'][:19].replace('T', ' ')}  {row['event']:<17} {who}"
            if where:
                line += f"  [{where}]"
            if row["detail"]:
                line += f"  {row['detail']}"
            click.echo(line)
    finally:
        db.conn.close()
