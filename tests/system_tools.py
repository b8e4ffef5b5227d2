"""System programs some tests need (Debian packages): installed with apt-get where the tests run
as root with apt-get available (a CI container), else the tests that need them are skipped with
the reason. Nothing is downloaded by any other route."""

from __future__ import annotations

import functools
import os
import shutil
import subprocess
from pathlib import Path


@functools.cache
def _apt_updated() -> str | None:
    try:
        subprocess.run(["apt-get", "update"], check=True, capture_output=True, timeout=900,
                       env={**os.environ, "DEBIAN_FRONTEND": "noninteractive"})  # fmt: skip
    except (subprocess.SubprocessError, OSError) as e:
        return f"apt-get update failed: {e}"
    return None


def install(program: str, package: str) -> str | None:
    """Make ``program`` (an absolute path) exist; return why it could not, or None."""
    if Path(program).exists():
        return None
    if not hasattr(os, "geteuid") or os.geteuid() != 0:
        return f"not root, cannot apt-get install {package}"
    if shutil.which("apt-get") is None:
        return "no apt-get on this system"
    for attempt in ("without", "with"):  # the package lists may be missing in a fresh container
        if attempt == "with" and (failed := _apt_updated()):
            return failed
        env = {**os.environ, "DEBIAN_FRONTEND": "noninteractive"}
        run = subprocess.run(["apt-get", "install", "-y", package], capture_output=True,
                             timeout=900, env=env)  # fmt: skip
        if run.returncode == 0 and Path(program).exists():
            return None
    return f"apt-get install {package} failed or left no {program}"
