"""The sweep's inputs: the grid of width factors and the threshold conclusions to follow."""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np

from bayes.errors import InputError
from bayes.sensitivity.wording import threshold_text

DEFAULT_COUNT = 30
DEFAULT_RANGE = (1.0 / 8.0, 8.0)

_THRESHOLD = re.compile(r"^\s*(?P<name>[^<>=]+?)\s*(?P<op><=|>=|<|>)\s*(?P<value>\S+)\s*$")


@dataclass(frozen=True)
class Threshold:
    """A conclusion to test: ``name op value``, e.g. ``water_cement < -40``.

    Attributes
    ----------
    name : str
        Coefficient name.
    op : {"<", ">"}
        ``<=`` and ``>=`` read as ``<`` and ``>`` (the posterior is continuous).
    value : float
        Natural units of the coefficient.
    """

    name: str
    op: str
    value: float

    @classmethod
    def parse(cls, text: str) -> Threshold:
        """Read ``'water_cement<-40'``; :class:`InputError` when malformed."""
        m = _THRESHOLD.match(text)
        if not m:
            raise InputError(
                f"threshold must read NAME<VALUE or NAME>VALUE (e.g. water_cement<-40), "
                f"got {text!r}"
            )
        try:
            value = float(m["value"])
        except ValueError:
            raise InputError(
                f"threshold {text!r}: the value {m['value']!r} is not a number"
            ) from None
        if not math.isfinite(value):
            raise InputError(f"threshold {text!r}: the value must be finite, got {value}")
        return cls(m["name"], m["op"][0], value)

    @property
    def text(self) -> str:
        return threshold_text(self.name, self.op, self.value)


def thresholds_for(thresholds, names) -> list[Threshold]:
    """``thresholds`` (Threshold or text) read and checked against the coefficient names.

    Raises
    ------
    InputError
        When one is malformed or names no coefficient.
    """
    out = [t if isinstance(t, Threshold) else Threshold.parse(t) for t in thresholds]
    for t in out:
        if t.name not in names:
            raise InputError(f"thresholds {t.text!r}: no coefficient named {t.name!r} "
                             f"(coefficients: {', '.join(names)})")  # fmt: skip
    return out


def default_factors(
    count: int = DEFAULT_COUNT, low: float = DEFAULT_RANGE[0], high: float = DEFAULT_RANGE[1]
) -> np.ndarray:
    """``count`` log-spaced width factors from ``low`` to ``high``, plus 1 (the stated priors).

    Raises
    ------
    InputError
        When the range is not 0 < low < 1 < high or count < 2.
    """
    if count < 2:
        raise InputError(f"count must be at least 2, got {count}")
    if not (0 < low < 1 < high and math.isfinite(high)):
        raise InputError(f"low and high must satisfy 0 < low < 1 < high, got {low:g} and {high:g}")
    return factor_grid(np.geomspace(low, high, count))


def factor_grid(factors) -> np.ndarray:
    """The width factors sorted, without repeats, with 1 (the stated priors) added when absent.

    Raises
    ------
    InputError
        When there are none or one is not positive and finite.
    """
    f = np.unique(np.asarray(factors, dtype=float))
    if f.size == 0:
        raise InputError("factors must hold at least one width factor, got none")
    bad = f[~(np.isfinite(f) & (f > 0))]
    if bad.size:
        raise InputError(f"factors must be positive and finite, got {', '.join(map(str, bad))}")
    if not np.any(f == 1.0):
        f = np.sort(np.append(f, 1.0))
    return f
