"""A simulated phone for the crash test and the bench: one keep-alive HTTP connection,
its own cookies, the CSRF token read from a page, JSON in and out.

Network failures raise :class:`Offline` (the caller retries with the same client id,
as the crew page does when the network drops).
"""

from __future__ import annotations

import http.client
import json
import re
import socket
import urllib.parse

_TOKEN = re.compile(r'<meta name="csrf-token" content="([^"]+)"')


class Offline(Exception):
    """The server did not answer (refused, reset, timed out)."""


class HttpDevice:
    def __init__(self, port: int, *, timeout: float = 10.0):
        self.port = port
        self.timeout = timeout
        self.cookies: dict[str, str] = {}
        self.token: str | None = None
        self.conn: http.client.HTTPConnection | None = None

    def _request(self, method: str, path: str, body: bytes | None = None, headers: dict | None = None):
        headers = dict(headers or {})
        if self.cookies:
            headers["Cookie"] = "; ".join(f"{k}={v}" for k, v in self.cookies.items())
        if self.conn is None:
            self.conn = http.client.HTTPConnection("127.0.0.1", self.port, timeout=self.timeout)
        try:
            self.conn.request(method, path, body=body, headers=headers)
            response = self.conn.getresponse()
            data = response.read()
        except (OSError, http.client.HTTPException, socket.timeout) as exc:
            # Whether or not the server got it, the caller sends it again with the same
            # client id: the log keeps one row either way.
            self.conn.close()
            self.conn = None
            raise Offline(f"{type(exc).__name__}: {exc}") from None
        for name, value in response.getheaders():
            if name.lower() == "set-cookie":
                key, _, rest = value.partition("=")
                self.cookies[key.strip()] = rest.split(";", 1)[0]
        return response.status, data

    def sign_in(self, username: str, password: str) -> None:
        status, page = self._request("GET", "/sign-in")
        token = _TOKEN.search(page.decode())
        form = urllib.parse.urlencode({"username": username, "password": password,
                                       "csrf_token": token.group(1) if token else ""}).encode()
        status, _ = self._request("POST", "/sign-in", form, {"Content-Type": "application/x-www-form-urlencoded"})
        if status not in (302, 303):
            raise RuntimeError(f"sign-in of {username} answered {status}")
        status, page = self._request("GET", "/")
        self.token = _TOKEN.search(page.decode()).group(1)

    def get(self, path: str) -> tuple[int, dict]:
        status, data = self._request("GET", path, headers={"Accept": "application/json"})
        return status, json.loads(data)

    def post(self, path: str, body: dict) -> tuple[int, dict]:
        status, data = self._request("POST", path, json.dumps(body).encode(),
                                     {"Content-Type": "application/json", "X-CSRFToken": self.token or ""})
        return status, json.loads(data)

    def close(self) -> None:
        if self.conn is not None:
            self.conn.close()
            self.conn = None
