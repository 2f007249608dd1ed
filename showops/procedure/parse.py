"""Read a procedure file (Markdown with a small structure) into a :class:`Procedure`.

The structure (docs/procedure-file.md): ``Key: value`` header lines at the top, then
``## phase`` headings, ``### step`` headings under them, and ``- field: value``
bullets under each step. Anything readable parses: what cannot be read as written
becomes a :class:`~showops.procedure.model.Problem` that the checker reports, never
an exception. Only input that is not text at all (empty, binary, over 1 MB) raises
:class:`~showops.errors.ProcedureFileError`.
"""

from __future__ import annotations

import difflib
import math
import re
from pathlib import Path

from showops.errors import ProcedureFileError
from showops.procedure.model import (
    HEADER_FIELDS,
    REST_STATE,
    STATE_VALUES,
    STEP_FIELDS,
    Phase,
    Problem,
    Procedure,
    Step,
)

#: A procedure is a few kilobytes; anything over this is refused before parsing.
MAX_PROCEDURE_BYTES = 1_000_000

_LINE_BREAK = re.compile(r"\r\n|\r|\n")
# No pattern here has a lazy group followed by optional whitespace and an anchor: on a
# 1 MB line of spaces that backtracks quadratically. Values are stripped in Python.
_HEADER = re.compile(r"^([A-Za-z][A-Za-z0-9 _-]{0,30}):(.*)$")
_HEADING = re.compile(r"^ {0,3}(#{1,6})(?:[ \t](.*))?$")
_BULLET = re.compile(r"^ {0,3}[-*+][ \t](.*)$")
_FIELD = re.compile(r"^([A-Za-z][A-Za-z _-]{0,30}?)[ \t]*:(.*)$")
_FENCE = re.compile(r"^ {0,3}(```|~~~)")
_HOLD = re.compile(r"^([0-9]+(?:\.[0-9]+)?)\s*(s|sec|secs|second|seconds|min|mins|minute|minutes)?$", re.I)
#: Characters no text file holds (tab, line breaks and form feed are allowed).
_CONTROL = re.compile("[\x01-\x08\x0b\x0e-\x1f\ud800-\udfff]")
_QUOTES = "\"'“”‘’«»"

#: Every state word a step may name, e.g. "brake on".
STATE_WORDS: tuple[str, ...] = tuple(f"{k} {v}" for k, vs in STATE_VALUES.items() for v in vs)
#: A hold longer than this is surely a typing error.
MAX_HOLD_S = 3600.0


def load_procedure(path: str | Path) -> Procedure:
    """Read and parse the procedure file at ``path``.

    :returns: the parsed :class:`Procedure` (problems inside it are for the checker).
    :raises ProcedureFileError: when the file cannot be read, is over 1 MB, is not
        UTF-8 text, or is empty.
    """
    path = Path(path)
    try:
        with path.open("rb") as handle:
            data = handle.read(MAX_PROCEDURE_BYTES + 1)
    except OSError as exc:
        raise ProcedureFileError(f"{path}: cannot read the file ({exc.strerror or exc})") from None
    if len(data) > MAX_PROCEDURE_BYTES:
        raise ProcedureFileError(f"{path}: file is over {MAX_PROCEDURE_BYTES:,} bytes; "
                                 "a procedure is a few kB of Markdown")
    if b"\x00" in data:
        raise ProcedureFileError(f"{path}: binary file (it holds NUL bytes); a procedure is Markdown text")
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise ProcedureFileError(f"{path}: not UTF-8 text (bad byte at offset {exc.start}); "
                                 "save the procedure as UTF-8 Markdown") from None
    return parse_procedure(text, source=str(path))


