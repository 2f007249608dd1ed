"""Bind a procedure's ``{{ … }}`` placeholders and render it to safe HTML.

A procedure may be written by anyone with access, so nothing in it may run code or
inject script into the crew's pages:

- each placeholder is read on its own with Jinja2's immutable sandbox, with no
  globals, a short list of filters, no calls and no powers; a name or attribute
  that starts with ``_`` is refused before anything is evaluated;
- the Markdown is converted with the ``markdown`` package while every placeholder
  stands in as an inert token, the bound values are HTML-escaped into the tokens,
  and the whole page is then cleaned with ``nh3`` (script, event handlers and
  ``javascript:`` links removed);
- a placeholder that names nothing bound, or is refused, renders visibly as such and
  is reported by the checker (rule 9); it never raises.
"""

from __future__ import annotations

import html
import re
from collections.abc import Mapping
from dataclasses import dataclass
from functools import lru_cache
from typing import Any, Iterable, Literal

import markdown
import nh3
from jinja2 import nodes
from jinja2.exceptions import SecurityError, TemplateSyntaxError, UndefinedError
from jinja2.runtime import StrictUndefined
from jinja2.sandbox import ImmutableSandboxedEnvironment

from showops import CAUTION
from showops.procedure.model import Procedure
from showops.procedure.parse import header_block_end, split_lines

#: The names a placeholder may use (issue 3): the rig solver's result, tonight's
#: riders' names, the crew by role, the performance and the cue.
BOUND_NAMES: tuple[str, ...] = ("load", "riders", "crew", "performance", "cue")

#: Filters a placeholder may use. Left out on purpose: anything that can build a huge
#: string from a small one (center, indent, format, wordwrap, replace ...) and
#: ``attr``/``map`` (attribute access by string, a classic route to internals).
ALLOWED_FILTERS: frozenset[str] = frozenset({
    "abs", "capitalize", "count", "d", "default", "e", "escape", "first", "float", "int", "join", "last",
    "length", "list", "lower", "max", "min", "round", "sort", "string", "sum", "title", "trim", "unique",
    "upper",
})

#: A placeholder longer than this is surely not a placeholder.
MAX_PLACEHOLDER_CHARS = 400
#: A string or list built inside a placeholder may not grow beyond this.
MAX_BUILT_LENGTH = 10_000

_LINE_BREAK = re.compile(r"\r\n|\r|\n")


class _Any:
    """Stands for a bound value whose inside is not known when checking without data."""

    def __repr__(self) -> str:
        return "ANY"


ANY = _Any()


class CrewNames(list):
    """The people in one role: renders as ``"Ana, Ben"`` (or, visibly, that nobody is
    cast in it) and still works with ``join`` and ``length``."""

    def __init__(self, names: Iterable[str] = (), role: str = ""):
        super().__init__(names)
        self.role = role

    def __str__(self) -> str:
        if not self:
            return f"[nobody cast as {self.role or 'this role'}]"
        return ", ".join(str(name) for name in self)


class _Sandbox(ImmutableSandboxedEnvironment):
    """The sandbox with powers refused and repetition capped (no memory bombs)."""

    intercepted_binops = frozenset({"*", "**"})

    def call_binop(self, context, operator, left, right):
        if operator == "**":
            raise SecurityError("powers are not allowed in a placeholder")
        if operator == "*":
            for seq, times in ((left, right), (right, left)):
                if isinstance(seq, (str, list, tuple)) and isinstance(times, int):
                    if len(seq) * max(times, 0) > MAX_BUILT_LENGTH:
                        raise SecurityError("a placeholder may not build a value that long")
        return super().call_binop(context, operator, left, right)


def _environment() -> _Sandbox:
    env = _Sandbox(undefined=StrictUndefined, autoescape=False)
    env.globals.clear()
    env.filters = {name: f for name, f in env.filters.items() if name in ALLOWED_FILTERS}
    return env


_ENV = _environment()


@dataclass(frozen=True)
class Placeholder:
    """One ``{{ … }}`` in the text: where it is and what it says."""

    line: int
    start: int
    end: int
    expression: str

    @property
    def text(self) -> str:
        return "{{" + self.expression + "}}"


