"""The one exception type for bad input; the CLI turns it into one line and exit status 2."""


class InputError(ValueError):
    """Bad input: the message is one line naming the file, row, column or field."""
