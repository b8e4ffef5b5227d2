"""A statement as the page sends it (field name -> typed text) -> a prior-file entry.

Only the shape of the form is read here (text to number, which method, which fields); whether
the statement is acceptable is for the one validator to say (:func:`elicit.answers.with_answer`).
Its one-line error names a prior-file field; :func:`field_of` maps it back to the form field
the message is shown beside.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from typing import Any

from elicit.spec import FAMILIES

METHODS = ("range", "quantiles", "bins")
QUANTILE_SETS = {"quartiles": (0.25, 0.5, 0.75), "wide": (0.05, 0.5, 0.95)}
DEFAULT_CHIPS = 20  # chips the expert places, all of them, in the chips-and-bins method
MAX_BINS = 40
NOISE = "noise"  # the column name the page uses for the noise sd
CONDITIONAL = "conditional"  # the column name of the conditional-means screen

# prior-file field -> form field
_FIELDS = {"low": "low", "high": "high", "mass": "mass", "per": "per", "df": "df",
           "family": "family", "quantiles": "quantiles", "bins": "bin_low", "chips": "chips",
           "expert": "expert", "rationale": "rationale", "scale": "general",
           "center": "general"}  # fmt: skip


class FormError(ValueError):
    """Problems with the form's fields, by form field."""

    def __init__(self, fields: Mapping[str, str]):
        super().__init__("; ".join(f"{k}: {v}" for k, v in fields.items()))
        self.fields = dict(fields)


def field_of(message: str) -> tuple[str, str]:
    """(form field, problem) of a validator message ``"...: field 'high': problem"``; a
    conditional-means row's field is ``row{i}.low`` (``"[correlation] row 2: field 'low'"``
    -> ``row1.low``, rows from 0 as the page counts them)."""
    found = re.search(r"field '([^']+)': (.*)$", message)
    if not found:
        return "general", message.split(": ", 2)[-1]
    row = re.search(r"\[correlation\] row (\d+): field '(low|high|mass)'", message)
    if row:
        return f"row{int(row.group(1)) - 1}.{row.group(2)}", found.group(2)
    return _FIELDS.get(found.group(1), "general"), found.group(2)


def row_ranges(form: Mapping[str, Any], k: int) -> tuple[list[dict[str, float]], dict[str, Any]]:
    """The stated ranges ``rows[i] = {low, high, mass}`` of the conditional-means screen's
    ``k`` reference rows, and its expert and rationale. Raises FormError (fields ``row{i}.low``
    and so on)."""
    rows = form.get("rows")
    if (
        not isinstance(rows, list)
        or len(rows) != k
        or not all(isinstance(r, Mapping) for r in rows)
    ):
        raise FormError({"general": f"need a range at each of the {k} reference rows"})
    errors: dict[str, str] = {}
    ranges = []
    for i, row in enumerate(rows):
        r = _Reader(row)
        ranges.append({key: r.number(key) for key in ("low", "high", "mass")})
        errors.update({f"row{i}.{key}": text for key, text in r.errors.items()})
    said = _Reader(form)
    who = {key: said.text(key) for key in ("expert", "rationale")}
    errors.update(said.errors)
    if errors:
        raise FormError(errors)
    return ranges, who


class _Reader:
    def __init__(self, form: Mapping[str, Any]):
        self.form = form
        self.errors: dict[str, str] = {}

    def number(self, key: str, *, default: float | None = None) -> float | None:
        raw = self.form.get(key)
        text = "" if raw is None else str(raw).strip()
        if not text:
            if default is None:
                self.errors.setdefault(key, "a number is needed here")
            return default
        try:
            value = float(text)
        except ValueError:
            self.errors.setdefault(key, f"not a number: {text[:40]!r}")
            return None
        if not math.isfinite(value):
            self.errors.setdefault(key, f"must be a finite number, got {text[:40]!r}")
            return None
        return value

    def text(self, key: str) -> str | None:
        raw = self.form.get(key)
        if raw is not None and not isinstance(raw, str):
            self.errors.setdefault(key, "must be text")
            return None
        text = (raw or "").strip()
        return text or None

    def finished(self, entry: dict[str, Any]) -> dict[str, Any]:
        """``entry`` with the expert's name and rationale when given; every field's message
        together as one :class:`FormError` when any field was wrong."""
        for key in ("expert", "rationale"):
            if value := self.text(key):
                entry[key] = value
        if self.errors:
            raise FormError(self.errors)
        return entry


