"""``showops serve`` (the web app on waitress) and ``showops user ...`` (sign-ins)."""

from __future__ import annotations

import socket
from pathlib import Path

import click

from showops.cli import instance_option, main
from showops.errors import ShowopsError, ValidationError

DEFAULT_PORT = 8150
LOCALHOST = "127.0.0.1"


def lan_address() -> str:
    """Return this machine's address on the venue network (the one its default route uses).

    :raises ShowopsError: when the machine has no network address but loopback.
    """
    candidates = []
    probe = socket.socket(socket.AF_INET, socket.SOCK_DGRAM)
    try:
        # A UDP "connect" sends nothing; it only asks the kernel which source
        # address it would route from (TEST-NET-1, RFC 5737, is never reached).
        probe.connect(("192.0.2.1", 9))
        candidates.append(probe.getsockname()[0])
    except OSError:
        pass
    finally:
        probe.close()
    try:
        candidates.extend(info[4][0] for info in socket.getaddrinfo(socket.gethostname(), None, socket.AF_INET))
    except OSError:
        pass
    for address in candidates:
        if not address.startswith("127.") and address != "0.0.0.0":
            return address
    raise ShowopsError("no venue network address found (is this machine on the venue network?); "
                       "serve on this machine only without --lan")


def address_qr_text(url: str) -> str:
    """Return a QR code for ``url`` drawn with text blocks, to scan from a phone."""
    import io

    import segno

    out = io.StringIO()
    segno.make(url, error="m").terminal(out=out, compact=True, border=2)
    return out.getvalue()


@main.command()
@instance_option
@click.option("--port", type=click.IntRange(1, 65535), default=DEFAULT_PORT, show_default=True,
              help="TCP port to listen on.")
@click.option("--lan", is_flag=True,
              help="Listen on the venue network (not only this machine) and print its address and a QR code.")
@click.option("--threads", type=click.IntRange(1, 64), default=8, show_default=True,
              help="Worker threads of the server.")
def serve(instance: Path, port: int, lan: bool, threads: int) -> None:
    """Serve the web app (running order, crew screens, records) with waitress.

    By default only this machine can open it, at http://127.0.0.1:8150/. With --lan,
    phones and tablets on the venue network can; the address and a QR code are printed.

    Example: showops serve --instance ./instance --lan
    """
    import threading

    import waitress

    from showops.store.audit import warm_audit
    from showops.web import create_app

    host = lan_address() if lan else LOCALHOST
    app = create_app({"INSTANCE": str(instance)})
    # The audit's stored scans and load margins brought up to date while the server starts
    # answering: the first audit page then reads them, and no crew screen waits for it.
    threading.Thread(target=warm_audit, args=(app.config["INSTANCE"],), name="showops-audit-warm",
                     daemon=True).start()
    url = f"http://{host}:{port}/"
    click.echo(f"showops is serving {Path(instance).resolve()} at {url}")
    if lan:
        click.echo("Open it on a phone or tablet on the venue network, or scan:")
        click.echo(address_qr_text(url))
        click.echo("Anyone on this network can reach the sign-in page: keep the venue network closed.")
    click.echo("Stop with Ctrl+C.")
    waitress.serve(app, host=host, port=port, threads=threads, ident="showops")


@main.group()
def user() -> None:
    """Sign-ins for the web app: add users, set passwords and crew PINs.

    Example: showops user add mara --role stage_manager --name "Mara Quill"
    """


def _open(instance: Path):
    from showops.store import open_db

    return open_db(instance)


def _person_id(db, person: str | None) -> int | None:
    if person is None:
        return None
    if person.isdigit():
        return int(person)
    if "person" in db.table_names():
        row = db.execute("SELECT id FROM person WHERE name = ?", [person]).fetchone()
        if row:
            return row[0]
    raise ValidationError("person", f"no person called {person!r} (give their id or exact name)")


@user.command("add")
@instance_option
@click.argument("username")
@click.option("--role", type=click.Choice(["admin", "stage_manager", "crew", "viewer"]), required=True,
              help="admin (technical director), stage_manager, crew or viewer (read-only).")
@click.option("--name", "display_name", default="", help="The name shown on screens (default: the user name).")
@click.option("--person", default=None, help="Link to a person of the cast and crew (id or exact name): "
                                             "a crew user's steps are that person's.")
@click.option("--password", prompt=True, prompt_required=False, hide_input=True, confirmation_prompt=True,
              default=None, help="Asked for (typed twice, hidden) unless given; a value typed here "
                                 "shows in the process list, so prefer the prompt.")
@click.option("--pin", "with_pin", is_flag=True, help="Also ask for a crew PIN (4 to 8 digits) for the backstage tablet.")
@click.option("--no-password", is_flag=True, help="Crew only: sign in with the PIN alone.")
def user_add(instance: Path, username: str, role: str, display_name: str, person: str | None,
             password: str | None, with_pin: bool, no_password: bool) -> None:
    """Add a user; the password is asked for (typed twice, not shown).

    Example: showops user add tomas --role crew --person "Tomas Reyne" --pin
    """
    db = _open(instance)
    try:
        person_id = _person_id(db, person)
        if password is None and not no_password:
            password = click.prompt("Password", hide_input=True, confirmation_prompt=True)
        pin = click.prompt("PIN", hide_input=True, confirmation_prompt=True) if with_pin else None
        created = _users().add_user(db, username, display_name, role, password=password, pin=pin,
                                    person_id=person_id)
    finally:
        db.conn.close()
    click.echo(f"Added {created.username} ({created.role_label})"
               + (", with a PIN" if created.has_pin else "") + ".")


@user.command("passwd")
@instance_option
@click.argument("username")
def user_passwd(instance: Path, username: str) -> None:
    """Set a user's password (asked for twice, not shown).

    Example: showops user passwd mara
    """
    db = _open(instance)
    try:
        _users().find_user(db, username)
        password = click.prompt("New password", hide_input=True, confirmation_prompt=True)
        changed = _users().set_password(db, username, password)
    finally:
        db.conn.close()
    click.echo(f"Password changed for {changed.username}.")


@user.command("pin")
@instance_option
@click.argument("username")
@click.option("--remove", is_flag=True, help="Remove the PIN instead.")
def user_pin(instance: Path, username: str, remove: bool) -> None:
    """Set (or remove) a crew member's PIN for the backstage tablet.

    Example: showops user pin tomas
    """
    db = _open(instance)
    try:
        _users().find_user(db, username)
        pin = None if remove else click.prompt("PIN", hide_input=True, confirmation_prompt=True)
        _users().set_pin(db, username, pin)
    finally:
        db.conn.close()
    click.echo(f"PIN {'removed' if remove else 'set'} for {username}.")


@user.command("list")
@instance_option
def user_list(instance: Path) -> None:
    """List the users, their roles and how they sign in.

    Example: showops user list
    """
    db = _open(instance)
    try:
        rows = _users().list_users(db)
    finally:
        db.conn.close()
    if not rows:
        click.echo("No users yet. Add one: showops user add NAME --role admin")
    for u in rows:
        ways = " + ".join(w for w, has in (("password", u.has_password), ("PIN", u.has_pin)) if has)
        click.echo(f"{u.username:<20} {u.role_label:<20} {u.display_name:<24} {ways}"
                   + ("" if u.active else "  (stopped)"))


def _users():
    from showops.store import users

    return users
