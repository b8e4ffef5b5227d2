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
    """Bad input: the message is one line naming the file, row, column, field or parameter.

    Examples
    --------
    >>> import bayes, pandas as pd
    >>> try:
    ...     bayes.fit(pd.DataFrame({"x": [1.0, 2.0, 3.0]}), response="strength")
    ... except bayes.InputError as e:
    ...     print(type(e).__name__)
    InputError
    """


class PriorFileError(InputError):
    """A bad prior file: names the file, the entry ('coefficient 3 (fly_ash)') and the field.

    Examples
    --------
    >>> import elicit
    >>> try:
    ...     elicit.parse_priors({"coefficient": [{"name": "x", "low": 3.0, "high": 1.0}]},
    ...                         source="priors.toml")
    ... except elicit.PriorFileError as e:
    ...     print(str(e).split(":")[0])
    priors.toml
    """


class ElicitationWarning(UserWarning):
    """A statement was accepted but reads differently from what was said (e.g. asymmetry)."""
