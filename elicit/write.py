"""Writing prior files: a validated PriorSet back to the TOML format of :mod:`elicit.read`.

What :func:`write_prior_file` writes, :func:`elicit.read.read_prior_file` reads back to an equal
PriorSet (floats are written with ``repr``, which round-trips exactly). A column with one
statement is written as the statement itself; a pooled (or otherwise changed) column is written
as a pooled entry with its statements in ``[[coefficient.statement]]`` tables; a mixture as its
``[[coefficient.component]]`` tables and its statements (:mod:`elicit.validate_mixture`).
"""

from __future__ import annotations

import json
import math
import re
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from elicit.io import atomic_write_text
from elicit.model_spec import model_doc
from elicit.noise_record import noise_record_doc
from elicit.spec import CoefficientPrior, NoisePrior, PriorSet, Statement

_BARE_KEY = re.compile(r"[A-Za-z0-9_-]+")


def _key(key: str) -> str:
    return key if _BARE_KEY.fullmatch(key) else json.dumps(key, ensure_ascii=False)


def _value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        return json.dumps(value, ensure_ascii=False).replace("\x7f", "\\u007f")
    if isinstance(value, Mapping):
        return "{" + ", ".join(f"{_key(k)} = {_value(v)}" for k, v in value.items()) + "}"
    if isinstance(value, list | tuple):
        return "[" + ", ".join(_value(v) for v in value) + "]"
    raise TypeError(f"cannot write {type(value).__name__} to TOML")


def _is_table_array(value: Any) -> bool:
    return isinstance(value, list) and bool(value) and all(isinstance(v, Mapping) for v in value)


def _emit(lines: list[str], path: tuple[str, ...], table: Mapping[str, Any]) -> None:
    for key, value in table.items():
        if not _is_table_array(value) and not (not path and isinstance(value, Mapping)):
            lines.append(f"{_key(key)} = {_value(value)}")
    for key, value in table.items():
        dotted = ".".join(_key(k) for k in (*path, key))
        if not path and isinstance(value, Mapping):
            lines += ["", f"[{dotted}]"]
            _emit(lines, (*path, key), value)
        elif _is_table_array(value):
            for item in value:
                lines += ["", f"[[{dotted}]]"]
                _emit(lines, (*path, key), item)


def dump_toml(doc: Mapping[str, Any], *, header: str | None = None) -> str:
    """TOML text of ``doc``: top-level mappings as tables, lists of mappings as arrays of
    tables, deeper mappings inline. ``header`` becomes leading comment lines."""
    lines = [f"# {line}".rstrip() for line in (header or "").splitlines()]
    _emit(lines, (), doc)
    return "\n".join(lines).strip("\n") + "\n"


def _statement_doc(s: Statement) -> dict[str, Any]:
    out: dict[str, Any] = {"family": s.family}
    if s.low is not None:
        out.update(low=s.low, high=s.high, mass=s.mass)
    elif s.quantiles is not None:
        out["quantiles"] = [list(pair) for pair in s.quantiles]
        if s.fit is not None:
            out["fit"] = s.fit
    elif s.bins is not None:
        out.update(bins=list(s.bins), chips=list(s.chips))
    elif s.family != "flat":
        out.update(center=s.center, scale=s.scale)
    if s.per != 1.0:
        out["per"] = s.per
    if s.df is not None:
        out["df"] = s.df
    if s.weight != 1.0:
        out["weight"] = s.weight
    if s.expert is not None:
        out["expert"] = s.expert
    if s.rationale is not None:
        out["rationale"] = s.rationale
    return out


def coefficient_doc(c: CoefficientPrior) -> dict[str, Any]:
    """One ``[[coefficient]]`` table for ``c`` (a plain statement, or a pooled entry)."""
    head: dict[str, Any] = {"name": c.name}
    if c.level is not None:
        head["level"] = c.level
    only = c.statements[0] if len(c.statements) == 1 else None
    if (
        c.pool is None
        and only is not None
        and (only.family, only.center, only.scale, only.df) == (c.family, c.center, c.scale, c.df)
    ):
        return head | _statement_doc(only)
    head["family"] = c.family
    if c.components:  # a mixture: its components hold the parameters
        head["pool"] = c.pool or "linear"
        head["component"] = [
            {"weight": p.weight, "family": p.family, "center": p.center, "scale": p.scale}
            for p in c.components
        ]
        if c.statements:
            head["statement"] = [_statement_doc(s) for s in c.statements]
        return head
    if c.family != "flat":
        head.update(center=c.center, scale=c.scale)
    if c.df is not None:
        head["df"] = c.df
    if c.pool is not None:
        head["pool"] = c.pool
    if c.pool_misfit is not None:
        head["pool_misfit"] = c.pool_misfit
    if c.statements:
        head["statement"] = [_statement_doc(s) for s in c.statements]
    return head


def _noise_doc(noise: NoisePrior) -> dict[str, Any]:
    if noise.sd is not None:
        return {"sd": noise.sd}
    if noise.low is not None:
        return {"low": noise.low, "high": noise.high, "mass": noise.mass}
    return {"shape": noise.shape, "scale": noise.scale}


def prior_doc(priors: PriorSet) -> dict[str, Any]:
    """The TOML document (nested dicts and lists) of a validated PriorSet."""
    doc: dict[str, Any] = {}
    study = {
        k: v
        for k, v in (
            ("title", priors.title),
            ("response", priors.response),
            ("response_units", priors.response_units),
        )
        if v is not None
    }
    if study:
        doc["study"] = study
    if priors.units:
        doc["units"] = dict(priors.units)
    if priors.model is not None:
        doc["model"] = model_doc(priors.model)
    if priors.noise is not None:
        doc["noise"] = noise_record_doc(priors.noise, _noise_doc)
    if priors.coefficients:
        doc["coefficient"] = [coefficient_doc(c) for c in priors.coefficients]
    if priors.block is not None:
        b = priors.block
        block: dict[str, Any] = {
            "names": list(b.names),
            "mean": [float(v) for v in b.mean],
            "cov": [[float(v) for v in row] for row in b.cov],
        }
        if b.rows:
            block["row"] = [
                {"at": dict(r.at), "low": r.low, "high": r.high, "mass": r.mass}
                | ({"expert": r.expert} if r.expert is not None else {})
                | ({"rationale": r.rationale} if r.rationale is not None else {})
                for r in b.rows
            ]
        doc["correlation"] = block
    if priors.reference_rows:
        doc["reference_row"] = [
            ({"label": r.label} if r.label is not None else {}) | dict(r.values)
            for r in priors.reference_rows
        ]
    return doc


def write_prior_file(priors: PriorSet, path: str | Path, *, header: str | None = None) -> None:
    """Write ``priors`` to ``path`` atomically (see :func:`elicit.io.atomic_write_text`).

    Parameters
    ----------
    priors : PriorSet
    path : str or Path
    header : str, optional
        Comment lines written at the top of the file.

    Returns
    -------
    None

    Examples
    --------
    >>> import elicit, tempfile, pathlib
    >>> priors = elicit.parse_priors({"coefficient": [{"name": "x", "center": 2.0, "scale": 0.5}]})
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "priors.toml"
    >>> elicit.write_prior_file(priors, path)
    >>> elicit.read_prior_file(path).get("x").scale  # read back as written
    0.5
    """
    atomic_write_text(path, dump_toml(prior_doc(priors), header=header))
