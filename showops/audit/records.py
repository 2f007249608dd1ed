"""Incident, near-miss and unsafe-condition records, and their corrective actions.

The fields and their order follow published practice:

- kinds: UK HSE HSG245 *Investigating accidents and incidents* (accident, near
  miss, undesired circumstance) and ISO 45001:2018 §3.35 (incident: an occurrence
  that results or could result in injury; a near miss is an incident without injury);
- the injury fields: US OSHA 29 CFR 1904, Form 301 *Injury and Illness Incident
  Report* (what the person was doing, what happened, the injury and body part, the
  object or substance, the times, treatment), with its warning not to put personal
  data in narrative fields; records kept at least five years (29 CFR 1904.33);
- the process: ISO 45001:2018 §10.2 (react, investigate with the workers and find
  causes, look for similar events, review risk assessments, act by the hierarchy of
  controls, assess new hazards first, check the action worked);
- causes: HSG245 (immediate, underlying and root causes);
- controls: ISO 45001:2018 §8.1.2 (the hierarchy of controls).

This module validates input and holds the vocabularies; the store writes them.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from datetime import date, datetime, timezone
from typing import Literal

from showops.errors import ValidationError

Kind = Literal["incident", "near_miss", "unsafe_condition"]

#: Kind -> (label, meaning). HSE HSG245 and ISO 45001:2018 §3.35.
KINDS: dict[str, tuple[str, str]] = {
    "incident": ("Incident", "someone was injured or made ill (HSG245 'accident'; ISO 45001 §3.35)"),
    "near_miss": ("Near miss", "could have caused harm and did not (HSG245; ISO 45001 §3.35 note 1)"),
    "unsafe_condition": ("Unsafe condition", "a hazard found before anything happened "
                         "(HSG245 'undesired circumstance')"),
}

#: Treatment, OSHA 29 CFR 1904 Form 301 items 16-17 and §1904.7(b)(5) (first aid).
TREATMENTS: dict[str, str] = {
    "none": "no treatment",
    "first_aid": "first aid only (29 CFR 1904.7(b)(5)(ii))",
    "medical": "medical treatment beyond first aid",
    "emergency_room": "treated in an emergency room (Form 301 item 16)",
    "hospitalised": "in hospital overnight as an in-patient (Form 301 item 17)",
}

#: Corrective action states, in order. A verified action is closed for good; a done
#: action whose check fails goes back to open (ISO 45001 §10.2 f: review effectiveness).
ACTION_STATES: tuple[str, ...] = ("open", "done", "verified")
ACTION_MOVES: dict[str, tuple[str, ...]] = {"open": ("done",), "done": ("verified", "open"), "verified": ()}

#: The hierarchy of controls, most effective first (ISO 45001:2018 §8.1.2).
CONTROLS: dict[str, str] = {
    "eliminate": "eliminate the hazard",
    "substitute": "substitute a less hazardous process, operation or equipment",
    "engineering": "engineering controls and reorganisation of work",
    "administrative": "administrative controls, including training",
    "ppe": "personal protective equipment",
}

#: ISO 45001:2018 §10.2 a)-g), the order a record is taken through.
PROCESS: tuple[tuple[str, str], ...] = (
    ("react", "§10.2 a) react: control and correct it, deal with the consequences"),
    ("investigate", "§10.2 b) investigate with the workers involved: determine the causes"),
    ("similar", "§10.2 b) 3) determine whether similar incidents have occurred or could occur"),
    ("review", "§10.2 c) review the existing risk assessments"),
    ("act", "§10.2 d)-e) act by the hierarchy of controls, assessing new hazards first"),
    ("effective", "§10.2 f) review the effectiveness of the actions taken"),
    ("close", "§10.2 g) change the management system if needed; keep the evidence"),
)

#: Records are kept at least this long (29 CFR 1904.33: five years after the year's end).
RETENTION_YEARS = 5

NARRATIVE_MAX = 8000
SHORT_MAX = 2000


@dataclass(frozen=True)
class Person:
    """Someone involved, with their role that night (never their mass or health data)."""

    name: str
    role: str = ""


@dataclass(frozen=True)
class ReportInput:
    """A validated new report (what the reporter gives; classification comes later)."""

    kind: str
    occurred_at: datetime
    narrative: str
    doing: str = ""
    people: tuple[Person, ...] = ()
    injured: bool = False
    injury: str = ""
    treatment: str = "none"
    immediate_action: str = ""
    object_involved: str = ""
    warnings: tuple[str, ...] = field(default=())


def parse_when(value, field_name: str) -> datetime:
    """Read an ISO 8601 date-time (UTC if no offset is given).

    :raises ValidationError: naming the field and the value.
    """
    if isinstance(value, datetime):
        out = value
    else:
        try:
            out = datetime.fromisoformat(str(value).strip().replace("Z", "+00:00"))
        except ValueError:
            raise ValidationError(field_name, f"cannot read {value!r} as a date and time "
                                  "(give ISO 8601, e.g. 2026-11-20T21:40)") from None
    if out.tzinfo is None:
        out = out.replace(tzinfo=timezone.utc)
    return out.astimezone(timezone.utc)


def parse_day(value, field_name: str) -> date:
    """Read an ISO 8601 date (YYYY-MM-DD).

    :raises ValidationError: naming the field and the value.
    """
    if isinstance(value, date) and not isinstance(value, datetime):
        return value
    try:
        return date.fromisoformat(str(value).strip())
    except ValueError:
        raise ValidationError(field_name, f"cannot read {value!r} as a date (give YYYY-MM-DD)") from None


def _text(data: dict, key: str, *, required: bool = False, limit: int = SHORT_MAX) -> str:
    value = data.get(key)
    text = "" if value is None else str(value).strip()
    if required and not text:
        raise ValidationError(key, "is required")
    if len(text) > limit:
        raise ValidationError(key, f"is {len(text)} characters; keep it under {limit}")
    return text


_EMAIL = re.compile(r"[\w.+-]+@[\w-]+\.[\w.]+")
_PHONE = re.compile(r"(?<!\d)(?:\+?\d[\d ()-]{8,}\d)(?!\d)")
_BIRTH = re.compile(r"\b(?:born|d\.?o\.?b\.?|date of birth)\b", re.I)


def personal_data_hints(text: str) -> tuple[str, ...]:
    """Return warnings for personal data in a narrative (OSHA Form 301's caution).

    Form 301 asks that narratives hold no personal identifiers; this finds the common
    ones (an e-mail address, a phone number, a date of birth) so the form can warn.
    It warns and never refuses: a report backstage must not be lost to a filter.
    """
    hints = []
    if _EMAIL.search(text):
        hints.append("the narrative holds an e-mail address; leave contact details out of it")
    if _PHONE.search(text):
        hints.append("the narrative holds what looks like a phone number; leave it out")
    if _BIRTH.search(text):
        hints.append("the narrative mentions a date of birth; leave it out")
    return tuple(hints)


def parse_people(value) -> tuple[Person, ...]:
    """Read people as ``[{"name":..., "role":...}]`` or ``"Name (role); Name"`` text.

    :raises ValidationError: for an entry with no name.
    """
    if not value:
        return ()
    items = value if isinstance(value, (list, tuple)) else [p for p in str(value).split(";")]
    people = []
    for item in items:
        if isinstance(item, Person):
            people.append(item)
            continue
        if isinstance(item, dict):
            name, role = str(item.get("name", "")).strip(), str(item.get("role", "")).strip()
        else:
            match = re.fullmatch(r"\s*(.*?)\s*(?:\((.*?)\))?\s*", str(item))
            name, role = match.group(1), (match.group(2) or "").strip()
        if not name:
            if not role:
                continue
            raise ValidationError("people", f"an entry has a role ({role}) but no name")
        people.append(Person(name[:120], role[:60]))
    return tuple(people)


def validate_report(data: dict, *, now: datetime) -> ReportInput:
    """Validate a new report (anyone signed in may make one).

    :param data: ``kind``, ``occurred_at``, ``narrative`` (required) and ``doing``,
        ``people``, ``injured``, ``injury``, ``treatment``, ``immediate_action``,
        ``object_involved``.
    :param now: the server's time; an occurrence in the future is refused.
    :raises ValidationError: naming the first bad field.
    """
    kind = _text(data, "kind", required=True)
    if kind not in KINDS:
        raise ValidationError("kind", f"{kind!r} is not a kind (give one of {', '.join(KINDS)})")
    occurred = parse_when(data.get("occurred_at") or "", "occurred_at")
    if occurred > now.astimezone(timezone.utc):
        raise ValidationError("occurred_at", f"{occurred.isoformat()} is in the future")
    narrative = _text(data, "narrative", required=True, limit=NARRATIVE_MAX)
    injured = str(data.get("injured", "")).strip().lower() in ("1", "true", "yes", "on")
    treatment = _text(data, "treatment") or "none"
    if treatment not in TREATMENTS:
        raise ValidationError("treatment", f"{treatment!r} is not a treatment (give one of {', '.join(TREATMENTS)})")
    injury = _text(data, "injury")
    if injured and kind != "incident":
        raise ValidationError("kind", f"someone was injured, so this is an incident, not a {KINDS[kind][0].lower()}")
    if injured and not injury:
        raise ValidationError("injury", "say what the injury was and to which part of the body (Form 301 item 16)")
    if not injured and treatment != "none":
        raise ValidationError("treatment", "treatment was given, so mark the report as an injury")
    return ReportInput(
        kind=kind, occurred_at=occurred, narrative=narrative, doing=_text(data, "doing"),
        people=parse_people(data.get("people")), injured=injured, injury=injury, treatment=treatment,
        immediate_action=_text(data, "immediate_action"), object_involved=_text(data, "object_involved"),
        warnings=personal_data_hints(narrative + " " + _text(data, "doing")),
    )


@dataclass(frozen=True)
class ActionInput:
    """A validated corrective action."""

    description: str
    owner: str
    due: date
    control: str


def validate_action(data: dict, *, occurred_at: datetime) -> ActionInput:
    """Validate a corrective action for a record that occurred at ``occurred_at``.

    :raises ValidationError: for a missing description or owner, an unreadable due
        date, a due date before the occurrence, or an unknown control level.
    """
    description = _text(data, "description", required=True)
    owner = _text(data, "owner", required=True, limit=120)
    due = parse_day(data.get("due") or "", "due")
    if due < occurred_at.astimezone(timezone.utc).date():
        raise ValidationError("due", f"{due.isoformat()} is before the occurrence "
                              f"({occurred_at.date().isoformat()}); give a date on or after it")
    control = _text(data, "control") or "administrative"
    if control not in CONTROLS:
        raise ValidationError("control", f"{control!r} is not a control level (give one of {', '.join(CONTROLS)})")
    return ActionInput(description, owner, due, control)


def check_action_move(current: str, new: str) -> None:
    """Refuse a state change the action process does not allow.

    :raises ValidationError: e.g. open -> verified (it must be done before it is checked).
    """
    if new not in ACTION_STATES:
        raise ValidationError("state", f"{new!r} is not a state (give one of {', '.join(ACTION_STATES)})")
    if new not in ACTION_MOVES[current]:
        allowed = ", ".join(ACTION_MOVES[current]) or "nothing: it is closed"
        raise ValidationError("state", f"an action that is {current} cannot become {new} (it can become {allowed})")


def is_overdue(state: str, due: date, today: date) -> bool:
    """An action is overdue when it is still open after its due date."""
    return state == "open" and due < today


# -- attachments ------------------------------------------------------------------

#: Accepted attachments: media type -> (extensions, magic-byte test). The signatures
#: are the formats' own: JPEG SOI marker FF D8 FF (ITU-T T.81 / JFIF), PNG signature
#: (ISO/IEC 15948 §5.2), PDF header "%PDF-" (ISO 32000-1 §7.5.2), WebP "RIFF....WEBP"
#: (RFC 9649 §2).
ATTACHMENT_TYPES: dict[str, tuple[tuple[str, ...], object]] = {
    "image/jpeg": ((".jpg", ".jpeg"), lambda b: b[:3] == b"\xff\xd8\xff"),
    "image/png": ((".png",), lambda b: b[:8] == b"\x89PNG\r\n\x1a\n"),
    "application/pdf": ((".pdf",), lambda b: b[:5] == b"%PDF-"),
    "image/webp": ((".webp",), lambda b: b[:4] == b"RIFF" and b[8:12] == b"WEBP"),
}

#: The largest attachment accepted (a project choice: a phone photo is 2-8 MB).
ATTACHMENT_MAX_BYTES = 20 * 1024 * 1024


def sniff(head: bytes) -> str | None:
    """Return the media type the bytes are, or None when they are none of the accepted ones."""
    for media_type, (_, test) in ATTACHMENT_TYPES.items():
        if test(head):
            return media_type
    return None


def check_attachment(filename: str, head: bytes, size: int, declared_type: str | None = None) -> str:
    """Check an attachment before it is stored; return its media type.

    The type is read from the bytes; the name's extension and the declared type must
    agree with it, so a file that says it is a JPEG and is not is refused.

    :param head: at least the first 16 bytes.
    :param size: the whole file's size in bytes.
    :raises ValidationError: for an empty or too large file, an unknown type, or a
        name or declared type that does not match the bytes.
    """
    name = (filename or "").strip()
    if not name:
        raise ValidationError("attachment", "has no file name")
    if size <= 0:
        raise ValidationError("attachment", f"{name} is empty")
    if size > ATTACHMENT_MAX_BYTES:
        raise ValidationError("attachment", f"{name} is {size / 1048576:.0f} MB; the limit is "
                              f"{ATTACHMENT_MAX_BYTES // 1048576} MB")
    ext = ("." + name.rsplit(".", 1)[-1].lower()) if "." in name else ""
    claimed = {mt for mt, (exts, _) in ATTACHMENT_TYPES.items() if ext in exts}
    actual = sniff(head)
    if actual is None:
        what = f"says it is {', '.join(sorted(claimed))} but is not" if claimed else "is not an accepted type"
        raise ValidationError("attachment", f"{name} {what} (accepted: JPEG, PNG, WebP photos and PDF)")
    if claimed and actual not in claimed:
        raise ValidationError("attachment", f"{name} is named as {', '.join(sorted(claimed))} but its bytes "
                              f"are {actual}; rename it or attach the right file")
    if not claimed:
        raise ValidationError("attachment", f"{name}: the extension {ext or '(none)'} does not match its "
                              f"type {actual} (use {ATTACHMENT_TYPES[actual][0][0]})")
    declared = (declared_type or "").split(";")[0].strip().lower()
    if declared and declared not in ("application/octet-stream", actual):
        raise ValidationError("attachment", f"{name} was sent as {declared} but its bytes are {actual}")
    return actual
