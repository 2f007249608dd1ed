"""Users of the web application, their passwords and PINs, and sign-in attempts.

Every query on ``web_user`` and ``login_attempt`` lives here (schema in
``schema_web.py``). Passwords and PINs are kept only as hashes made by
``werkzeug.security`` (the framework's maintained helpers; scrypt by default).

A PIN is for a crew member on a shared backstage tablet: it signs them in only
during a performance they are assigned to (from a little before the performance
starts until a few hours after), and only as crew. Sign-in attempts are counted, and
too many failures for one user name or from one address in a window are refused
before any password is checked.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from datetime import datetime, timedelta, timezone
from typing import Literal

import sqlite_utils
from werkzeug.security import check_password_hash, generate_password_hash

from showops.errors import NotFound, ShowopsError, ValidationError

Role = Literal["admin", "stage_manager", "crew", "viewer"]
#: The roles of the web application, most powerful first.
ROLES: tuple[Role, ...] = ("admin", "stage_manager", "crew", "viewer")
ROLE_LABELS: dict[str, str] = {
    "admin": "technical director",
    "stage_manager": "stage manager",
    "crew": "crew",
    "viewer": "viewer (read-only)",
}

#: werkzeug's default (scrypt). Tests set a cheaper method; never do that in service.
DEFAULT_HASH_METHOD = "scrypt"

#: NIST SP 800-63B §5.1.1.2: a memorized secret chosen by the user is at least 8 characters.
MIN_PASSWORD_LENGTH = 8
#: Our choice for gloved hands on a tablet: 4 to 8 digits, usable only while a
#: performance the person is assigned to is on (see PIN_WINDOW_*) and rate-limited.
PIN_PATTERN = re.compile(r"^\d{4,8}$")
#: A PIN window opens two hours before the performance starts (crew call) and closes
#: five hours after it (a long show plus the get-out): common practice, no source.
PIN_WINDOW_BEFORE = timedelta(hours=2)
PIN_WINDOW_AFTER = timedelta(hours=5)

#: Failed sign-ins allowed per user name, and per address, within LOCKOUT_WINDOW.
#: NIST SP 800-63B §5.2.2 asks for rate limiting and allows at most 100 consecutive
#: failures per account (from memory); PINs are short, so we allow far fewer.
MAX_FAILURES_PER_USER = 5
MAX_FAILURES_PER_ADDRESS = 20
LOCKOUT_WINDOW = timedelta(minutes=15)

_USERNAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._-]{1,39}$")
# Hash of a throwaway secret: checked when the user name is unknown so that a
# missing user answers as slowly as a wrong password (no user-name probing by timing).
_DUMMY_HASHES: dict[str, str] = {}


class SignInFailed(ShowopsError):
    """The user name, password or PIN is wrong (deliberately not saying which)."""

    status = 401


class TooManyAttempts(ShowopsError):
    """Too many failed sign-ins: wait before trying again."""

    status = 429


class PinNotValidNow(ShowopsError):
    """A right PIN, used outside a performance the person is assigned to."""

    status = 403


@dataclass(frozen=True)
class User:
    """A sign-in: who, with which role, linked to which person of the cast and crew."""

    id: int
    username: str
    display_name: str
    role: Role
    person_id: int | None
    active: bool
    has_password: bool
    has_pin: bool

    @property
    def role_label(self) -> str:
        return ROLE_LABELS[self.role]


def _now_utc() -> str:
    return datetime.now(timezone.utc).isoformat(timespec="seconds")


def _row_to_user(row) -> User:
    uid, username, display, role, person_id, active, pw, pin = row
    return User(uid, username, display, role, person_id, bool(active), pw is not None, pin is not None)


_SELECT = ("SELECT id, username, display_name, role, person_id, active, password_hash, pin_hash "
           "FROM web_user")


def check_password_rules(password: str) -> None:
    """:raises ValidationError: when ``password`` is shorter than MIN_PASSWORD_LENGTH."""
    if len(password or "") < MIN_PASSWORD_LENGTH:
        raise ValidationError("password", f"too short ({len(password or '')} characters); "
                                          f"use at least {MIN_PASSWORD_LENGTH}")


def check_pin_rules(pin: str) -> None:
    """:raises ValidationError: unless ``pin`` is 4 to 8 digits and not trivially guessed
    (all one digit, or a straight run such as 1234 or 9876)."""
    pin = (pin or "").strip()
    if not PIN_PATTERN.match(pin):
        raise ValidationError("pin", "a PIN is 4 to 8 digits")
    steps = {int(b) - int(a) for a, b in zip(pin, pin[1:])}
    # NIST SP 800-63B §5.1.1.2 asks to refuse commonly used secrets; these are the commonest PINs.
    if len(set(pin)) == 1 or steps in ({1}, {-1}):
        raise ValidationError("pin", f"{pin} is too easy to guess (no repeated digit or straight run)")


def _hash(secret: str, method: str | None) -> str:
    return generate_password_hash(secret, method=method or DEFAULT_HASH_METHOD)


def _check_person(db: sqlite_utils.Database, person_id: int | None) -> None:
    if person_id is None:
        return
    if "person" not in db.table_names() or not db.execute(
            "SELECT 1 FROM person WHERE id = ?", [person_id]).fetchone():
        raise ValidationError("person", f"no person with id {person_id} (add them to the cast and crew first)")
    other = db.execute("SELECT username FROM web_user WHERE person_id = ?", [person_id]).fetchone()
    if other:
        raise ValidationError("person", f"person {person_id} already signs in as {other[0]!r}")


def add_user(db: sqlite_utils.Database, username: str, display_name: str, role: str, *,
             password: str | None = None, pin: str | None = None, person_id: int | None = None,
             hash_method: str | None = None) -> User:
    """Add a user and return it.

    :param password: at least MIN_PASSWORD_LENGTH characters; a crew member on a shared
        tablet may have only a PIN.
    :param person_id: the person (``person.id``) this user is. A crew user who is not
        linked to a person can sign in but has no steps (and no PIN sign-in).
    :raises ValidationError: for a bad or taken user name, unknown role, short password,
        weak PIN, unknown person or one already linked, or neither password nor PIN.
    """
    username = (username or "").strip()
    if not _USERNAME.match(username):
        raise ValidationError("username", f"{username!r} is not a user name "
                                          "(2 to 40 letters, digits, dot, dash or underscore)")
    if role not in ROLES:
        raise ValidationError("role", f"unknown role {role!r} (one of {', '.join(ROLES)})")
    display_name = (display_name or "").strip() or username
    if password is None and pin is None:
        raise ValidationError("password", "give a password (or, for crew, a PIN)")
    if pin is not None and role != "crew":
        raise ValidationError("pin", "only crew sign in with a PIN")
    if password is not None:
        check_password_rules(password)
    if pin is not None:
        check_pin_rules(pin)
    if db.execute("SELECT 1 FROM web_user WHERE username = ?", [username]).fetchone():
        raise ValidationError("username", f"{username!r} is taken")
    _check_person(db, person_id)
    stamp = _now_utc()
    uid = db["web_user"].insert({
        "username": username, "display_name": display_name, "role": role, "person_id": person_id,
        "password_hash": _hash(password, hash_method) if password is not None else None,
        "pin_hash": _hash(pin.strip(), hash_method) if pin is not None else None,
        "active": 1, "created_at": stamp, "changed_at": stamp,
    }).last_pk
    return get_user(db, uid)


def get_user(db: sqlite_utils.Database, user_id: int) -> User | None:
    """Return the user with ``user_id``, or None."""
    row = db.execute(_SELECT + " WHERE id = ?", [user_id]).fetchone()
    return _row_to_user(row) if row else None


def find_user(db: sqlite_utils.Database, username: str) -> User:
    """Return the user called ``username`` (any case).

    :raises NotFound: when there is none.
    """
    row = db.execute(_SELECT + " WHERE username = ?", [(username or "").strip()]).fetchone()
    if not row:
        raise NotFound(f"no user {username!r} (add one with `showops user add`)")
    return _row_to_user(row)


def list_users(db: sqlite_utils.Database) -> list[User]:
    """Return every user, by role then name."""
    order = " ".join(f"WHEN '{r}' THEN {i}" for i, r in enumerate(ROLES))
    return [_row_to_user(r) for r in db.execute(_SELECT + f" ORDER BY CASE role {order} END, username")]


def set_password(db: sqlite_utils.Database, username: str, password: str, *, hash_method: str | None = None) -> User:
    """Replace a user's password.

    :raises NotFound: for an unknown user. :raises ValidationError: for a short password.
    """
    user = find_user(db, username)
    check_password_rules(password)
    db.execute("UPDATE web_user SET password_hash = ?, changed_at = ? WHERE id = ?",
               [_hash(password, hash_method), _now_utc(), user.id])
    return get_user(db, user.id)


def set_pin(db: sqlite_utils.Database, username: str, pin: str | None, *, hash_method: str | None = None) -> User:
    """Set (or with ``None`` remove) a crew user's PIN.

    :raises ValidationError: for a weak PIN or a user who is not crew.
    """
    user = find_user(db, username)
    if pin is not None:
        if user.role != "crew":
            raise ValidationError("pin", "only crew sign in with a PIN")
        check_pin_rules(pin)
    db.execute("UPDATE web_user SET pin_hash = ?, changed_at = ? WHERE id = ?",
               [_hash(pin.strip(), hash_method) if pin is not None else None, _now_utc(), user.id])
    return get_user(db, user.id)


def link_person(db: sqlite_utils.Database, username: str, person_id: int | None) -> User:
    """Link a user to a person of the cast and crew (or unlink with ``None``).

    :raises ValidationError: for an unknown person or one linked to another user.
    """
    user = find_user(db, username)
    if person_id != user.person_id:
        _check_person(db, person_id)
    db.execute("UPDATE web_user SET person_id = ?, changed_at = ? WHERE id = ?", [person_id, _now_utc(), user.id])
    return get_user(db, user.id)


def set_active(db: sqlite_utils.Database, username: str, active: bool) -> User:
    """Allow or stop a user's sign-in (users are never deleted: the log names them)."""
    user = find_user(db, username)
    db.execute("UPDATE web_user SET active = ?, changed_at = ? WHERE id = ?", [int(active), _now_utc(), user.id])
    return get_user(db, user.id)


