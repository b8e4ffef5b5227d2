"""Read-only arrays for the frozen objects passed between stages: the one home of the rule that
an array held by a frozen object cannot be changed through it."""

from __future__ import annotations

import dataclasses

import numpy as np


def read_only(array, dtype=None) -> np.ndarray:
    """``array`` as a read-only ndarray (of ``dtype`` when given).

    An array that is read-only already is kept as it is (no copy); any other array is copied
    first, so the caller's array stays writable and the holder's cannot change with it.
    """
    arr = np.asarray(array, dtype=dtype)
    if not arr.flags.writeable:
        return arr
    if arr is array or arr.base is not None:
        arr = arr.copy()
    arr.flags.writeable = False
    return arr


def freeze(obj, *names: str) -> None:
    """Replace the named array attributes of a frozen dataclass by read-only arrays.

    For ``__post_init__``; attributes that are None are left alone.
    """
    for name in names:
        value = getattr(obj, name)
        if value is not None:
            object.__setattr__(obj, name, read_only(value))


class ReadOnlyArrays:
    """Base of frozen dataclasses whose ndarray fields are made read-only on creation.

    A subclass that defines its own ``__post_init__`` calls this one.
    """

    def __post_init__(self) -> None:
        for field in dataclasses.fields(self):
            value = getattr(self, field.name)
            if isinstance(value, np.ndarray):
                object.__setattr__(self, field.name, read_only(value))
