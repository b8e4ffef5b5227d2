"""The one exception type for bad input (its home is :mod:`elicit.errors`, which both packages
share); the CLI turns it into one line and exit status 2."""

from elicit.errors import InputError

__all__ = ["InputError"]
