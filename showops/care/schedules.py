"""Inspection schedules: the rule sets a venue chooses or edits, each rule with its source.

Every default names the regulation, standard or code of practice it comes from.
Wording and clause numbers marked "from memory" were recalled, not re-read: check
them against the text in force where the rig is used before relying on them.
"""

from __future__ import annotations

import calendar
from dataclasses import replace
from datetime import date

from showops.care.model import EVENT_KINDS, RULE_KINDS, Rule, RuleSet
from showops.errors import ValidationError

# --- sources, written once -------------------------------------------------------

LOLER_REG9_PEOPLE = ("LOLER 1998 reg 9(3)(a)(i): lifting equipment for lifting persons thoroughly "
                     "examined at least every 6 months (from memory)")
LOLER_REG9_OTHER = ("LOLER 1998 reg 9(3)(a)(ii): other lifting equipment at least every 12 months "
                    "(from memory)")
LOLER_REG9_EXCEPTIONAL = ("LOLER 1998 reg 9(3)(a)(iv): thoroughly examined each time exceptional "
                          "circumstances liable to jeopardise safety have occurred (from memory)")
LOLER_REG9_INSPECT = ("LOLER 1998 reg 9(3)(b): inspected by a competent person at suitable intervals "
                      "between thorough examinations; a check before each use (from memory)")
DGUV_315_390_PRE_USE = ("DGUV Grundsatz 315-390: check before each use (Prüfung vor Benutzung), "
                        "including a trial in motion (from memory)")
DGUV_V17_34_ANNUAL = ("DGUV Vorschrift 17 §34 with DGUV Grundsatz 315-390: recurring examination at "
                      "least once a year (from memory)")
DGUV_V17_34_EXPERT = ("DGUV Vorschrift 17 §34: recurring examination by an expert (Sachverständiger), "
                      "at least every 4 years (from memory)")
DGUV_315_390_EXTRA = ("DGUV Grundsatz 315-390: extraordinary examination after an incident, an "
                      "overload or a significant modification, before the next use (from memory)")
ANSI_E147_ANNUAL = ("ANSI E1.47 (entertainment rigging system inspections), with ANSI E1.4-1: "
                    "inspection by a qualified person at least annually")
ANSI_E147_PRE_USE = "ANSI E1.47: routine checks by the user before use (from memory)"
ANSI_E147_EXTRA = ("ANSI E1.47: inspection after an incident, overload or modification that may "
                   "affect the system (from memory)")

ALL_EVENTS: tuple[str, ...] = tuple(EVENT_KINDS)

DEFAULT_RULE_SETS: dict[str, RuleSet] = {
    rs.name: rs for rs in (
        RuleSet(
            name="uk-loler",
            title="UK: Lifting Operations and Lifting Equipment Regulations 1998",
            rules=(
                Rule("pre-use", "before_each_use", "check before each use, with a load trial in motion",
                     LOLER_REG9_INSPECT),
                Rule("thorough-6m", "interval", "thorough examination (equipment that lifts people)",
                     LOLER_REG9_PEOPLE, months=6),
                Rule("exceptional", "after_event", "thorough examination after exceptional circumstances",
                     LOLER_REG9_EXCEPTIONAL, events=ALL_EVENTS),
            ),
        ),
        RuleSet(
            name="de-dguv",
            title="Germany: DGUV Vorschrift 17/18 and DGUV Grundsatz 315-390",
            rules=(
                Rule("pre-use", "before_each_use", "check before each use, with a trial in motion",
                     DGUV_315_390_PRE_USE),
                Rule("annual", "interval", "recurring examination by a competent person",
                     DGUV_V17_34_ANNUAL, months=12),
                Rule("expert-4y", "interval", "recurring examination by an expert", DGUV_V17_34_EXPERT,
                     months=48, examiner="expert"),
                Rule("extraordinary", "after_event", "extraordinary examination", DGUV_315_390_EXTRA,
                     events=ALL_EVENTS),
            ),
        ),
        RuleSet(
            name="us-ansi",
            title="US: ANSI E1.47 and E1.4-1 (entertainment rigging)",
            rules=(
                Rule("pre-use", "before_each_use", "check before each use", ANSI_E147_PRE_USE),
                Rule("annual", "interval", "inspection by a qualified person", ANSI_E147_ANNUAL, months=12,
                     examiner="qualified person"),
                Rule("after-event", "after_event", "inspection after an incident, overload or modification",
                     ANSI_E147_EXTRA, events=ALL_EVENTS),
            ),
        ),
        RuleSet(
            name="strictest",
            title="The strictest of the published defaults (showops' default)",
            note="Each rule is the shortest interval of the sets above; keep it unless the venue's "
                 "competent person chooses another set.",
            rules=(
                Rule("pre-use", "before_each_use", "check before each use, with a load trial in motion",
                     DGUV_315_390_PRE_USE + "; " + LOLER_REG9_INSPECT),
                Rule("thorough-6m", "interval", "thorough examination (equipment that lifts people)",
                     LOLER_REG9_PEOPLE, months=6),
                Rule("annual", "interval", "annual inspection by a qualified person", ANSI_E147_ANNUAL,
                     months=12, examiner="qualified person"),
                Rule("extraordinary", "after_event", "extraordinary examination before the next use",
                     DGUV_315_390_EXTRA + "; " + LOLER_REG9_EXCEPTIONAL, events=ALL_EVENTS),
            ),
        ),
    )
}