# --------------------------------------------------------------------------- sign-in


def record_attempt(db: sqlite_utils.Database, username: str, address: str, method: str, ok: bool,
                   *, now: datetime | None = None) -> None:
    """Keep one sign-in attempt (used for rate limiting and review)."""
    at = (now or datetime.now(timezone.utc)).isoformat(timespec="seconds")
    db["login_attempt"].insert({"at_utc": at, "username": (username or "").strip()[:80],
                                "address": address or "?", "method": method, "ok": int(ok)})


def seconds_locked_out(db: sqlite_utils.Database, username: str, address: str,
                       *, now: datetime | None = None) -> int:
    """Return how many seconds sign-in stays refused for ``username`` or ``address`` (0: allowed).

    Failures count since the last successful sign-in of that user (or from that
    address), within LOCKOUT_WINDOW.
    """
    now = now or datetime.now(timezone.utc)
    since = (now - LOCKOUT_WINDOW).isoformat(timespec="seconds")
    wait = 0
    for column, value, limit in (("username", (username or "").strip(), MAX_FAILURES_PER_USER),
                                 ("address", address or "?", MAX_FAILURES_PER_ADDRESS)):
        last_ok = db.execute(f"SELECT MAX(id) FROM login_attempt WHERE {column} = ? AND ok = 1",
                             [value]).fetchone()[0] or 0
        rows = db.execute(f"SELECT at_utc FROM login_attempt WHERE {column} = ? AND ok = 0 AND id > ? "
                          f"AND at_utc > ? ORDER BY id DESC LIMIT ?", [value, last_ok, since, limit]).fetchall()
        if len(rows) >= limit:
            oldest = datetime.fromisoformat(rows[-1][0])
            wait = max(wait, int((oldest + LOCKOUT_WINDOW - now).total_seconds()) + 1)
    return wait


