"""Pooling several prior files, one per separately interviewed expert, into one (``elicit pool``).

The files must describe the same study: the same ``[study]`` response and response units, the
same ``[units]`` and, when any has one, the same ``[model]`` table. Every statement is kept
with its expert (a statement that names none is given its file's name) and rationale; the
statements of each column are pooled again (:meth:`elicit.spec.CoefficientPrior.from_statements`)
and the noise statements too (:func:`elicit.noise_record.pool_noise`). Expert weights multiply
the statements' own weights and are recorded in the output's ``[pool]`` table.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import replace
from pathlib import Path
from typing import Any

from elicit import convert
from elicit.errors import InputError
from elicit.fields import FieldReader
from elicit.noise_record import pool_noise
from elicit.pool_table import POOL_KEYS, pool_choice
from elicit.spec import CoefficientPrior, PriorSet, Statement
from elicit.validate import parse_priors

_MODEL_DEFAULTS = {"intercept": True}  # [model] intercept = true is the same as none


def _differ(path: str, where: str, key: str, value: Any, first: str, expected: Any) -> InputError:
    return InputError(
        f"{path}: {where}: field '{key}': {value!r} differs from {expected!r} in {first}: "
        "the files must describe the same study"
    )


def check_same_study(docs: Sequence[tuple[str, Mapping[str, Any]]]) -> None:
    """Raise InputError naming the file and field where a document describes another study."""
    first, head = docs[0]
    for path, doc in docs[1:]:
        for key in ("response", "response_units"):
            a, b = head.get("study", {}).get(key), doc.get("study", {}).get(key)
            if a != b:
                raise _differ(path, "[study]", key, b, first, a)
        for table in ("units", "model"):
            a, b = head.get(table, {}), doc.get(table, {})
            default = _MODEL_DEFAULTS if table == "model" else {}
            for key in sorted(set(a) | set(b)):
                if a.get(key, default.get(key)) != b.get(key, default.get(key)):
                    raise _differ(path, f"[{table}]", key, b.get(key), first, a.get(key))


def _merged_pool_table(docs, options: Mapping[str, Any]) -> dict[str, Any]:
    table: dict[str, Any] = {}
    source: dict[str, str] = {}
    for path, doc in docs:
        for key, value in doc.get("pool", {}).items():
            if key in table and table[key] != value:
                raise _differ(path, "[pool]", key, value, source[key], table[key])
            table[key], source[key] = value, path
    for key, value in options.items():
        if key == "family" and isinstance(value, Mapping) and isinstance(table.get(key), Mapping):
            value = {**table[key], **value}
        if value:
            table[key] = value
    return table


def _family(column: str, statements, chosen: str | None, origin: list[str]) -> str:
    families = {s.family for s in statements}
    if len(statements) > 1 and "flat" in families and families != {"flat"}:
        raise InputError(f"{column}: cannot pool a flat statement with others")
    if chosen is not None:
        return chosen
    if len(families) == 1:
        return families.pop()
    said = "; ".join(f"{o}: {s.family}" for o, s in zip(origin, statements, strict=True))
    raise InputError(
        f"{column}: the experts' statements differ in family ({said}): choose one with "
        f"--family {column}=FAMILY or family in [pool]"
    )


def pool_files(
    docs: Sequence[tuple[str, Mapping[str, Any]]],
    *,
    method: str | None = None,
    family: str | Mapping[str, str] | None = None,
    weights: Mapping[str, float] | None = None,
) -> tuple[PriorSet, dict[str, Any]]:
    """The pooled priors of several prior documents, and the output's ``[pool]`` table.

    Parameters
    ----------
    docs : sequence of (path, document)
        The parsed TOML of each file (:func:`elicit.read.load_document`).
    method, family : optional
        Override the files' ``[pool]`` method and family (one family, or column -> family).
    weights : mapping of expert name -> weight, optional
        Multiply that expert's statements' weights (default 1).

    Raises
    ------
    InputError
        One line naming the file and field (or the column) at fault.

    Returns
    -------
    tuple
        The pooled :class:`elicit.spec.PriorSet`, and the ``[pool]`` table the output records.

    Examples
    --------
    >>> import elicit
    >>> docs = [("a.toml", {"coefficient": [{"name": "x", "center": 0.0, "scale": 1.0,
    ...                                      "expert": "A"}]}),
    ...         ("b.toml", {"coefficient": [{"name": "x", "center": 2.0, "scale": 1.0,
    ...                                      "expert": "B"}]})]
    >>> pooled, record = elicit.pool_files(docs)
    >>> round(pooled.get("x").center, 6)  # the linear pool of two mirror images: midway
    1.0
    """
    check_same_study(docs)
    weights = dict(weights or {})
    table = _merged_pool_table(docs, {"method": method, "family": family})
    sets = [parse_priors({**doc, "pool": table}, source=path) for path, doc in docs]
    choice = pool_choice(FieldReader("options", "[pool]", table, POOL_KEYS))
    experts = set()
    groups: dict[str, dict[str, Any]] = {}
    for (path, _), ps in zip(docs, sets, strict=True):
        if ps.block is not None and len(sets) > 1:
            raise InputError(f"{path}: [correlation]: pooling correlated blocks is not supported")
        for c in ps.coefficients:
            if not c.statements:
                raise InputError(f"{path}: coefficient ({c.column}): no statements to pool")
            g = groups.setdefault(c.column, {"c": c, "statements": [], "origin": []})
            for s in c.statements:
                named = s.expert or Path(path).name
                experts.add(named)
                g["statements"].append(replace(s, expert=named))
                g["origin"].append(Path(path).name)
    unknown = sorted(set(weights) - experts)
    if unknown:
        listing = ", ".join(sorted(experts)) or "none"
        raise InputError(f"--weight: no statement by {unknown[0]!r} (experts: {listing})")
    if isinstance(choice.family, Mapping):
        names = set(groups) | {g["c"].name for g in groups.values()}
        for column in choice.family:
            if column not in names:
                raise InputError(f"family: {column!r} is not a coefficient of the files")
    coefficients = []
    for column, g in groups.items():
        c = g["c"]
        statements = tuple(_weighted(s, weights) for s in g["statements"])
        chosen = choice.family_for(c.name, c.level)
        fam = _family(column, statements, chosen, g["origin"])
        df = None
        if fam == "student_t":
            dfs = [s.df for s in statements if s.df is not None]
            df = choice.df or (min(dfs) if dfs else convert.DEFAULT_DF)
        coefficients.append(CoefficientPrior.from_statements(
            c.name, c.level, statements, family=fam, df=df, method=choice.method))  # fmt: skip
    noises = [
        n if n.expert or n.pool else replace(n, expert=Path(path).name)
        for (path, _), ps in zip(docs, sets, strict=True)
        if (n := ps.noise) is not None
    ]
    for n in noises:
        experts.add(n.expert)
    noise = pool_noise(noises, method=choice.method, weights=weights) if noises else None
    rows: list = []
    for r in (r for ps in sets for r in ps.reference_rows):
        rows += [] if r in rows else [r]
    blocks = [ps.block for ps in sets if ps.block is not None]
    pooled = replace(sets[0], path=None, noise=noise, coefficients=tuple(coefficients),
                     block=blocks[0] if blocks else None, reference_rows=tuple(rows))  # fmt: skip
    record = {k: v for k, v in table.items() if k != "weights"}
    record["method"] = choice.method
    earlier = dict(choice.weights)
    merged = {n: earlier.get(n, 1.0) * weights.get(n, 1.0) for n in {*earlier, *weights}}
    if merged:
        record["weights"] = dict(sorted(merged.items()))
    return pooled, record


def _weighted(s: Statement, weights: Mapping[str, float]) -> Statement:
    w = weights.get(s.expert or "", 1.0)
    if not (math.isfinite(w) and w > 0):
        raise InputError(f"--weight: {s.expert}: must be positive, got {w:g}")
    return s if w == 1.0 else replace(s, weight=s.weight * w)
