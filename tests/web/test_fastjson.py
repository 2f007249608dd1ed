"""showops.web.fastjson: the app's JSON provider writes what the standard library's
json module writes (Python documentation, "json — JSON encoder and decoder", which
follows RFC 8259), read back value for value, and falls back to Flask's own encoder for
what orjson would write differently."""

from __future__ import annotations

import dataclasses
import json
import math
from datetime import date, datetime, timezone

from flask import Flask
from hypothesis import given, settings, strategies as st

from showops.web.fastjson import FastJSONProvider


def provider() -> FastJSONProvider:
    app = Flask("fastjson_test")
    app.json = FastJSONProvider(app)
    app.json.sort_keys = False
    return app.json


FAST = provider()

json_values = st.recursive(
    st.none() | st.booleans() | st.integers(min_value=-(2 ** 63), max_value=2 ** 64 - 1)
    | st.floats(allow_nan=False, allow_infinity=False) | st.text(),
    lambda inner: st.lists(inner, max_size=5) | st.dictionaries(st.text(max_size=8), inner, max_size=5),
    max_leaves=30)


@settings(max_examples=300, deadline=None)
@given(json_values)
def test_reads_back_as_the_standard_library_writes_it(value):
    ours = FAST.dumps(value)
    assert json.loads(ours) == json.loads(json.dumps(value))
    assert json.loads(FAST.dumps(value, separators=(",", ":"))) == json.loads(json.dumps(value))


def test_the_compact_form_flask_asks_for_is_byte_for_byte_the_standard_one_for_ascii():
    value = {"a": [1, 2.5, None, True], "b": {"c": "text"}}
    assert FAST.dumps(value, separators=(",", ":")) == json.dumps(value, separators=(",", ":"))


@dataclasses.dataclass
class Point:
    x: int
    y: float


def test_what_orjson_would_write_differently_goes_to_flasks_encoder():
    # Flask writes a datetime as an HTTP date and a date likewise (flask.json.provider._default),
    # a dataclass as its fields; ints beyond 64 bits and non-text keys as the standard library does.
    values = [
        {"at": datetime(2026, 11, 20, 19, 30, tzinfo=timezone.utc)},
        {"day": date(2026, 11, 20)},
        {"p": Point(1, 2.5)},
        {"big": 2 ** 70, "neg": -(2 ** 70)},
        {1: "one", 2: "two"},
    ]
    stdlib = provider()
    for value in values:
        want = json.dumps(value, default=stdlib.default)
        assert json.loads(FAST.dumps(value)) == json.loads(want), value


def test_the_debug_indent_is_the_standard_librarys():
    value = {"a": [1, {"b": 2}]}
    assert FAST.dumps(value, indent=2) == json.dumps(value, indent=2)


def test_a_float_that_is_not_finite_is_written_as_null_not_as_invalid_json():
    # RFC 8259 section 6: "Numeric values that cannot be represented ... (such as Infinity and NaN)
    # are not permitted." The standard library writes NaN; a browser's JSON.parse rejects it.
    assert json.loads(FAST.dumps({"x": math.nan, "y": math.inf})) == {"x": None, "y": None}


def test_the_app_answers_json_through_it(tmp_path):
    from showops.web import create_app

    app = create_app({"INSTANCE": str(tmp_path / "i"), "TESTING": True})
    assert isinstance(app.json, FastJSONProvider)
    with app.test_request_context():
        from flask import jsonify

        response = jsonify({"name": "Zoë", "n": 3})
    assert response.get_json() == {"name": "Zoë", "n": 3}