@dataclass(frozen=True)
class PlaceholderProblem:
    """Why a placeholder cannot be bound: ``kind`` is unbound, refused or unreadable."""

    kind: Literal["unbound", "refused", "unreadable"]
    message: str


def _pairs(text: str, opening: str, closing: str) -> tuple[list[tuple[int, int]], int | None]:
    """Spans of ``opening … closing`` (the first closing after each opening) and the
    offset of an opening never closed. Linear in the text: a regex with a lazy group
    rescans the rest of the text from every unclosed opening."""
    spans = []
    pos = 0
    while True:
        start = text.find(opening, pos)
        if start < 0:
            return spans, None
        end = text.find(closing, start + len(opening))
        if end < 0:
            return spans, start
        spans.append((start, end + len(closing)))
        pos = end + len(closing)


class _LineCounter:
    """1-based line of an offset, for offsets asked in increasing order."""

    def __init__(self, text: str):
        self.text, self.line, self.last = text, 1, 0

    def at(self, offset: int) -> int:
        self.line += len(_LINE_BREAK.findall(self.text, self.last, offset))
        self.last = offset
        return self.line


def find_placeholders(text: str) -> list[Placeholder]:
    """Return every ``{{ … }}`` in ``text`` with its 1-based line."""
    spans, _ = _pairs(text, "{{", "}}")
    lines = _LineCounter(text)
    return [Placeholder(line=lines.at(start), start=start, end=end, expression=text[start + 2:end - 2])
            for start, end in spans]


def find_unclosed(text: str) -> list[int]:
    """Return the line of a ``{{`` with no ``}}`` after it (at most one: the first)."""
    _, unclosed = _pairs(text, "{{", "}}")
    return [] if unclosed is None else [_LineCounter(text).at(unclosed)]


def find_statements(text: str) -> list[tuple[int, str]]:
    """Return ``{% … %}`` tags (which are not bound: only ``{{ }}`` placeholders are)."""
    spans, unclosed = _pairs(text, "{%", "%}")
    lines = _LineCounter(text)
    out = [(lines.at(start), text[start:end][:60]) for start, end in spans]
    if unclosed is not None:
        out.append((lines.at(unclosed), text[unclosed:unclosed + 60]))
    return out


def schema_context(*, load_keys: Iterable[str] | None = None, roles: Iterable[str] = ()) -> dict[str, Any]:
    """Return what a placeholder can name when no performance's data is at hand."""
    return {
        "load": {key: ANY for key in load_keys} if load_keys is not None else ANY,
        "riders": ANY,
        "crew": {role: ANY for role in roles},
        "performance": ANY,
        "cue": ANY,
    }


def render_context(*, load: Mapping[str, Any] | None = None, riders: Iterable[str] = (),
                   crew: Mapping[str, Iterable[str]] | None = None, performance: Any = None,
                   cue: Any = None) -> dict[str, Any]:
    """Build the context a procedure is bound to (only what is given is bound).

    :param load: the rig solver's ``to_dict()`` for tonight's riders.
    :param riders: tonight's riders' names (never their masses).
    :param crew: role -> the names of the people in it.
    """
    context: dict[str, Any] = {"riders": list(riders)}
    if load is not None:
        context["load"] = dict(load)
    if crew is not None:
        context["crew"] = {role: CrewNames(names, role=role) for role, names in crew.items()}
    if performance is not None:
        context["performance"] = performance
    if cue is not None:
        context["cue"] = cue
    return context


def complete_context(context: Mapping[str, Any], *, roles: Iterable[str] = (),
                     load: Mapping[str, Any] | None = None) -> dict[str, Any]:
    """Return ``context`` made whole: every role of the procedure bound (an empty list
    where nobody is cast), crew lists rendered as names, and ``load`` taken from the
    rig result when the caller did not bind it."""
    out = dict(context)
    crew = {role: CrewNames(role=role) for role in roles}
    for role, names in dict(out.get("crew") or {}).items():
        crew[role] = CrewNames([names] if isinstance(names, str) else list(names or ()), role=str(role))
    out["crew"] = crew
    out.setdefault("riders", [])
    if "load" not in out and load is not None:
        out["load"] = dict(load)
    return out


