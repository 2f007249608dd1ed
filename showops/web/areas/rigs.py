"""Rigs and their limits: read by everyone who plans, changed only by the technical director.

A change of a limit writes a new version of the rig file (the old text is kept: each
version is its SHA-256), so every verdict and log row names the rig version it was
made with. The page then shows every performance's cues on that rig with their
verdict before and after the change, recomputed from the new version, and the change
is one row of the show log (``rig_changed``) naming who made it.
"""

from __future__ import annotations

import json
import re
import tomllib
from datetime import datetime, timezone

from flask import Blueprint, render_template, request

from showops.errors import ShowopsError, ValidationError
from showops.store import webviews
from showops.web import get_db, nav_item
from showops.web.auth import current_user, device_id, roles_required

bp = Blueprint("rigs", __name__, url_prefix="/rigs")

_NUMBER = re.compile(r"^[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?$")


def current_limits(text: str) -> dict[str, object]:
    """The scalar values of the rig file's ``[limits]`` table, in file order.

    :raises ValidationError: when the text is not TOML or has no ``[limits]`` table.
    """
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ValidationError("rig file", f"not valid TOML ({exc})") from None
    limits = data.get("limits")
    if not isinstance(limits, dict):
        raise ValidationError("rig file", "has no [limits] table")
    return {k: v for k, v in limits.items() if isinstance(v, (int, float, str)) and not isinstance(v, bool)}


def _toml_value(raw: str) -> str:
    raw = raw.strip()
    if _NUMBER.match(raw):
        return raw
    # a TOML basic string; JSON's escapes are a subset of TOML's
    return json.dumps(raw, ensure_ascii=False)


def _split_value_comment(rest: str) -> tuple[str, str]:
    """Split what follows ``key =`` into the value and its trailing comment (kept)."""
    stripped = rest.lstrip()
    lead = rest[: len(rest) - len(stripped)]
    if stripped.startswith('"'):
        i, escaped = 1, False
        while i < len(stripped):
            ch = stripped[i]
            if ch == '"' and not escaped:
                break
            escaped = ch == "\\" and not escaped
            i += 1
        value, tail = stripped[: i + 1], stripped[i + 1:]
    else:
        cut = stripped.find("#")
        value, tail = (stripped, "") if cut < 0 else (stripped[:cut], stripped[cut:])
        spaces = value[len(value.rstrip()):]
        value, tail = value.rstrip(), spaces + tail
    return lead + value, tail


def set_limits(text: str, changes: dict[str, str], *, note: str) -> str:
    """Return the rig file ``text`` with the ``[limits]`` values in ``changes`` replaced.

    Comments and layout are kept; a key not yet in the table is added at its end; a
    comment line ``note`` is put at the top so the new version says who changed what.
    Values that are plain numbers are written as numbers, anything else (a unit
    string such as ``"150 kg"``) as a TOML string.

    :raises ValidationError: when there is no ``[limits]`` table or a key is not a bare key.
    """
    lines = text.splitlines(keepends=True)
    start = next((i for i, line in enumerate(lines) if line.strip() == "[limits]"), None)
    if start is None:
        raise ValidationError("rig file", "has no [limits] table")
    end = next((i for i in range(start + 1, len(lines)) if lines[i].lstrip().startswith("[")), len(lines))
    pending = dict(changes)
    for i in range(start + 1, end):
        match = re.match(r"^(\s*)([A-Za-z0-9_-]+)(\s*=)(.*?)(\r?\n)?$", lines[i])
        if not match or match.group(2) not in pending:
            continue
        indent, key, eq, rest, newline = match.groups()
        _, comment = _split_value_comment(rest)
        lines[i] = f"{indent}{key}{eq} {_toml_value(pending.pop(key))}{comment}{newline or ''}"
    if pending:
        insert_at = end
        while insert_at > start + 1 and not lines[insert_at - 1].strip():
            insert_at -= 1
        for key, raw in pending.items():
            if not re.match(r"^[A-Za-z0-9_-]+$", key):
                raise ValidationError(key, "is not a limit name")
            lines.insert(insert_at, f"{key} = {_toml_value(raw)}\n")
            insert_at += 1
    if lines and not lines[-1].endswith("\n"):
        lines[-1] += "\n"
    return f"# {note}\n" + "".join(lines)


def _verdicts_on(db, slug: str) -> dict[tuple[int, int], dict]:
    from showops.store.show import night_plans

    found = {}
    for plan in night_plans(db):
        for cue in plan.cues:
            if cue.rig == slug:
                found[(plan.performance_id, cue.cue_id)] = {
                    "starts_at": plan.starts_at, "number": cue.number, "name": cue.name,
                    "verdict": cue.verdict, "reasons": cue.reasons, "rig_version": cue.rig_version}
    return found


