"""The exceptions for bad input, shared by both packages (``bayes.errors`` takes them from here).

Each message is one line that names the file, row, column, entry or parameter and the value;
the two commands print it and exit with status 2.
"""


class InputError(ValueError):
    """Bad input: the message is one line naming the file, row, column, field or parameter."""


class PriorFileError(InputError):
    """A bad prior file: names the file, the entry ('coefficient 3 (fly_ash)') and the field."""


class ElicitationWarning(UserWarning):
    """A statement was accepted but reads differently from what was said (e.g. asymmetry)."""