def check_placeholder(expression: str, bound: Mapping[str, Any]) -> PlaceholderProblem | None:
    """Say what is wrong with one placeholder against ``bound`` (None when it is fine).

    Checked without evaluating anything: it must parse as one expression; it may not
    call anything, raise to a power, use a filter outside :data:`ALLOWED_FILTERS`, or
    name anything starting with ``_``; every name and attribute chain must exist in
    ``bound`` (where a value is :data:`ANY` its inside is not checked).
    """
    parsed = _parse_expression(expression)
    if isinstance(parsed, PlaceholderProblem):
        return parsed
    return _walk(parsed, bound)


@lru_cache(maxsize=1024)
def _parse_expression(expression: str) -> nodes.Node | PlaceholderProblem:
    """The expression's syntax tree (cached: the same placeholders recur on every page)."""
    if len(expression) > MAX_PLACEHOLDER_CHARS:
        return PlaceholderProblem("unreadable", f"placeholder is over {MAX_PLACEHOLDER_CHARS} characters")
    try:
        template = _ENV.parse("{{" + expression + "}}")
    except TemplateSyntaxError as exc:
        return PlaceholderProblem("unreadable", f"placeholder cannot be read ({exc.message})")
    except Exception as exc:  # noqa: BLE001 - the lexer can fail in odd ways on hostile text
        return PlaceholderProblem("unreadable", f"placeholder cannot be read ({type(exc).__name__})")
    body = template.body
    if len(body) != 1 or not isinstance(body[0], nodes.Output) or len(body[0].nodes) != 1 \
            or isinstance(body[0].nodes[0], nodes.TemplateData):
        return PlaceholderProblem("unreadable", "placeholder is not one expression")
    return body[0].nodes[0]


@lru_cache(maxsize=1024)
def _compiled(expression: str):
    """The sandboxed template of one placeholder that passed :func:`check_placeholder`."""
    return _ENV.from_string("{{" + expression + "}}")


def _walk(node: nodes.Node, bound: Mapping[str, Any]) -> PlaceholderProblem | None:
    if isinstance(node, nodes.Call):
        return PlaceholderProblem("refused", "placeholder calls something; placeholders only read values")
    if isinstance(node, nodes.Pow):
        return PlaceholderProblem("refused", "powers are not allowed in a placeholder")
    if isinstance(node, nodes.Getattr) and node.attr.startswith("_"):
        return PlaceholderProblem("refused", f'placeholder reaches for Python internals ("{node.attr}")')
    if isinstance(node, nodes.Getitem) and isinstance(node.arg, nodes.Const) \
            and isinstance(node.arg.value, str) and node.arg.value.startswith("_"):
        return PlaceholderProblem("refused", f'placeholder reaches for Python internals ("{node.arg.value}")')
    if isinstance(node, nodes.Filter) and node.name not in ALLOWED_FILTERS:
        return PlaceholderProblem("refused", f'filter "{node.name}" is not allowed in a placeholder '
                                             f"(allowed: {', '.join(sorted(ALLOWED_FILTERS))})")
    if isinstance(node, (nodes.Name, nodes.Getattr, nodes.Getitem)):
        chain = _chain(node)
        if chain is not None:
            problem = _resolve(chain, bound)
            if problem:
                return problem
            if isinstance(node, nodes.Getitem) and not isinstance(node.arg, nodes.Const):
                return _walk(node.arg, bound)
            return None
    for child in node.iter_child_nodes():
        problem = _walk(child, bound)
        if problem:
            return problem
    return None


def _chain(node: nodes.Node) -> list | None:
    """``crew.brake`` -> ["crew", "brake"]; None when not rooted at a name."""
    parts: list = []
    while True:
        if isinstance(node, nodes.Name):
            return [node.name] + parts[::-1]
        if isinstance(node, nodes.Getattr):
            parts.append(node.attr)
            node = node.node
        elif isinstance(node, nodes.Getitem):
            parts.append(node.arg.value if isinstance(node.arg, nodes.Const) else ANY)
            node = node.node
        else:
            return None


