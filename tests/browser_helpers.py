"""Shared by the browser interview's tests: a server in this process or as a subprocess, and a
plain HTTP client that can send what a browser would not (no token, a foreign Host)."""

from __future__ import annotations

import contextlib
import http.client
import json
import os
import selectors
import subprocess
import sys
import threading
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any
from urllib.parse import parse_qs, urlsplit

ROOT = Path(__file__).resolve().parents[1]
DEMO_CSV = ROOT / "bayes" / "demo" / "trial_mix.csv"  # invented concrete trial data
TOKEN_HEADER = "X-Elicit-Token"


def study(out: Path, *, data: Path = DEMO_CSV, response: str = "strength", others=(),
          units: str | None = "MPa"):  # fmt: skip
    """The browser interview's Study of ``data`` writing ``out`` (as the command builds it)."""
    import pandas as pd

    from elicit.browser.api import Study
    from elicit.interview import terms_from_data
    from elicit.read import read_prior_file

    frame = pd.read_csv(data)
    terms = tuple(terms_from_data(frame, response, units={}))
    return Study(out, frame, response, terms, units,
                 tuple((str(p), read_prior_file(p)) for p in others))  # fmt: skip


@contextlib.contextmanager
def served(the_study, *, expert: str | None = None) -> Iterator[Any]:
    """An :class:`InterviewServer` on a free loopback port, serving from a thread."""
    from elicit.browser.api import Session
    from elicit.browser.server import InterviewServer

    server = InterviewServer(Session(the_study, expert=expert))
    thread = threading.Thread(target=server.serve_forever, kwargs={"poll_interval": 0.05})
    thread.start()
    try:
        yield server
    finally:
        server.shutdown()
        server.server_close()
        thread.join(timeout=30)


class Reply:
    def __init__(self, status: int, headers: http.client.HTTPMessage, body: bytes):
        self.status, self.headers, self.body = status, headers, body

    def json(self) -> Any:
        return json.loads(self.body)


class Client:
    """Requests to one server; by default with its token and its own Host, like the page."""

    def __init__(self, address: str):
        parts = urlsplit(address)
        self.host, self.port = parts.hostname, parts.port
        self.token = parse_qs(parts.query)["token"][0]

    def request(self, method: str, path: str, body: Any = None, *, token: str | None = "header",
                host: str | None = None, headers: dict[str, str] | None = None,
                raw: bytes | None = None) -> Reply:  # fmt: skip
        """``token``: "header", "query" or None (not sent); ``host``: the Host header to send
        (default: the server's own address)."""
        sent = {"Host": host if host is not None else f"{self.host}:{self.port}"}
        if token == "header":
            sent[TOKEN_HEADER] = self.token
        elif token == "query":
            path += ("&" if "?" in path else "?") + f"token={self.token}"
        data = raw
        if body is not None:
            data = json.dumps(body).encode()
            sent["Content-Type"] = "application/json"
        sent.update(headers or {})
        conn = http.client.HTTPConnection(self.host, self.port, timeout=60)
        try:
            conn.putrequest(method, path, skip_host=True, skip_accept_encoding=True)
            for k, v in sent.items():
                conn.putheader(k, v)
            if data is not None and "Content-Length" not in sent:
                conn.putheader("Content-Length", str(len(data)))
            conn.endheaders(data)
            answer = conn.getresponse()
            return Reply(answer.status, answer.headers, answer.read())
        finally:
            conn.close()

    def get(self, path: str, **kw) -> Reply:
        return self.request("GET", path, **kw)

    def post(self, path: str, body: Any, **kw) -> Reply:
        return self.request("POST", path, body, **kw)


def command(data: Path, out: Path, *extra: str, response: str = "strength") -> list[str]:
    return [sys.executable, "-m", "elicit.cli", "interview", "--browser", "--no-open",
            "--data", str(data), "--response", response, "--out", str(out), *extra]  # fmt: skip


def start(args: list[str], *, limit: float = 120.0) -> tuple[subprocess.Popen, str]:
    """Run the command; return the process and the address it prints (waits for that line; the
    limit is a guard against hanging, not a timing check)."""
    env = dict(os.environ, PYTHONPATH=str(ROOT), PYTHONUNBUFFERED="1")
    proc = subprocess.Popen(args, stdout=subprocess.PIPE, stderr=subprocess.PIPE, cwd=ROOT,
                            env=env, bufsize=0)  # fmt: skip
    seen = b""  # read from the descriptor itself: a buffered reader would hide lines from select
    with selectors.DefaultSelector() as sel:
        sel.register(proc.stdout, selectors.EVENT_READ)
        deadline = time.monotonic() + limit
        while time.monotonic() < deadline:
            if not sel.select(timeout=deadline - time.monotonic()):
                break
            chunk = os.read(proc.stdout.fileno(), 65536)
            if not chunk:  # the process ended before listening
                break
            seen += chunk
            for line in seen.decode(errors="replace").splitlines(keepends=True):
                if line.startswith("open ") and line.endswith("\n"):
                    return proc, line.split()[1]
    proc.kill()
    _, err = proc.communicate(timeout=60)
    raise AssertionError(f"no address printed: {seen!r} {err[-2000:]!r}")


def stop(proc: subprocess.Popen) -> None:
    """Kill the server if it still runs and reap it."""
    if proc.poll() is None:
        proc.kill()
    proc.communicate(timeout=60)