def bin_edges(form: Mapping[str, Any]) -> list[float]:
    """The bin edges of the chips-and-bins method: ``bin_count`` equal bins from ``bin_low``
    to ``bin_high``. Raises FormError."""
    r = _Reader(form)
    low, high = r.number("bin_low"), r.number("bin_high")
    count = r.number("bin_count", default=10.0)
    if count is not None and not (count == int(count) and 3 <= count <= MAX_BINS):
        r.errors["bin_count"] = f"a whole number of bins from 3 to {MAX_BINS}"
    if low is not None and high is not None and not high > low:
        r.errors["bin_high"] = f"must be above the lowest edge ({low:g})"
    if r.errors:
        raise FormError(r.errors)
    n = int(count)
    return [low + (high - low) * i / n for i in range(n + 1)]


def noise_entry(form: Mapping[str, Any]) -> dict[str, Any]:
    """The ``[noise]`` table from the form (a range of the residual sd and its probability)."""
    r = _Reader(form)
    return r.finished({"low": r.number("low"), "high": r.number("high"), "mass": r.number("mass")})


def coefficient_entry(form: Mapping[str, Any], name: str) -> dict[str, Any]:
    """The ``[[coefficient]]`` table from the form. Raises FormError."""
    r = _Reader(form)
    method = form.get("method", "range")
    family = form.get("family", "normal")
    if method not in METHODS:
        r.errors["method"] = f"one of {', '.join(METHODS)}"
    if family not in FAMILIES or family == "flat":
        r.errors["family"] = "one of normal, laplace, student_t"
    entry: dict[str, Any] = {"name": name, "family": family}
    if family == "student_t":
        entry["df"] = r.number("df", default=5.0)
    per = r.number("per", default=1.0)
    if method == "range":
        entry.update(low=r.number("low"), high=r.number("high"), mass=r.number("mass"))
    elif method == "quantiles":
        probs = QUANTILE_SETS.get(form.get("quantile_set", "quartiles"))
        if probs is None:
            r.errors["quantile_set"] = f"one of {', '.join(QUANTILE_SETS)}"
            probs = ()
        values = [r.number(f"q{i}") for i in range(len(probs))]
        for i in range(1, len(values)):
            if None not in (values[i - 1], values[i]) and not values[i] > values[i - 1]:
                r.errors.setdefault(f"q{i}", "must be above the value before it")
        entry.update(quantiles=[[p, v] for p, v in zip(probs, values, strict=True)],
                     fit="probability")  # fmt: skip
    elif method == "bins":
        try:
            edges = bin_edges(form)
        except FormError as exc:
            r.errors.update(exc.fields)
            edges = []
        chips = form.get("chips")
        total = int(form.get("chip_total") or DEFAULT_CHIPS)
        ok = isinstance(chips, list) and all(isinstance(c, int) and c >= 0 for c in chips)
        if not ok or (edges and len(chips) != len(edges) - 1):
            r.errors.setdefault("chips", "one whole number of chips per bin")
        elif sum(chips) != total:
            left = total - sum(chips)
            r.errors.setdefault("chips", f"place all {total} chips ({left} left)" if left > 0
                                else f"{-left} chips too many: {total} in all")  # fmt: skip
        entry.update(bins=edges, chips=chips if ok else [])
    if per is not None and per != 1.0:
        entry["per"] = per
    return r.finished(entry)