def parse_procedure(text: str, source: str = "<procedure>") -> Procedure:
    """Parse procedure ``text``; ``source`` names it in messages.

    :returns: a :class:`Procedure`; what could not be read is in ``.problems``.
    :raises ProcedureFileError: when ``text`` is not a string, is empty, is over
        1 MB, or is not text (NUL bytes or mostly control characters).
    """
    if not isinstance(text, str):
        raise ProcedureFileError(f"{source}: expected text, got {type(text).__name__}")
    if len(text) > MAX_PROCEDURE_BYTES or len(text.encode("utf-8", "surrogatepass")) > MAX_PROCEDURE_BYTES:
        raise ProcedureFileError(f"{source}: text is over {MAX_PROCEDURE_BYTES:,} bytes; "
                                 "a procedure is a few kB of Markdown")
    if "\x00" in text:
        raise ProcedureFileError(f"{source}: binary data (it holds NUL characters); a procedure is Markdown text")
    if text.startswith("\ufeff"):
        text = text[1:]
    if not text.strip():
        raise ProcedureFileError(f"{source}: the file is empty; a procedure starts with header lines "
                                 "(Title:, Rig:, Roles:, Signal:) and has ## phases with ### steps")
    controls = len(_CONTROL.findall(text))
    if controls > max(8, len(text) // 100):
        raise ProcedureFileError(f"{source}: not text ({controls} control characters); "
                                 "a procedure is Markdown text")
    return _Parser(text, source).run()


def split_lines(text: str) -> list[str]:
    """Split ``text`` into lines the way the parser numbers them (CR, LF or CRLF)."""
    return _LINE_BREAK.split(text)


def header_block_end(lines: list[str]) -> int:
    """Return the index of the first line after the ``Key: value`` header block."""
    i = 0
    while i < len(lines) and not lines[i].strip():
        i += 1
    while i < len(lines):
        line = lines[i]
        if not line.strip() or line.lstrip().startswith("#") or not _HEADER.match(line):
            break
        i += 1
    return i


def parse_states(value: str) -> list[str]:
    """Split a ``needs`` / ``sets`` / ``Start`` value into normalised state words."""
    return [" ".join(part.lower().split()) for part in value.split(",") if part.strip()]


def state_problem(word: str) -> str | None:
    """Return what is wrong with state ``word`` ("brake of"), or None when it is known."""
    if word in STATE_WORDS:
        return None
    subject = word.split(" ", 1)[0] if word else ""
    close = difflib.get_close_matches(word, STATE_WORDS, n=1, cutoff=0.6)
    if subject in STATE_VALUES:
        allowed = " or ".join(f'"{subject} {v}"' for v in STATE_VALUES[subject])
        return f'unknown state "{word}": {subject} is {allowed}'
    hint = f' (did you mean "{close[0]}"?)' if close else ""
    return f'unknown state "{word}"{hint}; states are ' + ", ".join(STATE_WORDS)


def _heading_text(text: str) -> str:
    """A heading's text without its optional closing ``#`` sequence."""
    text = text.strip()
    if text.endswith("#"):
        bare = text.rstrip("#")
        if not bare or bare[-1] in " \t":
            text = bare.strip()
    return text


def _unquote(value: str) -> str:
    value = value.strip()
    if len(value) >= 2 and value[0] in _QUOTES and value[-1] in _QUOTES:
        value = value[1:-1].strip()
    return value


def _parse_hold(value: str) -> float | None:
    match = _HOLD.match(value.strip())
    if not match:
        return None
    seconds = float(match.group(1))
    if (match.group(2) or "s").lower().startswith("m"):
        seconds *= 60.0
    if not math.isfinite(seconds) or seconds <= 0 or seconds > MAX_HOLD_S:
        return None
    return seconds


class _StepDraft:
    """A step while its bullets are read."""

    def __init__(self, title: str, line: int, phase: str):
        self.title = title
        self.line = line
        self.phase = phase
        self.values: dict[str, object] = {}
        self.field_lines: dict[str, int] = {}
        self.last_field: str | None = None


class _Parser:
    def __init__(self, text: str, source: str):
        self.lines = _LINE_BREAK.split(text)
        self.text = text
        self.source = source
        self.problems: list[Problem] = []
        self.headers: dict[str, str] = {}
        self.header_lines: dict[str, int] = {}
        self.doc_title: str | None = None
        self.phases: list[dict] = []         # {"title", "line", "stop", "steps": [_StepDraft]}
        self.step: _StepDraft | None = None

    def problem(self, line: int, message: str, found: str = "", step: str | None = None) -> None:
        self.problems.append(Problem(line=line, message=message, found=found, step=step))

    # -- the header block -------------------------------------------------------------
    def read_headers(self) -> int:
        """Read ``Key: value`` lines at the top; return the index of the first body line."""
        i = 0
        while i < len(self.lines) and not self.lines[i].strip():
            i += 1
        end = header_block_end(self.lines)
        while i < end:
            line = self.lines[i]
            match = _HEADER.match(line)
            if match is None:  # cannot happen: header_block_end only passes matching lines
                break
            name, value = match.group(1).strip().lower(), match.group(2).strip()
            number = i + 1
            if name not in HEADER_FIELDS:
                close = difflib.get_close_matches(name, HEADER_FIELDS, n=1, cutoff=0.6)
                hint = f' (did you mean "{close[0].title()}"?)' if close else ""
                self.problem(number, f'unknown header "{match.group(1).strip()}"{hint}; headers are '
                             + ", ".join(h.title() for h in HEADER_FIELDS), found=line.strip())
            elif name in self.headers:
                self.problem(number, f'header "{match.group(1).strip()}" given twice; the first one is used',
                             found=value)
            elif not value:
                self.problem(number, f'header "{match.group(1).strip()}" has no value', found=line.strip())
                self.header_lines[name] = number
            else:
                self.headers[name] = value
                self.header_lines[name] = number
            i += 1
        return i

    # -- the body ---------------------------------------------------------------------
    def run(self) -> Procedure:
        start = self.read_headers()
        in_fence = False
        for index in range(start, len(self.lines)):
            number = index + 1
            line = self.lines[index]
            first = line.lstrip(" ")[:1]  # dispatch on the first character: most lines are bullets
            if first in ("`", "~") and _FENCE.match(line):
                in_fence = not in_fence
                self.end_field()
                continue
            if in_fence:
                continue
            heading = _HEADING.match(line) if first == "#" else None
            if heading:
                self.on_heading(len(heading.group(1)), _heading_text(heading.group(2) or ""), number)
                continue
            bullet = _BULLET.match(line) if first in ("-", "*", "+") else None
            if bullet:
                self.on_bullet(bullet.group(1).strip(), number, line)
                continue
            if not first or not line.strip():
                self.end_field()
                continue
            if self.step is not None and self.step.last_field is not None:
                self.continue_field(line.strip())
        self.close_step()
        return self.build()

    def end_field(self) -> None:
        if self.step is not None:
            self.step.last_field = None

    def on_heading(self, level: int, title: str, number: int) -> None:
        if level == 1:
            self.close_step()
            if self.doc_title is None and title:
                self.doc_title = title
            return
        if level == 2:
            self.close_step()
            if not title:
                self.problem(number, "phase heading (##) with no title", found="##")
                title = f"(phase at line {number})"
            self.phases.append({"title": title, "line": number, "stop": False, "steps": [],
                                "stop_line": None})
            return
        if level == 3:
            self.close_step()
            if not self.phases:
                self.problem(number, "step before any ## phase heading; put steps under a phase",
                             found=f"### {title}", step=title or None)
                self.phases.append({"title": "(no phase)", "line": number, "stop": False, "steps": [],
                                    "stop_line": None})
            if not title:
                self.problem(number, "step heading (###) with no title", found="###")
                title = f"(step at line {number})"
            self.step = _StepDraft(title, number, self.phases[-1]["title"])
            return
        # level 4 and deeper: prose inside the step or phase
        self.end_field()

    def on_bullet(self, content: str, number: int, raw: str) -> None:
        match = _FIELD.match(content)
        if self.step is None:
            if self.phases and match:
                self.phase_field(match.group(1).strip().lower(), match.group(2).strip(), number)
            return  # prose bullets under a phase or the title are free text (cautions, purpose)
        if not match:
            self.step.last_field = None
            self.problem(number, "a bullet in a step must be `- field: value` (fields are "
                         + ", ".join(STEP_FIELDS) + ")", found=raw.strip(), step=self.step.title)
            return
        name, value = match.group(1).strip().lower(), match.group(2).strip()
        self.step_field(name, value, number, raw)

    def phase_field(self, name: str, value: str, number: int) -> None:
        phase = self.phases[-1]
        if name == "phase":
            if value.lower() == "stop":
                phase["stop"] = True
                phase["stop_line"] = number
            elif value.lower() not in ("main", ""):
                self.problem(number, f'"phase: {value}" is not understood; write "- phase: stop" '
                             "for the stop procedure", found=value)
            elif not value:
                self.problem(number, 'field "phase" has no value; write "- phase: stop"', found="phase:")
        elif name in STEP_FIELDS:
            self.problem(number, f'field "{name}" outside a step; put it under a ### step heading',
                         found=f"{name}: {value}")
        elif difflib.get_close_matches(name, ["phase"], n=1, cutoff=0.75):
            self.problem(number, f'unknown phase field "{name}" (did you mean "phase"?)', found=f"{name}: {value}")

    def step_field(self, name: str, value: str, number: int, raw: str) -> None:
        step = self.step
        if step is None:
            return
        if name not in STEP_FIELDS:
            close = difflib.get_close_matches(name, STEP_FIELDS, n=1, cutoff=0.6)
            hint = f' (did you mean "{close[0]}"?)' if close else ""
            self.problem(number, f'unknown field "{name}"{hint}; fields are ' + ", ".join(STEP_FIELDS),
                         found=raw.strip(), step=step.title)
            step.last_field = None
            return
        if name in step.field_lines and name not in ("needs", "sets"):
            self.problem(number, f'field "{name}" given twice in one step; the first one is used',
                         found=value, step=step.title)
            step.last_field = None
            return
        if not value:
            self.problem(number, f'field "{name}" has no value', found=f"{name}:", step=step.title)
            step.field_lines.setdefault(name, number)
            step.last_field = None
            return
        step.field_lines.setdefault(name, number)
        if name in ("needs", "sets"):
            existing = step.values.setdefault(name, [])
            existing.extend((word, number) for word in parse_states(value))  # type: ignore[union-attr]
        else:
            step.values[name] = value
        step.last_field = name

    def continue_field(self, text: str) -> None:
        step = self.step
        if step is None or step.last_field is None:
            return
        name = step.last_field
        if name in ("needs", "sets"):
            line = step.field_lines[name]
            step.values[name].extend((word, line) for word in parse_states(text))  # type: ignore[union-attr]
        else:
            step.values[name] = f"{step.values[name]} {text}"

    def close_step(self) -> None:
        if self.step is not None:
            self.phases[-1]["steps"].append(self.step)
            self.step = None

    # -- the model --------------------------------------------------------------------
    def build(self) -> Procedure:
        roles = tuple(dict.fromkeys(r.strip().lower() for r in self.headers.get("roles", "").split(",")
                                    if r.strip()))
        start = dict(REST_STATE)
        if "start" in self.headers:
            line = self.header_lines["start"]
            for word in parse_states(self.headers["start"]):
                why = state_problem(word)
                if why:
                    self.problem(line, why, found=word)
                elif word == "load ok":
                    self.problem(line, '"load ok" cannot be a starting state: it comes from the rig '
                                 "solver's verdict for tonight's riders", found=word)
                else:
                    subject, value = word.split(" ", 1)
                    start[subject] = value

        main_count = sum(len(p["steps"]) for p in self.phases if not p["stop"])
        counters = {"main": 0, "stop": main_count}
        phases = []
        for draft in self.phases:
            if not draft["steps"]:
                self.problem(draft["line"], f'phase "{draft["title"]}" has no steps; '
                             "add ### step headings under it", found=f"## {draft['title']}")
            steps = []
            for s in draft["steps"]:
                counter = "stop" if draft["stop"] else "main"
                counters[counter] += 1
                steps.append(self.build_step(s, counters[counter]))
            phases.append(Phase(title=draft["title"], line=draft["line"], stop=draft["stop"], steps=tuple(steps)))

        if not any(p.steps for p in phases):
            self.problem(1, "no steps found: a procedure has ## phase headings with ### step headings "
                         "under them, each with `- field: value` bullets", found="")
        headers = dict(self.headers)
        title = headers.get("title") or self.doc_title or Path(self.source).stem
        return Procedure(
            title=title,
            rig=headers.get("rig", "").strip(),
            roles=roles,
            signal=headers.get("signal") or None,
            start=start,
            phases=tuple(phases),
            text=self.text,
            source=self.source,
            headers=headers,
            header_lines=dict(self.header_lines),
            problems=tuple(sorted(self.problems, key=lambda p: p.line)),
        )

    def build_step(self, draft: _StepDraft, number: int) -> Step:
        values = draft.values
        if not draft.field_lines:
            self.problem(draft.line, "step has no fields; a step needs at least `- by: ROLE`",
                         found=f"### {draft.title}", step=draft.title)
        hold_s = None
        if "hold" in values:
            hold_s = _parse_hold(str(values["hold"]))
            if hold_s is None:
                self.problem(draft.field_lines["hold"], f'hold "{values["hold"]}" is not a time; write seconds '
                             f'(e.g. "- hold: 90") or minutes ("- hold: 2 min"), at most {MAX_HOLD_S:.0f} s',
                             found=str(values["hold"]), step=draft.title)
        fields = {}
        for name in ("by", "go", "check"):
            if name in values:
                fields[name] = " ".join(str(values[name]).lower().split())
        for name in ("say", "reply"):
            if name in values:
                fields[name] = _unquote(str(values[name]))
        for name in ("why", "note", "caution"):
            if name in values:
                fields[name] = str(values[name]).strip()
        return Step(
            title=draft.title,
            line=draft.line,
            phase=draft.phase,
            number=number,
            needs=tuple(word for word, _ in values.get("needs", [])),  # type: ignore[union-attr]
            sets=tuple(word for word, _ in values.get("sets", [])),  # type: ignore[union-attr]
            hold_s=hold_s,
            field_lines=dict(draft.field_lines),
            **fields,
        )
