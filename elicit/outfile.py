"""The interview's output file: a writability check, a lock, and a draft of the open answer.

The lock is ``<out>.lock`` held with :func:`fcntl.flock` (released by the system when the
process dies, so a stale lock file is taken over) and holding the pid of its owner. The draft
is ``<out>.draft``, a JSON list of the answers typed so far for the question being answered,
written atomically after every answer and removed when that answer is accepted; the prior file
itself only ever holds accepted answers, so readers (by hand or ``bayes fit``) never see it.
"""

from __future__ import annotations

import json
import os
from pathlib import Path
from typing import Any

from elicit.errors import InputError
from elicit.io import atomic_write_text


def check_writable(path: str | os.PathLike[str]) -> None:
    """Raise InputError unless ``path`` can be written: its folder exists and is writable and
    the file, if present, is a writable file."""
    path = Path(path)
    folder = path.parent
    if not folder.is_dir():
        raise InputError(f"out {str(path)!r}: folder {str(folder)!r} does not exist")
    if path.is_dir():
        raise InputError(f"out {str(path)!r}: is a folder, not a file")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise InputError(f"out {str(path)!r}: folder {str(folder)!r} is not writable")
    if path.exists() and not os.access(path, os.W_OK):
        raise InputError(f"out {str(path)!r}: the file is not writable")


def sidecar(path: str | os.PathLike[str], suffix: str) -> Path:
    """``path`` with ``suffix`` added to its name (``p.toml`` -> ``p.toml.lock``)."""
    path = Path(path)
    return path.with_name(path.name + suffix)


class OutputLock:
    """An exclusive lock on an output file, as a context manager.

    Raises
    ------
    InputError
        On entry, when another live process holds the lock (naming its pid).
    """

    def __init__(self, path: str | os.PathLike[str]):
        self.path = sidecar(path, ".lock")
        self.target = Path(path)
        self._fd: int | None = None

    def __enter__(self) -> OutputLock:
        import fcntl

        while True:
            fd = os.open(self.path, os.O_RDWR | os.O_CREAT, 0o644)
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
            except BlockingIOError:
                owner = os.read(fd, 64).decode("ascii", "replace").strip() or "unknown"
                os.close(fd)
                raise InputError(
                    f"out {str(self.target)!r}: another interview (pid {owner}) is writing "
                    f"this file (lock {self.path.name})"
                ) from None
            try:  # the holder before us may have removed the file: lock the one on disk
                same = os.fstat(fd).st_ino == os.stat(self.path).st_ino
            except FileNotFoundError:
                same = False
            if same:
                break
            os.close(fd)
        os.ftruncate(fd, 0)
        os.write(fd, f"{os.getpid()}\n".encode())
        self._fd = fd
        return self

    def __exit__(self, *exc: Any) -> None:
        if self._fd is not None:
            self.path.unlink(missing_ok=True)
            os.close(self._fd)
            self._fd = None


class Draft:
    """The answers typed so far for one question (``item``), kept in ``<out>.draft``.

    Replayed on resume: while the recorded prompts match the ones asked, :meth:`replay` gives
    the recorded answer back; the first mismatch drops the rest.
    """

    def __init__(self, path: str | os.PathLike[str]):
        self.path = sidecar(path, ".draft")
        self.item: str | None = None
        self.answers: list[list[Any]] = []
        self._pending: list[list[Any]] = []
        try:
            saved = json.loads(self.path.read_text(encoding="utf-8"))
            self._saved_item = str(saved["item"])
            self._saved = [list(a) for a in saved["answers"] if len(a) == 2]
        except (OSError, ValueError, KeyError, TypeError):
            self._saved_item, self._saved = None, []

    def begin(self, item: str) -> int:
        """Start the question ``item``; return how many saved answers will be replayed."""
        self.item, self.answers = item, []
        self._pending = list(self._saved) if item == self._saved_item else []
        self._saved_item, self._saved = None, []
        return len(self._pending)

    def replay(self, prompt: str) -> tuple[bool, Any]:
        """``(True, answer)`` when the next saved answer was given to ``prompt``."""
        if self._pending and self._pending[0][0] == prompt:
            return True, self._pending.pop(0)[1]
        self._pending = []
        return False, None

    def record(self, prompt: str, answer: Any) -> None:
        """Add one answer and save the draft atomically."""
        if self.item is None:
            return
        self.answers.append([prompt, answer])
        text = json.dumps({"item": self.item, "answers": self.answers}, ensure_ascii=False)
        atomic_write_text(self.path, text + "\n")

    def clear(self) -> None:
        """The question was answered and saved: forget the draft."""
        self.item, self.answers, self._pending = None, [], []
        self.path.unlink(missing_ok=True)
