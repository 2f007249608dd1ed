"""The showops web application: the factory, the store wiring and the error pages.

``create_app(test_config=None)`` builds the app on an *instance folder* that holds
the database (``showops.db``) and a generated secret key (``secret_key``, mode 0600,
never in version control). Each thread of the server opens the store once and keeps
it (opening and closing SQLite per request costs about nine tenths of the throughput,
see /work/shared/CI.md). Every module of ``showops/web/areas/`` that defines a
Blueprint ``bp`` is registered; sign-in (``showops.web.auth``) is registered first.

One error handler turns a :class:`~showops.errors.ShowopsError` (and any HTTP error)
into a page with the message or, under ``/api/``, into the one JSON shape
``{"error": {"status": N, "message": "..."}}``.
"""

from __future__ import annotations

import importlib
import os
import pkgutil
import secrets
import threading
from pathlib import Path

from flask import Flask, current_app, g, jsonify, render_template, request
from flask_wtf.csrf import CSRFError, CSRFProtect
from werkzeug.exceptions import HTTPException

from showops import CAUTION, __version__
from showops.errors import ShowopsError

csrf = CSRFProtect()

SECRET_KEY_FILENAME = "secret_key"


def _secret_key(instance: Path) -> str:
    """Read the instance's secret key, making one (32 random bytes, hex) the first time."""
    path = instance / SECRET_KEY_FILENAME
    if not path.exists():
        key = secrets.token_hex(32)
        # O_EXCL: two workers starting at once cannot each write a different key.
        try:
            fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
        except FileExistsError:
            pass
        else:
            with os.fdopen(fd, "w") as handle:
                handle.write(key)
    key = path.read_text().strip()
    if len(key) < 32:
        raise ShowopsError(f"{path}: the secret key is too short; delete the file to make a new one")
    return key


class _Stores:
    """One open database per thread for one app (closed all together by ``close``)."""

    def __init__(self, instance: Path, opener):
        self.instance = instance
        self.opener = opener
        self.local = threading.local()
        self.lock = threading.Lock()
        self.opened = []

    def get(self):
        db = getattr(self.local, "db", None)
        if db is None:
            db = self.opener(self.instance)
            self.local.db = db
            with self.lock:
                self.opened.append(db)
        return db

    def close(self) -> None:
        with self.lock:
            for db in self.opened:
                db.conn.close()
            self.opened.clear()
        self.local = threading.local()


def get_db():
    """Return this thread's open store for the current app (opened once per thread)."""
    if "db" not in g:
        g.db = current_app.extensions["showops_stores"].get()
    return g.db


def close_stores(app: Flask) -> None:
    """Close every connection the app opened (tests and shutdown)."""
    app.extensions["showops_stores"].close()


def nav_item(label: str, order: int = 50):
    """Put a view in the top bar for the roles its ``roles_required`` allows.

    Use it above ``@roles_required``: ``@bp.route(...)``, ``@nav_item("Running order", 10)``,
    ``@roles_required(...)``.
    """
    def decorate(view):
        view.nav_label = label
        view.nav_order = order
        return view

    return decorate


def nav_links(user) -> list[tuple[str, str, bool]]:
    """The top bar for ``user``: ``(url, label, is_current)`` for each view they may open."""
    from flask import url_for

    if user is None:
        return []
    links = []
    for endpoint, view in current_app.view_functions.items():
        label = getattr(view, "nav_label", None)
        if label and user.role in getattr(view, "allowed_roles", ()):
            links.append((view.nav_order, label, endpoint))
    links.sort()
    return [(url_for(e), label, request.endpoint == e) for _, label, e in links]


def _register_areas(app: Flask) -> list[str]:
    import showops.web.areas as package

    names = []
    for info in sorted(pkgutil.iter_modules(package.__path__), key=lambda i: i.name):
        module = importlib.import_module(f"showops.web.areas.{info.name}")
        bp = getattr(module, "bp", None)
        if bp is not None:
            app.register_blueprint(bp)
            names.append(info.name)
    return names


