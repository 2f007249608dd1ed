"""The JSON API under ``/api/`` that the live pages use (and anyone may script).

Every failure answers one shape, ``{"error": {"status": N, "message": "..."}}``; a
refused attempt is status 409 with the reason a crew understands as the message.
Actions are POSTs with a JSON body; ``client_id`` makes them idempotent (a retry
gets the first answer again and writes nothing). Reads are GETs that the pages poll.
``/api/openapi.json`` describes every route (OpenAPI 3.0, built from the routes
themselves so it cannot leave one out).

The confirmations go through one :class:`~showops.store.log.LogWriter` per app: a
single thread decides and commits what is waiting in one transaction with
``synchronous=FULL``, and a success is answered only after that commit.
"""

from __future__ import annotations

import re
import threading
from typing import Any

from flask import Blueprint, current_app, jsonify, request
from werkzeug.exceptions import HTTPException

from showops import CAUTION, __version__
from showops.errors import ShowopsError, ValidationError
from showops.live.runner import Action, Actor

bp = Blueprint("api", __name__, url_prefix="/api")

ALL_ROLES = ("admin", "stage_manager", "crew", "viewer")
ACTING_ROLES = ("admin", "stage_manager", "crew")
RECORD_ROLES = ("admin", "stage_manager", "viewer")

#: Every route's documentation for the OpenAPI document: endpoint -> (summary, roles, body schema or None).
DOCS: dict[str, tuple[str, tuple[str, ...], dict | None]] = {}

_ID = re.compile(r"^[A-Za-z0-9._:-]{1,80}$")
_writer_lock = threading.Lock()


def _auth():
    from showops.web import auth

    return auth


def _db():
    from showops.web import get_db

    return get_db()


def live_service():
    """This app's :class:`~showops.store.live.Live` with its log writer (made on first use).

    ``LIVE_PLANS`` and ``LIVE_CLOCK`` in the app config replace the night-plan source
    and the server clock (tests).
    """
    app = current_app._get_current_object()
    service = app.extensions.get("showops_live")
    if service is None:
        with _writer_lock:
            service = app.extensions.get("showops_live")
            if service is None:
                from showops.store.live import Live, default_plans, utc_clock
                from showops.store.log import LogWriter

                writer = LogWriter(app.config["INSTANCE"])
                service = Live(writer=writer, plans=app.config.get("LIVE_PLANS") or default_plans,
                               clock=app.config.get("LIVE_CLOCK") or utc_clock)
                app.extensions["showops_live"] = service
    return service


def close_live(app) -> None:
    """Stop the app's log writer (tests and shutdown); later requests make a new one."""
    service = app.extensions.pop("showops_live", None)
    if service is not None and service.writer is not None:
        service.writer.close()


def record_sign_in(user, *, method: str = "password", performance_id: int | None = None) -> dict:
    """Log a sign-in as a ``sign_in`` row (for ``showops.web.auth`` to call after a
    successful sign-in; the row carries the person, the app role and the device).

    :returns: the log row.
    """
    actor = Actor(user.person_id, user.display_name, frozenset({user.role}), _auth().device_id())
    return live_service().sign_in(_db(), actor, performance_id=performance_id, method=method)


def _actor() -> Actor:
    auth = _auth()
    user = auth.current_user()
    return Actor(user.person_id, user.display_name, frozenset({user.role}), auth.device_id())


def _person_id() -> int | None:
    user = _auth().current_user()
    return user.person_id if user else None


def route(rule: str, methods: tuple[str, ...], roles: tuple[str, ...], summary: str, body: dict | None = None):
    """Register a view under ``rule`` for ``roles`` and document it."""
    def decorate(view):
        guarded = _auth().roles_required(*roles)(view) if roles else view
        endpoint = view.__name__
        bp.add_url_rule(rule, endpoint, guarded, methods=list(methods))
        DOCS[endpoint] = (summary, roles, body)
        return guarded

    return decorate


def _body() -> dict[str, Any]:
    data = request.get_json(silent=True)
    if not isinstance(data, dict):
        raise ValidationError("body", "send a JSON object (Content-Type: application/json)")
    return data


