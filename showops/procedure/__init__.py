"""Procedures (pure: no Flask, click or sqlite): parse, check against the rig's
physics, render to safe HTML.

- :func:`parse_procedure` / :func:`load_procedure` read a procedure file;
- :func:`check_procedure` runs the named :data:`RULES` and returns :class:`Finding` s;
- :func:`render_procedure_html` binds placeholders and sanitises the page.
"""

from __future__ import annotations

from showops.procedure.check import RULE_NUMBERS, RULE_SET_VERSION, RULES, Finding, Physics, check_procedure
from showops.procedure.model import REST_STATE, STATE_VALUES, STEP_FIELDS, Phase, Problem, Procedure, Step
from showops.procedure.parse import MAX_PROCEDURE_BYTES, load_procedure, parse_procedure
from showops.procedure.render import BOUND_NAMES, render_context, render_procedure_html, sanitise_html

__all__ = [
    "BOUND_NAMES", "Finding", "MAX_PROCEDURE_BYTES", "Phase", "Physics", "Problem", "Procedure", "REST_STATE",
    "RULES", "RULE_NUMBERS", "RULE_SET_VERSION", "STATE_VALUES", "STEP_FIELDS", "Step", "check_procedure",
    "load_procedure", "parse_procedure", "render_context", "render_procedure_html", "sanitise_html",
]
