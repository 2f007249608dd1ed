"""Helpers shared by the web and browser tests: parse pages rather than match substrings.

(``tests/`` is on ``sys.path`` because pytest puts the directory of the top conftest
there; import this as ``web_helpers``.)
"""

from __future__ import annotations

from html.parser import HTMLParser

#: One user per role; invented names (test fixtures only).
PASSWORD = "orchard-rehearsal-7"
ROLE_USERS = {
    "admin": ("tess", "Tess Okonjo"),
    "stage_manager": ("mara", "Mara Quill"),
    "crew": ("tomas", "Tomas Reyne"),
    "viewer": ("ines", "Ines Harrow"),
}


class FormReader(HTMLParser):
    """Collect the page's forms (action, method, inputs) and its CSRF meta token."""

    def __init__(self):
        super().__init__()
        self.forms: list[dict] = []
        self.meta_token: str | None = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "meta" and a.get("name") == "csrf-token":
            self.meta_token = a.get("content")
        elif tag == "form":
            self.forms.append({"action": a.get("action"), "method": (a.get("method") or "get").lower(),
                               "id": a.get("id"), "inputs": {}})
        elif tag in ("input", "select", "textarea", "button") and self.forms and a.get("name"):
            self.forms[-1]["inputs"].setdefault(a["name"], a.get("value", ""))


def read_forms(html: str) -> FormReader:
    reader = FormReader()
    reader.feed(html)
    return reader


class TextOf(HTMLParser):
    """Text of the elements with a given id or role (parse, do not substring-match)."""

    def __init__(self, attr: str, value: str):
        super().__init__()
        self.attr, self.value = attr, value
        self.depth = 0
        self.texts: list[str] = []

    def handle_starttag(self, tag, attrs):
        if self.depth:
            self.depth += 1
        elif dict(attrs).get(self.attr) == self.value:
            self.depth = 1
            self.texts.append("")

    def handle_endtag(self, tag):
        if self.depth:
            self.depth -= 1

    def handle_data(self, data):
        if self.depth:
            self.texts[-1] += data


def texts_by(html: str, attr: str, value: str) -> list[str]:
    """Text of every element whose ``attr`` is ``value``, whitespace collapsed."""
    parser = TextOf(attr, value)
    parser.feed(html)
    return [" ".join(t.split()) for t in parser.texts]


def alerts(html: str) -> list[str]:
    """Text of every ``role="alert"`` element (the messages a form re-renders with)."""
    return texts_by(html, "role", "alert")


class _AllText(HTMLParser):
    def __init__(self):
        super().__init__()
        self.parts: list[str] = []
        self.skip = 0

    def handle_starttag(self, tag, attrs):
        if tag in ("script", "style"):
            self.skip += 1

    def handle_endtag(self, tag):
        if tag in ("script", "style") and self.skip:
            self.skip -= 1

    def handle_data(self, data):
        if not self.skip:
            self.parts.append(data)


def read_text(response_or_html) -> str:
    """The visible text of a page (a response or HTML), whitespace collapsed."""
    html = response_or_html if isinstance(response_or_html, str) else response_or_html.get_data(as_text=True)
    parser = _AllText()
    parser.feed(html)
    return " ".join(" ".join(parser.parts).split())


