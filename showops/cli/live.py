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
