"""The users store: validation, hashes, PIN rules.

NIST SP 800-63B §5.1.1.2: a memorized secret chosen by the user is at least 8
characters, and the verifier refuses commonly used values (our PIN check refuses
repeated digits and straight runs, the commonest PINs: common practice, no source).
"""

from __future__ import annotations

import pytest
from werkzeug.security import check_password_hash

from showops.errors import NotFound, ValidationError
from showops.store import users as store_users


@pytest.mark.parametrize("kwargs, message", [
    (dict(username="m", display_name="M", role="viewer", password="long-enough"),
     "username: 'm' is not a user name (2 to 40 letters, digits, dot, dash or underscore)"),
    (dict(username="mara quill", display_name="M", role="viewer", password="long-enough"),
     "username: 'mara quill' is not a user name (2 to 40 letters, digits, dot, dash or underscore)"),
    (dict(username="mara", display_name="M", role="director", password="long-enough"),
     "role: unknown role 'director' (one of admin, stage_manager, crew, viewer)"),
    (dict(username="mara", display_name="M", role="viewer"),
     "password: give a password (or, for crew, a PIN)"),
    (dict(username="mara", display_name="M", role="viewer", password="seven77"),
     "password: too short (7 characters); use at least 8"),
    (dict(username="mara", display_name="M", role="viewer", pin="4826"),
     "pin: only crew sign in with a PIN"),
    (dict(username="mara", display_name="M", role="crew", person_id=99, pin="4826"),
     "person: no person with id 99 (add them to the cast and crew first)"),
])
def test_add_user_refuses_bad_input(db, kwargs, message):
    with pytest.raises(ValidationError) as caught:
        store_users.add_user(db, **kwargs)
    assert str(caught.value) == message
    assert db.execute("SELECT COUNT(*) FROM web_user").fetchone()[0] == 0


def test_eight_characters_is_enough_nist_800_63b(db):
    user = store_users.add_user(db, "mara", "Mara Quill", "stage_manager", password="12345678")
    assert user.has_password and user.role_label == "stage manager"


def test_user_names_are_unique_in_any_case(db):
    store_users.add_user(db, "Mara", "Mara Quill", "viewer", password="long-enough")
    with pytest.raises(ValidationError, match="'mara' is taken"):
        store_users.add_user(db, "mara", "Someone", "viewer", password="long-enough")
    assert store_users.find_user(db, "MARA").display_name == "Mara Quill"


def test_only_hashes_are_stored(db):
    store_users.add_user(db, "pia", "Pia Sorrel", "crew", password="long-enough", pin="4826")
    password_hash, pin_hash = db.execute("SELECT password_hash, pin_hash FROM web_user").fetchone()
    assert password_hash.startswith("pbkdf2:sha256:") and pin_hash.startswith("pbkdf2:sha256:")
    assert check_password_hash(password_hash, "long-enough")
    assert check_password_hash(pin_hash, "4826")


def test_service_default_is_werkzeugs_scrypt():
    # the tests use a cheap method (conftest); a fresh process shows what service uses
    import subprocess
    import sys
    out = subprocess.run([sys.executable, "-c", "from showops.store import users; "
                          "from werkzeug.security import generate_password_hash as g; "
                          "print(users.DEFAULT_HASH_METHOD, users._hash('x', None).split('$')[0])"],
                         capture_output=True, text=True, check=True).stdout.split()
    assert out == ["scrypt", "scrypt:32768:8:1"]


@pytest.mark.parametrize("pin, ok", [
    ("4826", True), ("48261937", True), ("1357", True), ("1122", True),
    ("482", False), ("482619370", False), ("1111", False), ("2345", False), ("6543", False), ("48 26", False),
])
def test_pin_rules(pin, ok):
    if ok:
        store_users.check_pin_rules(pin)
    else:
        with pytest.raises(ValidationError):
            store_users.check_pin_rules(pin)


def test_set_password_and_stop_a_user(db):
    store_users.add_user(db, "ines", "Ines Harrow", "viewer", password="first-password")
    store_users.set_password(db, "ines", "second-password")
    assert store_users.sign_in_with_password(db, "ines", "second-password", address="a").username == "ines"
    store_users.set_active(db, "ines", False)
    with pytest.raises(store_users.SignInFailed):
        store_users.sign_in_with_password(db, "ines", "second-password", address="a")
    with pytest.raises(NotFound):
        store_users.set_password(db, "nobody", "whatever-it-is")


def test_list_users_by_role_then_name(db):
    for name, role in [("zed", "viewer"), ("amy", "crew"), ("bob", "admin"), ("cal", "stage_manager"),
                       ("abe", "admin")]:
        store_users.add_user(db, name, name.title(), role, password="long-enough")
    assert [u.username for u in store_users.list_users(db)] == ["abe", "bob", "cal", "amy", "zed"]