def _refuse_if_locked(db, username, address, now):
    wait = seconds_locked_out(db, username, address, now=now)
    if wait > 0:
        minutes = (wait + 59) // 60
        raise TooManyAttempts(f"too many failed sign-ins; try again in {minutes} minute"
                              f"{'s' if minutes != 1 else ''} (or ask the stage manager)")


def _dummy_check(secret: str) -> None:
    method = DEFAULT_HASH_METHOD
    if method not in _DUMMY_HASHES:
        _DUMMY_HASHES[method] = generate_password_hash("not a real secret", method=method)
    check_password_hash(_DUMMY_HASHES[method], secret or "")


def sign_in_with_password(db: sqlite_utils.Database, username: str, password: str, *, address: str,
                          now: datetime | None = None) -> User:
    """Check a user name and password; record the attempt; return the user.

    :raises TooManyAttempts: when this user name or address failed too often lately
        (checked before the password, so guessing stops).
    :raises SignInFailed: for an unknown user, a wrong password or a stopped user.
    """
    now = now or datetime.now(timezone.utc)
    _refuse_if_locked(db, username, address, now)
    row = db.execute("SELECT id, password_hash, active FROM web_user WHERE username = ?",
                     [(username or "").strip()]).fetchone()
    if row is None or row[1] is None:
        _dummy_check(password)
        ok = False
    else:
        ok = check_password_hash(row[1], password or "") and bool(row[2])
    record_attempt(db, username, address, "password", ok, now=now)
    if not ok:
        raise SignInFailed("user name or password not recognised")
    return get_user(db, row[0])


