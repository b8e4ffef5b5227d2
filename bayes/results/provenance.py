"""Where a result came from: the data file and its hash, the command line, date, versions.

The `bayes` command records its own arguments (:func:`record_command`) for as long as it runs;
every file it writes into a fit folder then records the command line, shell-quoted, so that
``shlex.split`` gives the arguments back and the command can be run again.
"""

from __future__ import annotations

import shlex
import sys
from pathlib import Path

_COMMAND: list[str] | None = None  # the arguments of the running `bayes` command, if any


def record_command(args) -> None:
    """Record the arguments of the running `bayes` command (None: it has ended)."""
    global _COMMAND
    _COMMAND = None if args is None else [str(a) for a in args]


def command_line(*, running: bool = False) -> str | None:
    """The running `bayes` command, shell-quoted (:func:`shlex.join`).

    Parameters
    ----------
    running : bool
        Only a command recorded by :func:`record_command` (None outside the command line);
        otherwise the process's own arguments stand in for it.
    """
    if _COMMAND is None and running:
        return None
    return shlex.join(["bayes", *(sys.argv[1:] if _COMMAND is None else _COMMAND)])


def written_at() -> str:
    """Now, in UTC to the microsecond (ISO 8601): the order of the files of a fit folder."""
    import datetime

    return datetime.datetime.now(datetime.UTC).isoformat(timespec="microseconds")


def provenance(data_path: str | None, seed: int | None = None, dropped: int = 0) -> dict:
    """Where a result came from: data file and its SHA-256, command line, date, versions."""
    import datetime
    import hashlib
    import platform
    from importlib import metadata

    info = {
        "command": command_line(),
        "date": datetime.datetime.now(datetime.UTC).strftime("%Y-%m-%d %H:%M UTC"),
        "versions": {
            "python": platform.python_version(),
            **{pkg: metadata.version(pkg) for pkg in ("bayes-elicit", "numpy", "scipy", "pandas")},
        },
        "seed": seed,
        "dropped": dropped,
    }
    if data_path:
        digest = hashlib.sha256()
        with open(data_path, "rb") as fh:
            for block in iter(lambda: fh.read(1 << 20), b""):
                digest.update(block)
        info["data"] = Path(data_path).name
        info["data_sha256"] = digest.hexdigest()
    return info
