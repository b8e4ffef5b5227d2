"""File output shared by both packages: atomic writes that never leave a half-written file."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path


def atomic_write_text(path: str | os.PathLike[str], text: str, encoding: str = "utf-8") -> None:
    """Write ``text`` to ``path`` so that readers see the old file or the new one, never a part.

    The text goes to a temporary file in the same folder, is flushed and synced to disk,
    then renamed over ``path`` with :func:`os.replace` (atomic on POSIX and Windows).
    If anything fails before the rename, the temporary file is removed and ``path`` is untouched.

    Parameters
    ----------
    path : str or path-like
        Destination file. Its folder must exist.
    text : str
        The whole new content.
    encoding : str, default "utf-8"
    """
    target = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=target.parent)
    try:
        with os.fdopen(fd, "w", encoding=encoding, newline="") as handle:
            handle.write(text)
            handle.flush()
            os.fsync(handle.fileno())
        if target.exists():
            os.chmod(tmp, target.stat().st_mode & 0o777)
        else:
            umask = os.umask(0)
            os.umask(umask)
            os.chmod(tmp, 0o666 & ~umask)
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
