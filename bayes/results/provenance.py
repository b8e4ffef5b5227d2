"""Where a result came from: the data file and its hash, the command line, date, versions."""

from __future__ import annotations

import sys
from pathlib import Path


def provenance(data_path: str | None, seed: int | None = None, dropped: int = 0) -> dict:
    """Where a result came from: data file and its SHA-256, command line, date, versions."""
    import datetime
    import hashlib
    import platform
    from importlib import metadata

    info = {
        "command": " ".join(["bayes", *sys.argv[1:]]),
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