def _text(data: dict, name: str, *, required: bool = False, pattern: re.Pattern | None = None,
          limit: int = 500) -> str | None:
    value = data.get(name)
    if value is None or value == "":
        if required:
            raise ValidationError(name, "is required")
        return None
    if not isinstance(value, str) or len(value) > limit:
        raise ValidationError(name, f"must be text of at most {limit} characters")
    if pattern is not None and not pattern.match(value):
        raise ValidationError(name, f"{value[:40]!r} is not a valid id (letters, digits, . _ : -; 1-80)")
    return value


def _device_at(data: dict) -> str | None:
    value = _text(data, "device_at", limit=40)
    if value is None:
        return None
    from datetime import datetime

    try:
        datetime.fromisoformat(value.replace("Z", "+00:00"))
    except ValueError:
        raise ValidationError("device_at", f"{value!r} is not an ISO 8601 time") from None
    return value


ACTION_BODY = {
    "type": "object",
    "properties": {
        "step": {"type": "string", "description": "the step's key (phase/title)"},
        "client_id": {"type": "string", "description": "made by the device; a retry with the same id writes nothing"},
        "device_at": {"type": "string", "format": "date-time", "description": "the device's clock when pressed"},
        "note": {"type": "string"},
    },
}


def _act(kind: str, performance_id: int, cue_id: int):
    data = _body()
    step = _text(data, "step", required=kind in ("standby", "go", "confirm", "check"), limit=300)
    action = Action(kind, _actor(), step, client_id=_text(data, "client_id", pattern=_ID),
                    device_at=_device_at(data), note=_text(data, "note"))
    service = live_service()
    outcome = service.act(_db(), performance_id, cue_id, action, view=True)
    cue = outcome.view  # None for a retried client id: then read the cue as it is now
    if cue is None:
        cue = service.cue_status(_db(), performance_id, cue_id, person_id=action.actor.person_id)
    return jsonify({"row": outcome.row, "rows": list(outcome.rows), "cue": cue})


def _make_action(kind: str, roles: tuple[str, ...], summary: str):
    def view(performance_id: int, cue_id: int):
        return _act(kind, performance_id, cue_id)

    view.__name__ = f"cue_{kind}"
    route(f"/performances/<int:performance_id>/cues/<int:cue_id>/{kind}", ("POST",), roles, summary,
          ACTION_BODY)(view)


for _kind, _roles, _summary in (
    ("start", ("admin", "stage_manager", "crew"), "Start a cue (stage manager or tonight's caller; refused when blocked)"),
    ("standby", ACTING_ROLES, "Answer 'standing by' for a step you act in"),
    ("go", ACTING_ROLES, "Give the go for a step (its go role, after every actor stood by)"),
    ("confirm", ACTING_ROLES, "Confirm a step (its role, in order, needs met, after its go)"),
    ("check", ACTING_ROLES, "Confirm the check of a step (a second person in the check role)"),
    ("hold", ACTING_ROLES, "HOLD: stop the cue for everyone"),
    # Crew may try these too: the runner refuses them (409) and the refusal is logged.
    ("resume", ACTING_ROLES, "Resume after a HOLD (stage manager only; others are refused and logged)"),
    ("end", ACTING_ROLES, "End a running cue early, recording its unfinished steps (stage manager only)"),
):
    _make_action(_kind, _roles, _summary)


@route("/performances/<int:performance_id>", ("GET",), ALL_ROLES,
       "Tonight's running order: each cue's verdict, reasons, fixes and live status")
def night(performance_id: int):
    service = live_service()
    return jsonify(dict(service.night_status(_db(), performance_id, person_id=_person_id()), caution=CAUTION))


@route("/performances/<int:performance_id>/cues/<int:cue_id>", ("GET",), ALL_ROLES,
       "One cue's live state: every step, who confirmed it when, what you do next")
def cue(performance_id: int, cue_id: int):
    service = live_service()
    return jsonify(service.cue_status(_db(), performance_id, cue_id, person_id=_person_id()))


@route("/performances/<int:performance_id>/signoff", ("POST",), ACTING_ROLES,
       "Sign off the night (stage manager only; no cue may still be running)", ACTION_BODY)
def signoff(performance_id: int):
    data = _body()
    outcome = live_service().signoff(_db(), performance_id, _actor(), note=_text(data, "note"),
                                     client_id=_text(data, "client_id", pattern=_ID), device_at=_device_at(data))
    return jsonify({"row": outcome.row, "rows": list(outcome.rows)})