#: the unit a rig model's field name ends with (the SI-inside convention), as people write it
_UNIT_OF_SUFFIX = {"kg": "kg", "n": "N", "nm": "N·m", "m": "m", "s": "s"}


def limit_units(text: str, slug: str) -> dict[str, str]:
    """The SI unit of each ``[limits]`` key that is a quantity, read from the parsed rig
    model's field names (``stand_moment`` -> ``stand_moment_nm`` -> N·m), so a new rig
    kind's limits get their units without a list here. Empty when the text does not
    parse (the page still shows the values as written)."""
    import dataclasses

    from showops.store.show import parse_stored_rig

    try:
        model = parse_stored_rig(text, slug)
    except ShowopsError:
        return {}
    units = {}
    for f in dataclasses.fields(model.limits):
        base, _, suffix = f.name.rpartition("_")
        if base and suffix in _UNIT_OF_SUFFIX:
            units[base] = _UNIT_OF_SUFFIX[suffix]
    return units


@bp.app_template_filter("utc_minute")
def shown_time(value: str | None) -> str:
    """A stored ISO 8601 time as people read it on the page (``2026-12-02 05:44 UTC``)."""
    if not value:
        return ""
    try:
        at = datetime.fromisoformat(value)
    except ValueError:
        return value
    if at.tzinfo is not None:
        return at.astimezone(timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    return at.strftime("%Y-%m-%d %H:%M")


@bp.route("")
@nav_item("Rigs and limits", 60)
@roles_required("admin", "stage_manager", "viewer")
def index():
    """Every rig, its kind, its current version and limits."""
    db = get_db()
    rows = []
    for rig in webviews.rigs(db):
        try:
            limits = current_limits(rig["text"] or "")
        except ShowopsError:
            limits = {}
        rows.append(dict(rig, limits=limits, units=limit_units(rig["text"] or "", rig["slug"])))
    return render_template("rigs/index.html", rigs=rows)


def _page(slug: str, *, message: str | None = None, status: int = 200, form: dict | None = None,
          changed: list | None = None, change_list: list | None = None):
    rig = webviews.rig(get_db(), slug)
    limits = current_limits(rig["text"] or "")
    return render_template("rigs/rig.html", rig=rig, limits=limits, units=limit_units(rig["text"] or "", slug),
                           message=message, form=form or {},
                           changed=changed, change_list=change_list), status


@bp.route("/<slug>")
@roles_required("admin", "stage_manager", "viewer")
def show(slug: str):
    """One rig: its limits (a form for the technical director), its versions, its file."""
    return _page(slug)


@bp.route("/<slug>/limits", methods=["POST"])
@roles_required("admin")
def change_limits(slug: str):
    """Change limits: a new rig version, the verdicts recomputed, the change logged."""
    from showops.store.log import append_events
    from showops.store.show import add_rig

    db = get_db()
    rig = webviews.rig(db, slug)
    before_limits = current_limits(rig["text"])
    form = {k: request.form.get(f"limit-{k}", "").strip() for k in before_limits}
    changes = {k: v for k, v in form.items() if v != "" and str(before_limits[k]) != v}
    reason = request.form.get("reason", "").strip()
    try:
        if not changes:
            raise ValidationError("limits", "nothing changed (type a new value, then save)")
        if not reason:
            raise ValidationError("reason", "say why the limits change (it goes in the log and the file)")
        user = current_user()
        stamp = datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
        summary = ", ".join(f"{k} {before_limits[k]} -> {v}" for k, v in changes.items())
        note = f"{stamp}: limits changed by {user.display_name} in showops ({summary}); why: {reason}"
        new_text = set_limits(rig["text"], changes, note=" ".join(note.split()))
        before = _verdicts_on(db, slug)
        version = add_rig(db, slug, new_text, source=f"rig {slug} (new limits)")
    except ShowopsError as exc:
        return _page(slug, message=str(exc), status=exc.status, form=form)
    after = _verdicts_on(db, slug)
    changed = []
    for key, now in sorted(after.items(), key=lambda kv: (kv[1]["starts_at"], kv[1]["number"])):
        was = before.get(key, {})
        changed.append(dict(now, before=was.get("verdict"), performance_id=key[0]))
    append_events(db, [{
        "event": "rig_changed", "person_id": user.person_id, "person_name": user.display_name, "role": user.role,
        "device": device_id(), "rig_version": version,
        "detail": {"rig": slug, "from_version": rig["version"], "to_version": version,
                   "changes": {k: {"from": before_limits[k], "to": v} for k, v in changes.items()},
                   "reason": reason,
                   "verdicts_changed": sum(1 for c in changed if c["before"] != c["verdict"])},
    }])
    return _page(slug, message=None, changed=changed,
                 change_list=[(k, before_limits[k], v) for k, v in changes.items()])
