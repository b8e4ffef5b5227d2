"""Validating a mixture entry of a prior file (called by :mod:`elicit.validate`).

A mixture entry keeps the experts' linear pool as it is (:mod:`elicit.pool_mixture`)::

    [[coefficient]]
    name = "fly_ash"
    family = "mixture"
    pool = "linear"                  # optional; a mixture is a linear pool

    [[coefficient.component]]        # one or more; weights are normalised to sum to one
    weight = 0.5
    family = "normal"                # "normal" | "laplace"
    center = -5.0
    scale = 1.0

    [[coefficient.statement]]        # optional: the record of who said what
    ...

With statements and no components, the components are the statements (their families,
centres, scales and weights), as ``[pool] family = "mixture"`` makes them.
"""

from __future__ import annotations

from collections.abc import Callable

from elicit.errors import InputError
from elicit.fields import FieldReader
from elicit.pool_mixture import COMPONENT_FAMILIES, MIXTURE, components, from_opinions
from elicit.spec import CoefficientPrior, Statement

COMPONENT_KEYS = frozenset({"weight", "family", "center", "scale"})
ENTRY_KEYS = frozenset({"name", "level", "family", "pool", "component", "statement"})


def is_mixture(r: FieldReader) -> bool:
    """Whether the entry read by ``r`` is a mixture entry (``family = "mixture"``)."""
    return r.table.get("family") == MIXTURE


def _component(r: FieldReader) -> tuple[float, str, float, float]:
    family = r.text("family") or "normal"
    if family not in COMPONENT_FAMILIES:
        raise r.error("family", f"must be {' or '.join(COMPONENT_FAMILIES)}, got {family!r}")
    weight = r.number("weight", positive=True)
    center = r.number("center", required=True)
    scale = r.number("scale", required=True, positive=True)
    return (1.0 if weight is None else weight, family, center, scale)


def _tables(r: FieldReader, key: str) -> list:
    tables = r.table.get(key, [])
    if not isinstance(tables, list):
        raise r.error(key, f"must be [[coefficient.{key}]] tables")
    return tables


def mixture_record(
    r: FieldReader,
    name: str,
    level: str | None,
    parse_statement: Callable[[FieldReader], Statement],
    statement_keys: frozenset[str],
) -> CoefficientPrior:
    """The mixture prior of one ``[[coefficient]]`` entry with ``family = "mixture"``.

    Parameters
    ----------
    r : FieldReader
        The entry.
    parse_statement : callable
        The validator's statement parser, for the ``[[coefficient.statement]]`` tables.
    statement_keys : frozenset of str
        The keys a statement table may hold.

    Raises
    ------
    PriorFileError
        Naming the file, the entry (and its component or statement) and the field.
    """
    if not is_mixture(r):
        raise r.error("component", 'component tables belong to an entry with family = "mixture"')
    for key in r.table:
        if key not in ENTRY_KEYS:
            raise r.error(
                key, f"unknown key for a mixture (allowed: {', '.join(sorted(ENTRY_KEYS))})"
            )
    method = r.text("pool")
    if method not in (None, "linear"):
        raise r.error("pool", f"a mixture is the linear pool, got {method!r}")
    statements = tuple(
        parse_statement(FieldReader(r.source, f"{r.where} statement {i}", t, statement_keys))
        for i, t in enumerate(_tables(r, "statement"), 1)
    )
    raw = _tables(r, "component")
    if raw:
        parts = components(
            [
                _component(FieldReader(r.source, f"{r.where} component {i}", t, COMPONENT_KEYS))
                for i, t in enumerate(raw, 1)
            ]
        )
    elif statements:
        try:
            parts = from_opinions(statements)
        except InputError as exc:
            raise r.error("statement", str(exc)) from None
    else:
        raise r.error("component", "a mixture needs [[coefficient.component]] tables")
    return CoefficientPrior.mixture(name, level, parts, statements, pool=method or "linear")
