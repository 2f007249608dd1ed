"""``showops procedure ...``: check a procedure file against a rig's physics, render it."""

from __future__ import annotations

import html
import json
from pathlib import Path

import click

from showops import CAUTION
from showops.cli import echo_caution, main
from showops.cli.rig import parse_riders
from showops.errors import ShowopsError
from showops.procedure import (
    RULE_NUMBERS,
    RULE_SET_VERSION,
    RULES,
    check_procedure,
    load_procedure,
    render_context,
    render_procedure_html,
)
from showops.rig import load_rig, solve_rig


@main.group()
def procedure() -> None:
    """Procedure files: check them against a rig's physics, render them."""


def _rig_for(proc, procedure_file: Path, rig_file: Path | None) -> Path | None:
    """The rig file given, else ``rigs/<Rig:>.toml`` next to the procedure, else None."""
    if rig_file is not None:
        return rig_file
    if proc.rig:
        candidate = procedure_file.parent / "rigs" / f"{proc.rig}.toml"
        if candidate.is_file():
            return candidate
    return None


@procedure.command("check")
@click.argument("procedure_file", type=click.Path(path_type=Path))
@click.option("--rig", "rig_file", type=click.Path(path_type=Path),
              help="The rig file to check against (default: rigs/<Rig:>.toml beside the procedure).")
@click.option("--riders", help="Tonight's riders' masses, comma-separated (kg unless a unit is given).")
@click.option("--json", "as_json", is_flag=True, help="Print the findings as JSON.")
def check(procedure_file: Path, rig_file: Path | None, riders: str | None, as_json: bool) -> None:
    """Check PROCEDURE_FILE step by step against the rig's physics.

    Prints one line per finding, FILE:LINE: step "TITLE": what is wrong (state found).
    Exit status 0 when clean, 1 with findings, 2 when a file cannot be read.

    \b
    Example:
      showops procedure check procedures/orchard-lift.md \\
          --rig procedures/rigs/orchard-lift.toml --riders 62,55
    """
    proc = load_procedure(procedure_file)
    rig_path = _rig_for(proc, procedure_file, rig_file)
    result = None
    if rig_path is not None:
        result = solve_rig(load_rig(rig_path), parse_riders(riders))
    findings = check_procedure(proc, rig_result=result, rig_slug=rig_path.stem if rig_path else None)
    if as_json:
        click.echo(json.dumps({
            "procedure": str(procedure_file), "procedure_version": proc.version,
            "rig": str(rig_path) if rig_path else None,
            "rule_set_version": RULE_SET_VERSION,
            "findings": [dict(f.to_dict(), rule_number=RULE_NUMBERS[f.rule]) for f in findings],
            "caution": CAUTION,
        }, indent=2))
    else:
        for finding in findings:
            click.echo(finding.format(str(procedure_file)))
        physics = (f"rig {rig_path}" if rig_path else
                   "no rig file: load taken as ok, empty platform assumed to rise")
        verdict = "clean" if not findings else f"{len(findings)} finding{'s' if len(findings) != 1 else ''}"
        click.echo(f"{verdict}: {len(proc.main_steps)} steps and {len(proc.stop_steps)} stop steps checked "
                   f"against {physics} (rule set {RULE_SET_VERSION}, procedure version {proc.version[:12]})")
        echo_caution()
    if findings:
        raise SystemExit(1)


@procedure.command("render")
@click.argument("procedure_file", type=click.Path(path_type=Path))
@click.option("--rig", "rig_file", type=click.Path(path_type=Path),
              help="The rig file whose figures fill {{ load.* }} (default: rigs/<Rig:>.toml beside it).")
@click.option("--riders", help="Tonight's riders' masses, comma-separated (kg unless a unit is given).")
@click.option("--rider-names", help="Tonight's riders' names, comma-separated, for {{ riders }}.")
@click.option("--crew", "crew_text", multiple=True, metavar="ROLE=NAME[,NAME]",
              help="A role and the people in it, for {{ crew.ROLE }}; repeat for each role.")
@click.option("--out", "out_file", type=click.Path(path_type=Path), required=True,
              help="The HTML file to write.")
def render(procedure_file: Path, rig_file: Path | None, riders: str | None, rider_names: str | None,
           crew_text: tuple[str, ...], out_file: Path) -> None:
    """Render PROCEDURE_FILE to a standalone, sanitised HTML page.

    \b
    Example:
      showops procedure render procedures/orchard-lift.md --riders 58,64 \\
          --rider-names "Ines,Tomas" --crew brake=Jo --crew lifters=Sam,Ade --out lift.html
    """
    proc = load_procedure(procedure_file)
    rig_path = _rig_for(proc, procedure_file, rig_file)
    load = solve_rig(load_rig(rig_path), parse_riders(riders)).to_dict() if rig_path else None
    crew: dict[str, list[str]] = {}
    for item in crew_text:
        role, sep, names = item.partition("=")
        if not sep or not role.strip():
            raise ShowopsError(f"--crew {item!r}: write ROLE=NAME[,NAME], e.g. --crew lifters=Sam,Ade")
        crew[role.strip().lower()] = [n.strip() for n in names.split(",") if n.strip()]
    context = render_context(load=load, crew=crew,
                             riders=[n.strip() for n in (rider_names or "").split(",") if n.strip()])
    body = render_procedure_html(proc, context)
    for finding in check_procedure(proc, context=context):
        if finding.rule == "placeholders_bound":
            click.echo(finding.format(str(procedure_file)), err=True)
    page = (f'<!doctype html>\n<html lang="en"><head><meta charset="utf-8">'
            f'<meta name="viewport" content="width=device-width, initial-scale=1">'
            f"<title>{html.escape(proc.title)}</title></head>\n<body>\n{body}\n</body></html>\n")
    try:
        out_file.write_text(page, encoding="utf-8")
    except OSError as exc:
        raise ShowopsError(f"{out_file}: cannot write ({exc.strerror or exc})") from None
    click.echo(f"wrote {out_file} ({proc.title}, version {proc.version[:12]})")


@procedure.command("rules")
def rules() -> None:
    """List the checker's rules, what each checks and its source.

    \b
    Example:
      showops procedure rules
    """
    click.echo(f"Rule set {RULE_SET_VERSION}")
    for number, rule in enumerate(RULES, 1):
        doc = " ".join((rule.__doc__ or "").split())
        click.echo(f"\n{number:>2}. {rule.__name__}")
        click.echo(click.wrap_text(doc, width=88, initial_indent="    ", subsequent_indent="    "))
