"""The ``showops`` command line: parse, call the library, map errors to one line.

Each area adds its commands in its own module (``showops/cli/<area>.py``) to the
:data:`main` group; this module only holds the group, the shared options and the
error handling. A :class:`~showops.errors.ShowopsError` becomes ``Error: <message>``
on standard error and exit status 2, never a traceback.
"""

from __future__ import annotations

import os
from pathlib import Path

import click

from showops import CAUTION, __version__
from showops.errors import ShowopsError


class ShowopsGroup(click.Group):
    """A click group that turns :class:`ShowopsError` into a one-line error, exit 2."""

    def invoke(self, ctx: click.Context):
        try:
            return super().invoke(ctx)
        except ShowopsError as exc:
            click.echo(f"Error: {exc}", err=True)
            ctx.exit(2)


def instance_option(func):
    """Add ``--instance DIR`` (default ``$SHOWOPS_INSTANCE`` or ``./instance``)."""
    return click.option(
        "--instance", "instance", type=click.Path(file_okay=False, path_type=Path),
        default=lambda: os.environ.get("SHOWOPS_INSTANCE", "instance"), show_default="./instance",
        help="Folder holding the database and secret key (or set SHOWOPS_INSTANCE).",
    )(func)


def echo_caution() -> None:
    """Print the caution that goes with every computed force."""
    click.echo(click.wrap_text("Caution: " + CAUTION, width=88))


def echo_json_with_caution(data: dict) -> None:
    """Print ``data`` as indented JSON with the caution under the key ``caution``."""
    import json

    click.echo(json.dumps(dict(data, caution=CAUTION), indent=2))


@click.group(cls=ShowopsGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="showops")
def main() -> None:
    """showops: procedures, load checks, crew sheets and a tamper-evident show log
    for hand-worked stage machinery that carries performers.

    Start with ``showops demo``, then follow what it prints.
    """


def _register_areas() -> None:
    """Import every module of this package: each adds its commands to :data:`main`."""
    import importlib
    import pkgutil

    import showops.cli as package

    for info in sorted(pkgutil.iter_modules(package.__path__), key=lambda i: i.name):
        importlib.import_module(f"showops.cli.{info.name}")


_register_areas()
