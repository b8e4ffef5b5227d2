"""The browser interview's local web server (standard library ``http.server``).

Security, for a laptop in a meeting room:

- bound to 127.0.0.1 on a free port unless ``host`` says otherwise (the command warns then);
- a random token (:func:`secrets.token_urlsafe`) in the printed address is required on every
  request: in the query (``?token=``) or the ``X-Elicit-Token`` header for a GET, in the header
  only for a POST (a state-changing request); without it: 403;
- the ``Host`` header must name the server's own address (``127.0.0.1:PORT``, or
  ``localhost:PORT`` when bound to the loopback), otherwise 421: a page on another site whose
  name was rebound to 127.0.0.1 cannot talk to it;
- every answer carries a Content-Security-Policy that allows nothing from elsewhere (scripts,
  styles and requests from the server itself only), ``nosniff``, no referrer, no caching;
- POST bodies are JSON of at most :data:`MAX_BODY` bytes; only the listed static files are
  served, from the package (:mod:`importlib.resources`).
"""

from __future__ import annotations

import json
import secrets
from http import HTTPStatus
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from importlib import resources
from typing import Any
from urllib.parse import parse_qs, urlsplit

from elicit.browser.api import ApiError, Session

MAX_BODY = 256 * 1024
TOKEN_HEADER = "X-Elicit-Token"
CSP = (
    "default-src 'none'; script-src 'self'; style-src 'self'; img-src 'self' data:; "
    "connect-src 'self'; base-uri 'none'; form-action 'none'; frame-ancestors 'none'"
)
STATIC = {"app.js": "text/javascript; charset=utf-8", "app.css": "text/css; charset=utf-8",
          "draw.js": "text/javascript; charset=utf-8"}  # fmt: skip
LOOPBACK = ("127.0.0.1", "localhost")


def _static(name: str) -> bytes:
    return resources.files("elicit.browser").joinpath("static", name).read_bytes()


class InterviewServer(ThreadingHTTPServer):
    """A threading HTTP server holding the session, its token and the allowed Host values."""

    daemon_threads = True

    def __init__(self, session: Session, host: str = "127.0.0.1", port: int = 0):
        super().__init__((host, port), Handler)
        self.session = session
        self.token = secrets.token_urlsafe(24)
        self.port = self.server_address[1]
        names = LOOPBACK if host in LOOPBACK else (host,)
        self.hosts = {f"{n}:{self.port}" for n in names}
        self.host = host

    @property
    def address(self) -> str:
        """The address to open, with the token."""
        return f"http://{self.host}:{self.port}/?token={self.token}"


class Handler(BaseHTTPRequestHandler):
    """Checks the Host and the token, then answers a page, a static file or JSON."""

    server: InterviewServer
    server_version = "elicit-interview"
    sys_version = ""

    def log_message(self, format: str, *args: Any) -> None:  # noqa: A002 (the base's name)
        pass  # the terminal stays readable for the facilitator

    # --------------------------------------------------------------- replies
    def _send(self, status: int, body: bytes, kind: str) -> None:
        self.send_response(status)
        self.send_header("Content-Type", kind)
        self.send_header("Content-Length", str(len(body)))
        self.send_header("Content-Security-Policy", CSP)
        self.send_header("X-Content-Type-Options", "nosniff")
        self.send_header("Referrer-Policy", "no-referrer")
        self.send_header("Cache-Control", "no-store")
        self.send_header("X-Frame-Options", "DENY")
        self.end_headers()
        if self.command != "HEAD":
            self.wfile.write(body)

    def _json(self, status: int, data: Any) -> None:
        body = json.dumps(data, allow_nan=False).encode()
        self._send(status, body, "application/json; charset=utf-8")

    def _refuse(self, status: int, message: str) -> None:
        self._json(status, {"error": message})

    # --------------------------------------------------------------- checks
    def _allowed(self, *, post: bool) -> bool:
        if self.headers.get("Host", "") not in self.server.hosts:
            self._refuse(HTTPStatus.MISDIRECTED_REQUEST, "this server answers only to its own "
                         "address")  # fmt: skip
            return False
        given = self.headers.get(TOKEN_HEADER)
        if given is None and not post:
            given = (parse_qs(urlsplit(self.path).query).get("token") or [None])[0]
        if not (given and secrets.compare_digest(given.encode(), self.server.token.encode())):
            what = f"the {TOKEN_HEADER} header" if post else "the token of the printed address"
            self._refuse(HTTPStatus.FORBIDDEN, f"forbidden: a request needs {what}")
            return False
        return True

    # --------------------------------------------------------------- methods
    def do_GET(self) -> None:  # noqa: N802 (the base's name)
        if not self._allowed(post=False):
            return
        path = urlsplit(self.path).path
        if path == "/":
            page = _static("index.html").decode().replace("{{TOKEN}}", self.server.token)
            self._send(HTTPStatus.OK, page.encode(), "text/html; charset=utf-8")
        elif path.startswith("/static/") and path[len("/static/") :] in STATIC:
            name = path[len("/static/") :]
            self._send(HTTPStatus.OK, _static(name), STATIC[name])
        elif path == "/api/state":
            self._answer(self.server.session.state)
        elif path == "/api/summary":
            self._answer(self.server.session.summary)
        else:
            self._refuse(HTTPStatus.NOT_FOUND, "not found")

    do_HEAD = do_GET

    def do_POST(self) -> None:  # noqa: N802
        if not self._allowed(post=True):
            return
        routes = {"/api/preview": self.server.session.preview,
                  "/api/accept": self.server.session.accept,
                  "/api/others": self.server.session.others}  # fmt: skip
        route = routes.get(urlsplit(self.path).path)
        if route is None:
            self._refuse(HTTPStatus.NOT_FOUND, "not found")
            return
        if not self.headers.get("Content-Type", "").startswith("application/json"):
            self._refuse(HTTPStatus.UNSUPPORTED_MEDIA_TYPE, "send JSON")
            return
        try:
            size = int(self.headers.get("Content-Length", "0"))
        except ValueError:
            size = -1
        if not 0 <= size <= MAX_BODY:
            self._refuse(HTTPStatus.REQUEST_ENTITY_TOO_LARGE, f"at most {MAX_BODY} bytes")
            return
        try:
            body = json.loads(self.rfile.read(size) or b"{}")
        except ValueError:
            self._refuse(HTTPStatus.BAD_REQUEST, "the body is not JSON")
            return
        if not isinstance(body, dict):
            self._refuse(HTTPStatus.BAD_REQUEST, "the body must be a JSON object")
            return
        self._answer(lambda: route(body))

    def _refuse_method(self) -> None:
        self._refuse(HTTPStatus.METHOD_NOT_ALLOWED, "method not allowed")

    do_PUT = do_DELETE = do_PATCH = do_OPTIONS = _refuse_method

    def _answer(self, call) -> None:
        try:
            self._json(HTTPStatus.OK, call())
        except ApiError as exc:
            self._refuse(exc.status, str(exc))
        except Exception as exc:  # a bug: one line to the page, the session goes on
            self._refuse(HTTPStatus.INTERNAL_SERVER_ERROR,
                         f"internal error (a bug): {type(exc).__name__}: {exc}")  # fmt: skip
