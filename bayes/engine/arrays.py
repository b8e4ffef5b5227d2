"""Read-only arrays for the frozen objects of the engine and the distributions."""

from __future__ import annotations

import dataclasses

import numpy as np


def read_only(array) -> np.ndarray:
    """A read-only view of ``array`` (made an ndarray first when it is not one).

    The view's flag does not reach the caller's array, which stays writable.
    """
    view = np.asarray(array).view()
    view.flags.writeable = False
    return view


class ReadOnlyArrays:
    """Base of frozen dataclasses whose ndarray fields are made read-only views on creation.

    A subclass that defines its own ``__post_init__`` calls this one.
    """

    def __post_init__(self) -> None:
        for field in dataclasses.fields(self):
            value = getattr(self, field.name)
            if isinstance(value, np.ndarray):
                object.__setattr__(self, field.name, read_only(value))