def performances_on_now(db: sqlite_utils.Database, person_id: int, local_now: datetime) -> list[int]:
    """Return the ids of performances ``person_id`` is assigned to whose PIN window holds ``local_now``.

    Performance times are venue time (``performance.starts_at``, ``YYYY-MM-DDTHH:MM``).
    """
    if "performance_crew" not in db.table_names():
        return []
    lo = (local_now - PIN_WINDOW_AFTER).strftime("%Y-%m-%dT%H:%M")
    hi = (local_now + PIN_WINDOW_BEFORE).strftime("%Y-%m-%dT%H:%M")
    rows = db.execute(
        "SELECT DISTINCT p.id FROM performance p JOIN performance_crew c ON c.performance_id = p.id "
        "WHERE c.person_id = ? AND p.starts_at >= ? AND p.starts_at <= ? ORDER BY p.starts_at",
        [person_id, lo, hi])
    return [r[0] for r in rows]


def sign_in_with_pin(db: sqlite_utils.Database, username: str, pin: str, *, address: str,
                     now: datetime | None = None, local_now: datetime | None = None) -> tuple[User, int]:
    """Check a crew member's PIN; return the user and the performance it is valid for.

    :param local_now: venue time (naive), compared with ``performance.starts_at``.
    :raises TooManyAttempts: as for a password.
    :raises SignInFailed: for an unknown user, a wrong PIN, a stopped user or one with no PIN.
    :raises PinNotValidNow: when no performance they are assigned to is on now
        (checked before the PIN; not counted as a failure).
    """
    now = now or datetime.now(timezone.utc)
    local_now = local_now or datetime.now()
    _refuse_if_locked(db, username, address, now)
    row = db.execute("SELECT id, pin_hash, active, role, person_id FROM web_user WHERE username = ?",
                     [(username or "").strip()]).fetchone()
    if row is None or row[1] is None:
        _dummy_check(pin)
        record_attempt(db, username, address, "pin", False, now=now)
        raise SignInFailed("name or PIN not recognised")
    uid, pin_hash, active, role, person_id = row
    # The window is checked before the PIN, so a guess outside a performance learns
    # nothing about the PIN (the schedule is no secret).
    performances = performances_on_now(db, person_id, local_now) if person_id is not None else []
    if not performances:
        raise PinNotValidNow("a PIN works only during a performance you are crewing "
                             "(from two hours before it starts); sign in with your password")
    if not (check_password_hash(pin_hash, (pin or "").strip()) and active and role == "crew"):
        record_attempt(db, username, address, "pin", False, now=now)
        raise SignInFailed("name or PIN not recognised")
    record_attempt(db, username, address, "pin", True, now=now)
    return get_user(db, uid), performances[0]


