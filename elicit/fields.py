"""Typed, checked access to the fields of a prior document's tables (used by the validator).

Every problem is a :class:`elicit.errors.PriorFileError` of one line that names the file, the
entry and the field: ``"p.toml: coefficient 2 (x2): field 'high': must be above low, ..."``.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from elicit.convert import DEFAULT_DF
from elicit.errors import PriorFileError, shown
from elicit.limits import LARGEST, SMALLEST, UNITS
from elicit.spec import FAMILIES


class FieldReader:
    """Typed access to the fields of one table of a prior document, with one-line errors.

    Parameters
    ----------
    source : str
        The file (or "<priors>"), named first in every error.
    where : str
        The table, e.g. "[noise]" or "coefficient 3 (fly_ash)".
    table : mapping
        The table as ``tomllib`` returns it; anything else is an error.
    allowed : frozenset of str or None
        The keys the table may hold (None: any key).

    Raises
    ------
    PriorFileError
        From every method: ``"<source>: <where>: field '<key>': <problem>"``.
    """

    def __init__(self, source: str, where: str, table: Any, allowed: frozenset[str] | None):
        self.source = source
        self.where = where
        if not isinstance(table, Mapping):
            raise self.error(None, f"must be a table, got {type(table).__name__}")
        self.table = table
        if allowed is not None:
            for key in table:
                if key not in allowed:
                    raise self.error(key, f"unknown key (allowed: {', '.join(sorted(allowed))})")

    def error(self, key: str | None, problem: str) -> PriorFileError:
        """The error naming the source, the table and ``key`` (None: the table itself)."""
        where = f"{self.source}: {self.where}"
        return PriorFileError(
            f"{where}: field '{key}': {problem}" if key else f"{where}: {problem}"
        )

    def has(self, key: str) -> bool:
        """Whether the table holds ``key``."""
        return key in self.table

    def text(self, key: str, *, required: bool = False) -> str | None:
        """The string at ``key`` (None when absent and not ``required``)."""
        if key not in self.table:
            if required:
                raise self.error(key, "missing")
            return None
        value = self.table[key]
        if not isinstance(value, str) or (required and not value.strip()):
            raise self.error(key, f"must be a non-empty string, got {shown(value)}")
        return value

    def number(
        self,
        key: str,
        *,
        required: bool = False,
        positive: bool = False,
        value: Any = None,
        dimensionless: bool = False,
    ) -> float | None:
        """The finite number at ``key`` (or ``value``, checked as if it stood there), at most
        :data:`elicit.limits.LARGEST` in magnitude and, if ``positive``, at least
        :data:`elicit.limits.SMALLEST` (out of the limits, the error suggests a change of
        units unless the number is ``dimensionless``)."""
        if value is None:
            if key not in self.table:
                if required:
                    raise self.error(key, "missing")
                return None
            value = self.table[key]
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise self.error(key, f"must be a number, got {shown(value)}")
        units = "" if dimensionless else f" ({UNITS})"
        if isinstance(value, int) and abs(value) > LARGEST:  # float() of a huge int overflows
            digits = int(abs(value).bit_length() * math.log10(2)) + 1
            raise self.error(key, f"must be at most {LARGEST:g} in magnitude{units}, "
                             f"got an integer of about {digits} digits")  # fmt: skip
        value = float(value)
        if not math.isfinite(value):
            raise self.error(key, f"must be finite, got {value}")
        if abs(value) > LARGEST:
            raise self.error(key, f"must be at most {LARGEST:g} in magnitude{units}, got {value:g}")
        if positive and not value > 0:
            raise self.error(key, f"must be positive, got {value:g}")
        if positive and value < SMALLEST:
            raise self.error(key, f"must be at least {SMALLEST:g}{units}, got {value:g}")
        return value

    def mass(self, key: str = "mass") -> float:
        """The probability at ``key``, in (0, 1)."""
        value = self.number(key, required=True, dimensionless=True)
        if not 0.0 < value < 1.0:
            raise self.error(key, f"must be in (0, 1), got {value:g}")
        return value

    def range(self) -> tuple[float, float, float]:
        """``low``, ``high`` (above low) and ``mass``, all required."""
        low = self.number("low", required=True)
        high = self.number("high", required=True)
        if not low < high:
            raise self.error("high", f"must be above low, got low={low:g}, high={high:g}")
        return low, high, self.mass()

    def family_and_df(self) -> tuple[str, float | None]:
        """``family`` (default "normal") and ``df`` (student_t only, default 5)."""
        family = self.text("family") or "normal"
        if family not in FAMILIES:
            raise self.error(
                "family", f"unknown family {family!r} (expected {', '.join(FAMILIES)})"
            )
        df = self.number("df", positive=True, dimensionless=True)
        if df is not None and family != "student_t":
            raise self.error("df", f"applies to student_t only, not {family}")
        if family == "student_t" and df is None:
            df = DEFAULT_DF
        return family, df

    def numbers(self, key: str, *, required: bool = False) -> list[float] | None:
        """The list of numbers at ``key`` (None when absent and not ``required``)."""
        if key not in self.table:
            if required:
                raise self.error(key, "missing")
            return None
        values = self.table[key]
        if not isinstance(values, list):
            raise self.error(key, f"must be a list of numbers, got {shown(values)}")
        return [self.number(key, value=v) for v in values]
