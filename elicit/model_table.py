"""Reading the ``[model]`` table of a prior file into a :class:`elicit.model_spec.ModelSpec`.

The formula is never evaluated here: :func:`check_formula_words` only refuses, at the door,
anything outside column names (plain or backquoted), numbers, ``+ - * / ** :``, parentheses,
one ``~`` and the calls :data:`CALLS`; the bayes side parses it fully (``bayes.data.grammar``)
before any formula library sees it.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from typing import Any

from elicit.errors import shown
from elicit.fields import FieldReader
from elicit.model_spec import ModelSpec, formula_lhs

MODEL_KEYS = frozenset({"formula", "reference", "intercept"})
CALLS = ("I", "C", "log", "exp", "sqrt", "abs")  # the calls a formula may hold
MAX_FORMULA = 20_000  # characters

_TOKEN = re.compile(
    r"\s+|(?P<bq>`[^`]+`)|(?P<num>(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)"
    r"|(?P<name>[^\W\d]\w*)|(?P<op>\*\*|[-+*/:()~])"
)


def check_formula_words(r: FieldReader, key: str, text: str) -> None:
    """Refuse a formula holding anything but column names (plain or backquoted), numbers, the
    operators, parentheses, one ``~`` and calls to :data:`CALLS`: one error naming the field."""
    if len(text) > MAX_FORMULA:
        raise r.error(key, f"a formula of at most {MAX_FORMULA} characters, got {len(text)}")
    tokens, pos = [], 0
    while pos < len(text):
        m = _TOKEN.match(text, pos)
        if m is None:
            raise r.error(key, f"{text[pos]!r} at character {pos + 1} is not part of a formula")
        if m.lastgroup is not None:
            tokens.append((m.lastgroup, m.group()))
        pos = m.end()
    depth = 0
    for i, (kind, word) in enumerate(tokens):
        bare = word.strip("`")
        if bare.startswith("__"):
            raise r.error(key, f"the name {bare!r} is not allowed (leading double underscore)")
        calls = i + 1 < len(tokens) and tokens[i + 1] == ("op", "(")
        if kind == "name" and calls and word not in CALLS:
            raise r.error(key, f"the call {word}(...) is not allowed (only {', '.join(CALLS)})")
        depth += word == "(" if kind == "op" else 0
        depth -= word == ")" if kind == "op" else 0
        if depth < 0:
            raise r.error(key, "a ')' without its '('")
    if depth:
        raise r.error(key, "a '(' is not closed")
    if [t for t in tokens if t == ("op", "~")][1:]:
        raise r.error(key, "more than one '~'")
    if not any(kind in ("name", "bq") for kind, _ in tokens):
        raise r.error(key, f"names no column: {shown(text)}")


def parse_model(source: str, table: Any, response: str | None) -> ModelSpec:
    """The validated ``[model]`` table (``response``: the ``[study]`` response, which a formula
    with a left side must name)."""
    r = FieldReader(source, "[model]", table, MODEL_KEYS)
    formula = r.text("formula", required=r.has("formula"))
    if formula is not None:
        check_formula_words(r, "formula", formula)
        lhs = formula_lhs(formula)
        if lhs is not None and response is not None and lhs != response:
            raise r.error(
                "formula", f"its response {lhs!r} is not the [study] response {response!r}"
            )
    reference = r.table.get("reference", {})
    if not isinstance(reference, Mapping):
        raise r.error("reference", f"must be a table column -> level, got {shown(reference)}")
    for column, level in reference.items():
        if not isinstance(level, str) or not level.strip() or not column.strip():
            raise r.error("reference", f"{column!r}: the level must be a non-empty string, "
                          f"got {shown(level)}")  # fmt: skip
    intercept = r.table.get("intercept", True)
    if not isinstance(intercept, bool):
        raise r.error("intercept", f"must be true or false, got {shown(intercept)}")
    return ModelSpec(formula, dict(reference), intercept)
