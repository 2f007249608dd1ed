"""The exceptions showops raises for bad input and refused actions.

Every error the user can cause is a :class:`ShowopsError`; its message is one line
that names the file or field, the bad value and what would be right. The CLI prints
it as ``Error: <message>`` and exits with status 2; the web app turns it into a form
message (status 400) or the JSON error shape.
"""

from __future__ import annotations


class ShowopsError(Exception):
    """Base class: a problem the user can fix, with a one-line message."""

    #: HTTP status the web app answers with.
    status = 400


class RigFileError(ShowopsError):
    """A rig file is missing, unreadable, or has a bad or missing field."""

    def __init__(self, source: str, key: str | None, message: str):
        self.source = source
        self.key = key
        where = f"{source}: {key}" if key else source
        super().__init__(f"{where}: {message}")


class UnitError(ShowopsError):
    """A quantity string could not be read or has the wrong dimension."""


class ProcedureFileError(ShowopsError):
    """A procedure file cannot be read at all (empty, too big, not text)."""


class NotFound(ShowopsError):
    """A record asked for by id or name does not exist."""

    status = 404


class Refused(ShowopsError):
    """An action was refused by a safety rule (the reason is the message)."""

    status = 409


class PermissionDenied(ShowopsError):
    """The signed-in user's role does not allow this action."""

    status = 403


class ValidationError(ShowopsError):
    """Input for a record is invalid; ``field`` names the field."""

    def __init__(self, field: str, message: str):
        self.field = field
        super().__init__(f"{field}: {message}")