@route("/log", ("GET",), RECORD_ROLES, "Log rows in id order (query: performance, cue, after, limit)")
def log_rows():
    from showops.store.log import iter_log

    def number(name: str, default: int | None = None) -> int | None:
        raw = request.args.get(name)
        if raw is None or raw == "":
            return default
        if not raw.isdigit():
            raise ValidationError(name, f"{raw!r} is not a whole number")
        return int(raw)

    limit = min(number("limit", 500), 5000)
    rows = []
    for row in iter_log(_db(), performance_id=number("performance"), cue_id=number("cue"), after_id=number("after", 0)):
        rows.append(row)
        if len(rows) >= limit:
            break
    return jsonify({"rows": rows, "more": len(rows) == limit})


@route("/log/verify", ("GET",), RECORD_ROLES, "Check the whole log's hash chain; names the first bad row")
def log_verify():
    from showops.store.log import log_head, verify_log

    problem = verify_log(_db())
    last_id, last_hash = log_head(_db())
    if problem is None:
        return jsonify({"ok": True, "rows": last_id, "last_hash": last_hash, "problem": None})
    return jsonify({"ok": False, "rows": last_id, "last_hash": last_hash,
                    "problem": {"row_id": problem.row_id, "kind": problem.kind, "message": problem.message}})


@route("/openapi.json", ("GET",), ALL_ROLES, "This document: every route under /api/ (OpenAPI 3.0)")
def openapi():
    return jsonify(openapi_document(current_app))

_ERROR = {"$ref": "#/components/schemas/Error"}


def openapi_document(app) -> dict[str, Any]:
    """Build the OpenAPI 3.0.3 document from the app's ``/api`` routes."""
    paths: dict[str, dict] = {}
    for rule in sorted(app.url_map.iter_rules(), key=lambda r: r.rule):
        if not rule.rule.startswith("/api/") or not rule.endpoint.startswith("api."):
            continue
        name = rule.endpoint.split(".", 1)[1]
        summary, roles, body = DOCS.get(name, (name, (), None))
        path = re.sub(r"<(?:[a-z]+:)?([a-z_]+)>", r"{\1}", rule.rule)
        params = [{"name": p, "in": "path", "required": True, "schema": {"type": "integer"}}
                  for p in re.findall(r"{([a-z_]+)}", path)]
        for method in sorted(rule.methods - {"HEAD", "OPTIONS"}):
            op: dict[str, Any] = {
                "operationId": name, "summary": summary,
                "description": ("Roles: " + ", ".join(roles)) if roles else "Public.",
                "responses": {
                    "200": {"description": "OK", "content": {"application/json": {"schema": {"type": "object"}}}},
                    "default": {"description": "Any failure, in one shape",
                                "content": {"application/json": {"schema": _ERROR}}},
                },
            }
            if params:
                op["parameters"] = params
            if body is not None:
                op["requestBody"] = {"required": True, "content": {"application/json": {"schema": body}}}
            if roles:
                op["responses"]["401"] = {"description": "Not signed in",
                                          "content": {"application/json": {"schema": _ERROR}}}
                op["responses"]["403"] = {"description": "Role not allowed",
                                          "content": {"application/json": {"schema": _ERROR}}}
            if method == "POST":
                op["responses"]["409"] = {"description": "Refused by a rule (the reason is the message; "
                                                         "the refusal is in the log)",
                                          "content": {"application/json": {"schema": _ERROR}}}
            paths.setdefault(path, {})[method.lower()] = op
    return {
        "openapi": "3.0.3",
        "info": {"title": "showops live API", "version": __version__,
                 "description": "Confirmations, HOLDs and the tamper-evident show log. " + CAUTION},
        "paths": paths,
        "components": {"schemas": {"Error": {
            "type": "object", "required": ["error"],
            "properties": {"error": {"type": "object", "required": ["status", "message"],
                                     "properties": {"status": {"type": "integer"},
                                                    "message": {"type": "string"}}}}}}},
    }


def _error(status: int, message: str):
    return jsonify({"error": {"status": status, "message": message}}), status


@bp.errorhandler(ShowopsError)
def _showops_error(exc: ShowopsError):
    return _error(getattr(exc, "status", 400), str(exc))


@bp.errorhandler(HTTPException)
def _http_error(exc: HTTPException):
    return _error(exc.code or 500, exc.description or exc.name)


@bp.errorhandler(Exception)
def _unexpected(exc: Exception):
    current_app.logger.exception("API error")
    return _error(500, "the server failed on this request; it is in the server log")
