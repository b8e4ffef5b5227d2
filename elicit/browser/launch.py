"""Starting the browser interview: lock the prior file, serve, print the address, open it.

The prior file is locked (:class:`elicit.outfile.OutputLock`) for as long as the server runs,
so a terminal interview, or a second server, on the same file is refused with the pid of this
one; tabs of one server share its session, which takes one request at a time.
"""

from __future__ import annotations

import ipaddress
from collections.abc import Callable

from elicit.browser.api import Session, Study
from elicit.browser.form import NOISE
from elicit.browser.server import LOOPBACK, InterviewServer
from elicit.errors import InputError
from elicit.outfile import OutputLock, check_writable


def check_host(host: str) -> str | None:
    """None for the loopback; the warning to print for any other address.

    Raises
    ------
    InputError
        For a wildcard address (0.0.0.0, ::): the Host check needs the address the others use.
    """
    if host in LOOPBACK:
        return None
    try:
        wildcard = ipaddress.ip_address(host).is_unspecified
    except ValueError:
        wildcard = False  # a host name
    if wildcard:
        raise InputError(
            f"--host {host}: give the address the other machines will use, "
            "not a wildcard (the server answers only to its own address)"
        )
    return (
        f"warning: serving on {host}: anyone on that network who has the printed address, "
        "token included, can change the prior file; use it only in the meeting room"
    )


def serve(
    study: Study,
    *,
    expert: str | None = None,
    host: str = "127.0.0.1",
    port: int = 0,
    say: Callable[[str], None] = print,
    ready: Callable[[str], None] | None = None,
) -> None:
    """Serve the interview until interrupted (Ctrl-C); ``ready(address)`` once listening.

    Raises
    ------
    InputError
        The prior file cannot be written or is locked by another interview, or the port is taken.
    """
    check_writable(study.out)
    if any(t.column == NOISE for t in study.terms):
        raise InputError(f"--browser: the data have a predictor named {NOISE!r}, the page's "
                         "name for the noise sd; rename the column")  # fmt: skip
    with OutputLock(study.out):
        session = Session(study, expert=expert)  # the file as it is now that no one else writes
        try:
            server = InterviewServer(session, host, port)
        except OSError as exc:
            where = f"--host {host} --port {port}"
            raise InputError(f"{where}: cannot listen: {exc.strerror}") from None
        with server:
            say(f"browser interview of {study.out}")
            say(f"open {server.address}")
            say("stop with Ctrl-C; every accepted answer is already saved")
            if ready is not None:
                ready(server.address)
            try:
                server.serve_forever(poll_interval=0.2)
            except KeyboardInterrupt:
                say("stopped; accepted answers are in the prior file")