def pin_users(db: sqlite_utils.Database) -> list[User]:
    """Return the active crew users who have a PIN (the names on the tablet's sign-in)."""
    return [u for u in list_users(db) if u.role == "crew" and u.has_pin and u.active]


def people_to_link(db: sqlite_utils.Database) -> list[dict]:
    """Return every person of the cast and crew (``id``, ``name``) with the user name
    linked to them (``username``, or None), by name. Empty before any person exists."""
    if "person" not in db.table_names():
        return []
    rows = db.execute("SELECT p.id, p.name, u.username FROM person p LEFT JOIN web_user u ON u.person_id = p.id "
                      "ORDER BY p.name")
    return [{"id": i, "name": n, "username": u} for i, n, u in rows]


# --------------------------------------------------------------------------- the demo's sign-ins

#: Every demo sign-in uses this password (printed by ``showops demo``; a demo instance
#: is for trying showops out, never for a real show).
DEMO_PASSWORD = "glass-orchard"
#: Invented people who sign in but are not in the cast and crew tables.
DEMO_ADMIN = ("lise", "Lise Armitage")         # technical director
DEMO_VIEWER = ("odile", "Odile Brask")         # the company's producer, read-only
#: Crew PINs for the backstage tablet, in the order of the crew list (none of them a
#: repeated digit or a straight run).
DEMO_PINS = ("2468", "3579", "4826", "5917", "6385", "7041", "8153", "9264")


def demo_username(name: str) -> str:
    """The demo's user name for a person: their first name in lower case ("Halden Voss" -> "halden")."""
    return name.split()[0].lower()


def install_demo_users(db: sqlite_utils.Database, *, stage_manager: str, crew: list[str],
                       hash_method: str | None = None) -> list[dict]:
    """Add the demo's sign-ins: the technical director, the stage manager, each crew
    member (password and PIN) and a read-only producer. People are found by name in
    the cast and crew tables.

    :param stage_manager: the stage manager's name (a person; signs in as stage manager).
    :param crew: the crew members' names (each a person), in the order their PINs are given.
    :returns: ``username``, ``name``, ``role``, ``pin`` of each user made (for the printout).
    :raises ValidationError: when a name is not a person, or a user exists already.
    """
    def person(name: str) -> int:
        row = db.execute("SELECT id FROM person WHERE name = ?", [name]).fetchone()
        if not row:
            raise ValidationError("person", f"no person called {name!r} in the demo")
        return row[0]

    made = []
    # the same method for every demo user, hashed once: scrypt costs ~0.4 s a hash
    method = hash_method or DEFAULT_HASH_METHOD
    password_hash = _hash(DEMO_PASSWORD, method)
    stamp = _now_utc()

    def add(username, name, role, person_id=None, pin=None):
        if db.execute("SELECT 1 FROM web_user WHERE username = ?", [username]).fetchone():
            raise ValidationError("username", f"{username!r} is taken")
        db["web_user"].insert({"username": username, "display_name": name, "role": role, "person_id": person_id,
                               "password_hash": password_hash, "pin_hash": _hash(pin, method) if pin else None,
                               "active": 1, "created_at": stamp, "changed_at": stamp})
        made.append({"username": username, "name": name, "role": role, "pin": pin})

    add(*DEMO_ADMIN, "admin")
    add(demo_username(stage_manager), stage_manager, "stage_manager", person(stage_manager))
    for name, pin in zip([n for n in crew if n != stage_manager], DEMO_PINS):
        check_pin_rules(pin)
        add(demo_username(name), name, "crew", person(name), pin)
    add(*DEMO_VIEWER, "viewer")
    return made


def crewed_performances(db: sqlite_utils.Database, person_id: int) -> list[tuple[int, str]]:
    """Return ``(performance id, starts_at)`` of every performance ``person_id`` crews, in date order."""
    if "performance_crew" not in db.table_names():
        return []
    return [(i, s) for i, s in db.execute(
        "SELECT DISTINCT p.id, p.starts_at FROM performance p JOIN performance_crew c ON c.performance_id = p.id "
        "WHERE c.person_id = ? ORDER BY p.starts_at, p.id", [person_id])]