def _resolve(chain: list, bound: Mapping[str, Any]) -> PlaceholderProblem | None:
    name, *rest = chain
    shown = ".".join(str(p) for p in chain if p is not ANY)
    if name not in bound:
        return PlaceholderProblem("unbound", f'placeholder "{shown}" names nothing bound '
                                             f"(bound: {', '.join(BOUND_NAMES)})")
    value = bound[name]
    walked = [name]
    for part in rest:
        if value is ANY or part is ANY:
            return None
        if isinstance(part, str) and part.startswith("_"):
            return PlaceholderProblem("refused", f'placeholder reaches for Python internals ("{part}")')
        if isinstance(value, Mapping):
            if part not in value:
                known = ", ".join(sorted(str(k) for k in value)[:12]) or "nothing"
                return PlaceholderProblem("unbound", f'placeholder "{shown}": {".".join(walked)} has no '
                                                     f'"{part}" (it has {known})')
            value = value[part]
        elif isinstance(value, (list, tuple)) and isinstance(part, int):
            if not -len(value) <= part < len(value):
                return PlaceholderProblem("unbound", f'placeholder "{shown}": {".".join(walked)} has '
                                                     f"{len(value)} entries, no [{part}]")
            value = value[part]
        elif isinstance(part, str) and not isinstance(value, (str, int, float, list, tuple)) \
                and hasattr(value, part):
            value = getattr(value, part)
        else:
            return PlaceholderProblem("unbound", f'placeholder "{shown}": {".".join(walked)} has no "{part}"')
        walked.append(str(part))
    return None


def bind_placeholder(expression: str, context: Mapping[str, Any]) -> tuple[str, PlaceholderProblem | None]:
    """Return the text a placeholder renders to, and its problem if it cannot be bound.

    Never raises: a refused or unbound placeholder comes back as a visible marker.
    """
    problem = check_placeholder(expression, context)
    if problem is None:
        try:
            value = _compiled(expression).render(dict(context))
            return value, None
        except SecurityError as exc:
            problem = PlaceholderProblem("refused", f"placeholder refused by the sandbox ({exc})")
        except UndefinedError as exc:
            problem = PlaceholderProblem("unbound", f"placeholder names nothing bound ({exc.message})")
        except Exception as exc:  # noqa: BLE001 - a bad filter argument must not crash a page
            problem = PlaceholderProblem("unreadable", f"placeholder cannot be rendered ({type(exc).__name__}: "
                                                       f"{str(exc)[:80]})")
    label = {"unbound": "not bound", "refused": "refused", "unreadable": "cannot be read"}[problem.kind]
    return f"[{label}: {{{{{expression.strip()[:60]}}}}}]", problem


#: Python-Markdown is quadratic in some inline constructs (unmatched "[" most of all)
#: and recursive in nesting; a procedure is a few kB of plain prose and steps. Text past
#: these budgets is shown as escaped preformatted text instead of being parsed, so a
#: hostile file renders in well under a second (bench: tests/procedure/test_render.py).
MAX_MARKDOWN_CHARS = 200_000
MAX_BLOCK_CHARS = 4_000
#: "[" and "<" open links, images, autolinks and raw HTML: each one makes the parser
#: scan ahead through its block, so they are the costliest marks.
MAX_BLOCK_OPENERS = 20
MAX_OPENERS = 100
MAX_BLOCK_MARKS = 200
MAX_MARKS = 2_000
MAX_INDENT = 12
#: A line that opens this many lists or quotes at its start ("- - - - x", ">>>> x")
#: nests that deep in one line; its first marker is escaped so it reads as text.
MAX_LINE_NESTING = 4
_MARKS = re.compile(r"[*_`\[\]<>&!\\~|]")
_NESTING = re.compile(r"^[ \t]*(?:(?:[-*+]|[0-9]{1,9}[.)])[ \t]+|>[ \t]*){%d,}" % MAX_LINE_NESTING)
_BLANK_LINES = re.compile(r"\n[ \t]*\n")


def _openers(text: str) -> int:
    return text.count("[") + text.count("<")


def _plain_block(text: str) -> str:
    return f'\n\n<pre class="plain">{html.escape(text)}</pre>\n\n'


