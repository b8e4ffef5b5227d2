"""The exceptions for bad input, shared by both packages (``bayes.errors`` takes them from here).

Each message is one line that names the file, row, column, entry or parameter and the value;
the two commands print it and exit with status 2.
"""

from __future__ import annotations

from typing import Any

SHOWN = 60  # characters of a wrong value's repr quoted in an error


def shown(value: Any) -> str:
    """``repr(value)`` for an error message, cut to :data:`SHOWN` characters (a wrong value may
    be a huge list or a 5,000-digit number)."""
    text = repr(value)
    return text if len(text) <= SHOWN else text[: SHOWN - 3] + "..."


class InputError(ValueError):
    """Bad input: the message is one line naming the file, row, column, field or parameter."""


class PriorFileError(InputError):
    """A bad prior file: names the file, the entry ('coefficient 3 (fly_ash)') and the field."""


class ElicitationWarning(UserWarning):
    """A statement was accepted but reads differently from what was said (e.g. asymmetry)."""