#: The rule set a rig follows until the venue chooses another.
DEFAULT_RULE_SET = "strictest"


def add_months(day: date, months: int) -> date:
    """Return ``day`` moved by ``months`` calendar months, the day clamped to the month's end.

    31 August + 6 months is 28 (or 29) February: an examination is due within the
    interval, never after it.
    """
    index = day.month - 1 + months
    year, month = day.year + index // 12, index % 12 + 1
    return date(year, month, min(day.day, calendar.monthrange(year, month)[1]))


def edited_rule(rule: Rule, *, months: int | None = None, source: str | None = None,
                title: str | None = None, events: tuple[str, ...] | None = None) -> Rule:
    """Return ``rule`` with the venue's changes, refusing a change that makes it meaningless.

    A venue may shorten or lengthen an interval, but the source must then say who
    decided it (a lengthened interval is the venue's competent person's decision).

    :raises ValidationError: naming ``months``, ``source`` or ``events``.
    """
    changes: dict = {}
    if months is not None:
        if rule.kind != "interval":
            raise ValidationError("months", f"rule {rule.key!r} is a {rule.kind} rule and has no interval")
        if isinstance(months, bool) or not isinstance(months, int) or not 1 <= months <= 120:
            raise ValidationError("months", f"expected whole months from 1 to 120, got {months!r}")
        changes["months"] = months
        if source is None and months != rule.months:
            raise ValidationError("source", "say who set the new interval and why (e.g. 'venue competent "
                                            "person, examination scheme of 2026-03')")
    if source is not None:
        if not source.strip():
            raise ValidationError("source", "a rule must name where it comes from")
        changes["source"] = source.strip()
    if title is not None:
        if not title.strip():
            raise ValidationError("title", "a rule needs a title")
        changes["title"] = title.strip()
    if events is not None:
        if rule.kind != "after_event":
            raise ValidationError("events", f"rule {rule.key!r} is not an after-event rule")
        bad = [e for e in events if e not in EVENT_KINDS]
        if bad or not events:
            raise ValidationError("events", f"expected some of {', '.join(EVENT_KINDS)}, got {', '.join(events) or 'none'}")
        changes["events"] = tuple(events)
    return replace(rule, **changes)


def new_rule(key: str, kind: str, title: str, source: str, months: int | None = None,
             events: tuple[str, ...] = (), examiner: str = "competent person") -> Rule:
    """Return a venue-written rule after checking each field.

    :raises ValidationError: naming the field that is wrong.
    """
    if not key or not key.replace("-", "").isalnum():
        raise ValidationError("key", f"expected letters, digits and dashes, got {key!r}")
    if kind not in RULE_KINDS:
        raise ValidationError("kind", f"expected one of {', '.join(RULE_KINDS)}, got {kind!r}")
    if not title.strip():
        raise ValidationError("title", "a rule needs a title")
    if not source.strip():
        raise ValidationError("source", "a rule must name where it comes from")
    rule = Rule(key, kind, title.strip(), source.strip(), months=None, events=(), examiner=examiner)  # type: ignore[arg-type]
    if kind == "interval":
        if months is None:
            raise ValidationError("months", "an interval rule needs its interval in months")
        return edited_rule(rule, months=months, source=source)
    if kind == "after_event":
        return edited_rule(rule, events=tuple(events) or ALL_EVENTS)
    return rule