def _tame_line(line: str) -> str:
    """Cap a line's indent and nesting (deep nesting recurses in the parser)."""
    stripped = line.lstrip(" \t")
    indent = line[: len(line) - len(stripped)].expandtabs(4)
    if len(indent) > MAX_INDENT:
        indent = " " * MAX_INDENT
    if _NESTING.match(stripped):
        stripped = "\\" + stripped
    return indent + stripped


def markdown_to_html(text: str) -> str:
    """Convert Markdown ``text`` to (unsanitised) HTML within the budgets above.

    Blocks (paragraphs between blank lines) over a budget are shown verbatim, escaped,
    in ``<pre class="plain">``; so is the whole text when it is over the total budgets.
    """
    if len(text) > MAX_MARKDOWN_CHARS or _openers(text) > MAX_OPENERS or len(_MARKS.findall(text)) > MAX_MARKS:
        return _plain_block(text)
    blocks = _BLANK_LINES.split("\n".join(_tame_line(line) for line in text.split("\n")))
    safe = []
    for block in blocks:
        if len(block) > MAX_BLOCK_CHARS or _openers(block) > MAX_BLOCK_OPENERS \
                or len(_MARKS.findall(block)) > MAX_BLOCK_MARKS:
            safe.append(_plain_block(block))
        else:
            safe.append(block)
    try:
        return markdown.markdown("\n\n".join(safe), extensions=["sane_lists", "tables"], output_format="html")
    except RecursionError:  # a nesting the budgets above did not foresee: show the text
        return _plain_block(text)


def _token(index: int) -> str:
    return f"SHOWOPSPLACEHOLDER{index:06d}Z"


_ALLOWED_ATTRIBUTES = {tag: set(attrs) for tag, attrs in nh3.ALLOWED_ATTRIBUTES.items()}
for _tag in ("span", "p", "div", "dl", "section", "h1", "h2", "h3", "pre"):
    _ALLOWED_ATTRIBUTES.setdefault(_tag, set()).add("class")


def sanitise_html(fragment: str) -> str:
    """Clean ``fragment`` with nh3: no script, no event handlers, no ``javascript:``."""
    return nh3.clean(fragment, attributes=_ALLOWED_ATTRIBUTES)


def render_procedure_html(procedure: Procedure, context: Mapping[str, Any] | None = None) -> str:
    """Render ``procedure`` to a sanitised HTML fragment, placeholders bound to ``context``.

    :param context: see :func:`render_context` (keys ``load``, ``riders``, ``crew``,
        ``performance``, ``cue``); a name that is missing renders as "[not bound: …]".
    :returns: HTML with the header (rig, roles, signal), the body and the caution.
    """
    context = complete_context(context or {}, roles=procedure.roles)
    lines = split_lines(procedure.text)
    body = "\n".join(lines[header_block_end(lines):])
    pieces: list[str] = []
    replacements: list[str] = []

    parts = []
    last = 0
    for placeholder in find_placeholders(body):
        value, problem = bind_placeholder(placeholder.expression, context)
        css = "placeholder" if problem is None else f"placeholder {problem.kind}"
        replacements.append(f'<span class="{css}">{html.escape(value)}</span>')
        parts += [body[last:placeholder.start], _token(len(replacements) - 1)]
        last = placeholder.end
    parts.append(body[last:])
    tokenised = "".join(parts)
    converted = markdown_to_html(tokenised)
    converted = re.sub(r"SHOWOPSPLACEHOLDER(\d{6})Z",
                       lambda m: replacements[int(m.group(1))] if int(m.group(1)) < len(replacements) else "",
                       converted)
    header = ['<dl class="procedure-header">']
    for label, value in (("Procedure", procedure.title), ("Rig", procedure.rig),
                         ("Roles", ", ".join(procedure.roles)), ("Emergency signal", procedure.signal or "NONE AGREED"),
                         ("Version", procedure.version[:12])):
        header.append(f"<dt>{html.escape(label)}</dt><dd>{html.escape(value or '')}</dd>")
    header.append("</dl>")
    pieces.append("".join(header))
    pieces.append(converted)
    pieces.append(f'<p class="caution">Caution: {html.escape(CAUTION)}</p>')
    return sanitise_html("\n".join(pieces))
