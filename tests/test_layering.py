"""The pure packages import no web, CLI or database library (DEVELOPERS.md, "Imports go one way")."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

import showops

PURE = ("rig", "procedure", "show", "live", "care", "audit", "verdict", "units")
FORBIDDEN = ("flask", "click", "sqlite3", "sqlite_utils", "werkzeug", "waitress")
ROOT = Path(showops.__file__).parent


def pure_files() -> list[Path]:
    files = []
    for name in PURE:
        if (ROOT / f"{name}.py").exists():
            files.append(ROOT / f"{name}.py")
        if (ROOT / name).is_dir():
            files.extend(sorted((ROOT / name).rglob("*.py")))
    return files


def imported_modules(path: Path) -> set[str]:
    """Every module an ``import`` or ``from ... import`` names, anywhere in the file."""
    tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
    found = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            found.update(alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            found.add(node.module)
    return found


def test_there_are_pure_files_to_check():
    names = {p.relative_to(ROOT).parts[0] for p in pure_files()}
    assert {"rig", "show", "verdict.py", "units.py"} <= names


@pytest.mark.parametrize("path", pure_files(), ids=lambda p: str(p.relative_to(ROOT)))
def test_pure_module_imports_no_web_cli_or_database(path):
    bad = sorted(m for m in imported_modules(path) if m.split(".")[0] in FORBIDDEN)
    assert bad == [], f"{path.relative_to(ROOT)} imports {bad}"


def test_the_checker_catches_a_forbidden_import(tmp_path):
    sample = tmp_path / "sample.py"
    sample.write_text("def f():\n    import sqlite3\n    from flask import Flask\n")
    assert {m.split(".")[0] for m in imported_modules(sample)} & set(FORBIDDEN) == {"sqlite3", "flask"}
