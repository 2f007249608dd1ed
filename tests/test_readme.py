"""The README's commands stay true: the Quick start is two commands, every `showops`
line in it parses against the real CLI, every top-level command is shown, and every
command's help carries an example (DEVELOPERS.md conventions)."""

from __future__ import annotations

import re
import shlex
from pathlib import Path

import click
import pytest

from showops.cli import main

README = (Path(__file__).parent.parent / "README.md").read_text(encoding="utf-8")


def code_blocks(text: str) -> list[str]:
    return re.findall(r"^```[^\n]*\n(.*?)^```", text, flags=re.S | re.M)


def showops_lines() -> list[str]:
    lines = []
    for block in code_blocks(README):
        lines += [line.strip() for line in block.splitlines() if line.strip().startswith("showops ")]
    return lines


def all_commands(group: click.Group = main, prefix: tuple[str, ...] = ()):
    for name, command in sorted(group.commands.items()):
        yield prefix + (name,), command
        if isinstance(command, click.Group):
            yield from all_commands(command, prefix + (name,))


def test_quick_start_is_exactly_two_commands():
    section = README.split("## Quick start", 1)[1].split("\n## ", 1)[0]
    blocks = code_blocks(section)
    assert len(blocks) == 1
    commands = [line for line in blocks[0].splitlines() if line.strip()]
    assert len(commands) == 2
    assert "showops demo" in commands[0] and "pip install -e ." in commands[0]
    assert commands[1] == "bash scripts/test.sh"
    # .ci/run runs that same test command
    assert "scripts/test.sh" in (Path(__file__).parent.parent / ".ci" / "run").read_text()


@pytest.mark.parametrize("line", showops_lines())
def test_every_readme_command_parses(line):
    args = shlex.split(line)[1:]
    command: click.Command = main
    while isinstance(command, click.Group) and args and not args[0].startswith("-"):
        sub = command.get_command(click.Context(command), args[0])
        assert sub is not None, f"README names an unknown command: {line}"
        command, args = sub, args[1:]
    try:
        command.make_context("showops", list(args))
    except click.exceptions.Exit:
        pass  # --help
    except click.UsageError as exc:  # pragma: no cover - the assertion reports it
        pytest.fail(f"README command does not parse: {line}: {exc}")


def test_every_top_level_command_is_in_the_readme():
    shown = {shlex.split(line)[1] for line in showops_lines()}
    missing = sorted(set(main.commands) - shown)
    assert not missing, f"commands the README does not show: {missing}"


@pytest.mark.parametrize("path,command", [(p, c) for p, c in all_commands() if not isinstance(c, click.Group)],
                         ids=lambda v: " ".join(v) if isinstance(v, tuple) else "")
def test_every_command_help_has_an_example(path, command):
    assert "example" in (command.help or "").lower(), f"showops {' '.join(path)} has no example in its help"