def wants_json() -> bool:
    """True for a request to the JSON API (``/api/...``)."""
    return request.path == "/api" or request.path.startswith("/api/")


def error_response(status: int, message: str):
    """Answer an error: the JSON shape under /api/, else the error page."""
    if wants_json():
        return jsonify({"error": {"status": status, "message": message}}), status
    return render_template("error.html", status=status, message=message), status


def create_app(test_config: dict | None = None) -> Flask:
    """Build the showops web app.

    :param test_config: settings that replace the defaults; ``INSTANCE`` names the
        instance folder (default ``$SHOWOPS_INSTANCE`` or ``./instance``).
    :raises ShowopsError: when the instance folder cannot be made or its key is bad.
    """
    from showops.web.fastjson import FastJSONProvider

    app = Flask(__name__, instance_relative_config=False)
    app.json = FastJSONProvider(app)
    config = dict(test_config or {})
    instance = Path(config.pop("INSTANCE", None) or os.environ.get("SHOWOPS_INSTANCE", "instance")).resolve()
    try:
        instance.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise ShowopsError(f"cannot make the instance folder {instance}: {exc.strerror}") from None
    app.config.from_mapping(
        INSTANCE=str(instance),
        SESSION_COOKIE_HTTPONLY=True,
        SESSION_COOKIE_SAMESITE="Lax",
        SESSION_COOKIE_NAME="showops_session",
        # A venue LAN is plain http; set SHOWOPS_SECURE_COOKIES=1 behind https.
        SESSION_COOKIE_SECURE=os.environ.get("SHOWOPS_SECURE_COOKIES") == "1",
        PERMANENT_SESSION_LIFETIME=12 * 3600,  # one working day and night
        WTF_CSRF_TIME_LIMIT=None,  # a token lives as long as the session (a long show)
        MAX_CONTENT_LENGTH=2 * 1024 * 1024,
        # The cookie is signed once at sign-in and lives 12 hours from then; re-signing
        # it on every request (Flask's default) costs each confirmation a third of a ms.
        SESSION_REFRESH_EACH_REQUEST=False,
    )
    if "SECRET_KEY" not in config:
        config["SECRET_KEY"] = _secret_key(instance)
    app.config.update(config)
    app.json.sort_keys = False

    from showops.store import open_db

    stores = _Stores(instance, app.config.get("DB_OPENER", open_db))
    app.extensions["showops_stores"] = stores
    # Migrate once, here, before any request thread opens its own connection.
    stores.get()

    csrf.init_app(app)

    @app.context_processor
    def _globals():
        from showops.web.auth import current_user

        user = current_user()
        return {"CAUTION": CAUTION, "showops_version": __version__, "current_user": user,
                "nav_links": nav_links(user)}

    @app.after_request
    def _headers(response):
        response.headers.setdefault("X-Content-Type-Options", "nosniff")
        response.headers.setdefault("X-Frame-Options", "DENY")
        response.headers.setdefault("Referrer-Policy", "same-origin")
        response.headers.setdefault(
            "Content-Security-Policy",
            "default-src 'self'; img-src 'self' data:; style-src 'self'; script-src 'self'; "
            "connect-src 'self'; frame-ancestors 'none'; form-action 'self'")
        if request.path.startswith("/api/") or response.mimetype == "text/html":
            response.headers.setdefault("Cache-Control", "no-store")
        return response

    @app.errorhandler(ShowopsError)
    def _showops_error(exc: ShowopsError):
        return error_response(getattr(exc, "status", 400), str(exc))

    @app.errorhandler(CSRFError)
    def _csrf_error(exc: CSRFError):
        return error_response(400, f"the form's security token is missing or old ({exc.description}); "
                                   "reload the page and try again")

    @app.errorhandler(HTTPException)
    def _http_error(exc: HTTPException):
        return error_response(exc.code or 500, exc.description or exc.name)

    from showops.web import auth

    app.register_blueprint(auth.bp)
    app.extensions["showops_areas"] = _register_areas(app)
    return app
