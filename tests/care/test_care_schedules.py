"""Inspection rule sets: the default intervals and the regulation each comes from.

Sources (checked here, clause numbers from memory where marked in the code):
- LOLER 1998 reg 9(3)(a)(i): equipment for lifting persons, thorough examination at
  least every 6 months; reg 9(3)(a)(iv): after exceptional circumstances;
- DGUV Vorschrift 17 §34 with DGUV Grundsatz 315-390: recurring examination, annual by a
  competent person, every 4 years by an expert (from memory);
- ANSI E1.47: inspection by a qualified person at least annually;
- calendar month arithmetic against python-dateutil's ``relativedelta`` (a general-purpose
  reference library, brought in by matplotlib).
"""

from __future__ import annotations

import random
from datetime import date, timedelta

import pytest
from dateutil.relativedelta import relativedelta

from showops.care.schedules import DEFAULT_RULE_SET, DEFAULT_RULE_SETS, add_months, edited_rule, new_rule
from showops.errors import ValidationError


@pytest.mark.parametrize("rule_set, key, months, source_words", [
    ("uk-loler", "thorough-6m", 6, "LOLER 1998 reg 9(3)(a)(i)"),
    ("de-dguv", "annual", 12, "DGUV Vorschrift 17 §34"),
    ("de-dguv", "expert-4y", 48, "DGUV Vorschrift 17 §34"),
    ("us-ansi", "annual", 12, "ANSI E1.47"),
    ("strictest", "thorough-6m", 6, "LOLER 1998 reg 9(3)(a)(i)"),
    ("strictest", "annual", 12, "ANSI E1.47"),
])
def test_default_intervals_and_their_sources(rule_set, key, months, source_words):
    rule = DEFAULT_RULE_SETS[rule_set].rule(key)
    assert rule is not None and rule.kind == "interval"
    assert rule.months == months
    assert source_words in rule.source


@pytest.mark.parametrize("name", sorted(DEFAULT_RULE_SETS))
def test_every_default_set_checks_before_use_and_after_events(name):
    rs = DEFAULT_RULE_SETS[name]
    assert len(rs.of_kind("before_each_use")) == 1
    (after,) = rs.of_kind("after_event")
    assert set(after.events) == {"incident", "overload", "modification"}
    # every rule names where it comes from
    assert all(rule.source.strip() for rule in rs.rules)


def test_people_lifting_interval_is_the_default():
    # LOLER 1998 reg 9(3)(a)(i): six months for equipment that lifts people; the default
    # set must not be laxer than that.
    shortest = min(r.months for r in DEFAULT_RULE_SETS[DEFAULT_RULE_SET].of_kind("interval"))
    assert shortest == 6


@pytest.mark.parametrize("start, months, expected", [
    (date(2026, 1, 15), 6, date(2026, 7, 15)),
    (date(2026, 8, 31), 6, date(2027, 2, 28)),     # clamped to the month's end
    (date(2027, 8, 31), 6, date(2028, 2, 29)),     # leap year
    (date(2026, 12, 1), 12, date(2027, 12, 1)),
    (date(2026, 3, 31), 1, date(2026, 4, 30)),
])
def test_add_months_table(start, months, expected):
    assert add_months(start, months) == expected


def test_add_months_agrees_with_dateutil():
    # python-dateutil's relativedelta clamps to the month's end the same way.
    rng = random.Random(20261202)
    for _ in range(2000):
        start = date(2020, 1, 1) + timedelta(days=rng.randrange(0, 3650))
        months = rng.randrange(0, 61)
        assert add_months(start, months) == start + relativedelta(months=months)


def test_edit_interval_needs_a_source():
    rule = DEFAULT_RULE_SETS["uk-loler"].rule("thorough-6m")
    with pytest.raises(ValidationError) as err:
        edited_rule(rule, months=12)
    assert err.value.field == "source"
    changed = edited_rule(rule, months=3, source="venue competent person, scheme of 2026-03")
    assert changed.months == 3 and "venue" in changed.source


@pytest.mark.parametrize("kwargs, field", [
    ({"months": 0, "source": "x"}, "months"),
    ({"months": 121, "source": "x"}, "months"),
    ({"months": True, "source": "x"}, "months"),
    ({"source": "  "}, "source"),
    ({"events": ("flood",)}, "events"),
])
def test_edit_refuses_bad_values(kwargs, field):
    rule = DEFAULT_RULE_SETS["uk-loler"].rule("thorough-6m")
    if field == "events":
        rule = DEFAULT_RULE_SETS["uk-loler"].rule("exceptional")
    with pytest.raises(ValidationError) as err:
        edited_rule(rule, **kwargs)
    assert err.value.field == field


@pytest.mark.parametrize("args, field", [
    (("bad key!", "interval", "t", "s", 6), "key"),
    (("k", "weekly", "t", "s", 6), "kind"),
    (("k", "interval", "", "s", 6), "title"),
    (("k", "interval", "t", "", 6), "source"),
    (("k", "interval", "t", "s", None), "months"),
])
def test_new_rule_refuses(args, field):
    with pytest.raises(ValidationError) as err:
        new_rule(*args)
    assert err.value.field == field


def test_new_rule_after_event_defaults_to_every_event():
    rule = new_rule("after-storm", "after_event", "check after an event", "venue risk assessment")
    assert rule.events == ("incident", "overload", "modification")
