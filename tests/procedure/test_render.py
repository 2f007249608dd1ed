"""Rendering: Markdown (the `markdown` package), sanitised with nh3, placeholders bound in
Jinja2's immutable sandbox. The attacks are the ones the OWASP XSS filter evasion cheat
sheet lists first (script tags, event handlers, javascript: URLs) and the sandbox escapes
Jinja2's own documentation warns about (attribute walks to __class__, __globals__)."""

from __future__ import annotations

import html.parser

import pytest

from showops import CAUTION
from showops.procedure import check_procedure, parse_procedure, render_context, render_procedure_html

from .conftest import SAFE, line_of


class _Collector(html.parser.HTMLParser):
    """Collect tags, attributes and text from rendered HTML (parse, don't grep)."""

    def __init__(self):
        super().__init__()
        self.tags: list[tuple[str, dict]] = []
        self.text: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))

    def handle_data(self, data):
        self.text.append(data)


def parsed(html_text: str) -> _Collector:
    collector = _Collector()
    collector.feed(html_text)
    return collector


def _render(body: str, context=None) -> str:
    text = SAFE.replace("Each lifter pulls {{ load.operator_force_per_person_n|round|int }} N.", body)
    return render_procedure_html(parse_procedure(text), context or {})


@pytest.mark.parametrize("attack", [
    "<script>alert(1)</script>",
    '<img src=x onerror="alert(1)">',
    "[click me](javascript:alert(1))",
    '<a href="javascript:alert(1)">click</a>',
    '<a href="JaVaScRiPt:alert(1)">click</a>',
    '<svg onload="alert(1)"></svg>',
    '<iframe src="https://example.invalid/"></iframe>',
    '<div style="background:url(javascript:alert(1))">x</div>',
    '<body onload="alert(1)">',
])
def test_rendering_sanitises(attack):
    out = parsed(_render(attack))
    for tag, attrs in out.tags:
        assert tag not in ("script", "iframe", "svg", "body")
        for name, value in attrs.items():
            assert not name.startswith("on")
            assert "javascript" not in (value or "").lower()
            assert name != "style"
    assert "alert(1)" not in "".join(t for t, a in out.tags)


def test_bound_values_are_escaped_not_markup():
    context = render_context(riders=["<script>alert(1)</script>", "[x](javascript:alert(1))"])
    out = _render("Riders: {{ riders|join(', ') }}", context)
    tags = parsed(out).tags
    assert all(tag != "script" for tag, _ in tags)
    assert all("javascript" not in (v or "") for _, attrs in tags for v in attrs.values())
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in out


def test_placeholders_are_bound():
    context = render_context(load={"operator_force_per_person_n": 122.6, "verdict": "ok"},
                             riders=["Ines", "Tomas"], crew={"brake": ["Jo"], "lifters": ["Sam", "Ade"]},
                             performance={"starts_at": "19:30"}, cue={"number": "14"})
    out = _render("Pull {{ load.operator_force_per_person_n|round|int }} N; riders {{ riders|join(' and ') }}; "
                  "brake {{ crew.brake }}; lifters {{ crew.lifters }}; cue {{ cue.number }} at "
                  "{{ performance.starts_at }}", context)
    text = "".join(parsed(out).text)
    assert "Pull 123 N; riders Ines and Tomas; brake Jo; lifters Sam, Ade; cue 14 at 19:30" in text


def test_header_and_caution_are_shown():
    text = "".join(parsed(render_procedure_html(parse_procedure(SAFE), {})).text)
    assert "arms crossed on the chest" in text
    assert CAUTION in text


@pytest.mark.parametrize("expression, kind", [
    ("{{ ''.__class__.__mro__ }}", "refused"),
    ("{{ cycler.__init__.__globals__ }}", "refused"),
    ("{{ riders.__class__ }}", "refused"),
    ("{{ riders['__class__'] }}", "refused"),
    ("{{ ''|attr('__class__') }}", "refused"),
    ("{{ lipsum.__globals__ }}", "refused"),
    ("{{ riders.append('x') }}", "refused"),
    ("{{ 'x' * 100000000 }}", "refused"),
    ("{{ 9 ** 9 ** 9 }}", "refused"),
    ("{{ 'x'|center(100000000) }}", "refused"),
    ("{{ crew.brak }}", "unbound"),
    ("{{ nothing }}", "unbound"),
    ("{{ range(10) }}", "refused"),
    ("{{ riders[ }}", "unreadable"),
])
def test_placeholders_that_reach_for_internals_are_refused_and_shown(expression, kind):
    context = render_context(riders=["Ines"], crew={"brake": ["Jo"]})
    out = _render(f"Value: {expression}", context)
    spans = [attrs.get("class", "") for tag, attrs in parsed(out).tags if tag == "span"]
    assert f"placeholder {kind}" in spans
    assert "<class" not in out and "function" not in out  # nothing of Python leaks out
    text = SAFE.replace("{{ load.operator_force_per_person_n|round|int }}", expression)
    findings = check_procedure(parse_procedure(text), context=context)
    line = line_of(text, f"Each lifter pulls {expression} N.")
    assert ("placeholders_bound", line) in {(f.rule, f.line) for f in findings}


def test_checking_without_data_knows_the_bound_names():
    text = SAFE.replace("{{ load.operator_force_per_person_n|round|int }}",
                        "{{ crew.lifters }} {{ riders|length }} {{ performance.anything }} {{ cue.number }}")
    assert [f for f in check_procedure(parse_procedure(text)) if f.rule == "placeholders_bound"] == []


# Inputs on which Python-Markdown alone is quadratic or recurses until RecursionError
# (measured here: 4,000 unmatched "[" in one paragraph took 18 s; "- " * 1000 raised
# RecursionError). Each must render, escaped, in well under the limit below.
HOSTILE = {
    "unmatched brackets": "[" * 200_000,
    "unclosed links": "[a](" * 50_000,
    "autolinks": ("<http://a" * 199 + "\n\n") * 10,
    "bracket paragraphs": (("[" + "x" * 190) * 19 + "\n\n") * 5,
    "nested quotes": ">" * 200_000 + " x",
    "nested lists on one line": "- " * 1900 + "x",
    "deeply indented lists": "".join("  " * i + "- x\n" for i in range(900)),
    "open comments": "<!--" * 50_000,
    "emphasis": "*a" * 100_000,
    "many lines": "x\n" * 300_000,
}


@pytest.mark.parametrize("name", HOSTILE)
def test_hostile_markdown_renders_quickly_and_safely(name):
    import time

    text = "Title: t\nRig: r\n\n## P\n" + HOSTILE[name]
    started = time.perf_counter()
    out = render_procedure_html(parse_procedure(text), {})
    elapsed = time.perf_counter() - started
    assert elapsed < 8.0, f"{name}: {elapsed:.1f} s"
    assert CAUTION in "".join(parsed(out).text)


def test_ordinary_markdown_is_still_markdown():
    out = _render("A [link](https://example.invalid/x) and *emphasis*.\n\n- a\n  - b\n\n> quoted\n\n1. one\n2. two")
    tags = [t for t, _ in parsed(out).tags]
    assert {"a", "em", "ul", "blockquote", "ol"} <= set(tags)
    assert "pre" not in tags
