"""The one validator of priors: a prior document (the parsed TOML) -> a :class:`PriorSet`.

Every path into a prior (a file, the interview, ``elicit pool``, the Python API) goes through
:func:`parse_priors`. Errors are :class:`elicit.errors.PriorFileError`, one line naming the file,
the entry and the field; warnings (e.g. asymmetric quantiles) are
:class:`elicit.errors.ElicitationWarning`. The format is described in :mod:`elicit.read`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

import numpy as np

from elicit import convert
from elicit.conditional import CorrelatedBlock, RowStatement, from_stated_rows
from elicit.errors import PriorFileError, shown
from elicit.fields import FieldReader
from elicit.limits import LARGEST, SMALLEST, UNITS
from elicit.model_table import parse_model
from elicit.noise_record import NOISE_RECORD_KEYS, noise_record
from elicit.pool import METHODS
from elicit.pool_table import POOL_KEYS, pool_choice
from elicit.spec import (
    INTERCEPT,
    CoefficientPrior,
    NoisePrior,
    PriorSet,
    ReferenceRow,
)
from elicit.statements import STATEMENT_KEYS, check_center_scale, parse_statement
from elicit.validate_mixture import is_mixture, mixture_record

_ENTRY_KEYS = STATEMENT_KEYS | {"name", "level", "pool", "pool_misfit", "statement", "component"}
_TOP_KEYS = frozenset(
    {"study", "units", "model", "noise", "pool", "coefficient", "correlation", "reference_row"}
)
_STUDY_KEYS = frozenset({"title", "response", "response_units"})
_NOISE_KEYS = frozenset({"sd", "low", "high", "mass", "shape", "scale"}) | NOISE_RECORD_KEYS
_CORRELATION_KEYS = frozenset({"names", "mean", "cov", "row"})
_ROW_KEYS = frozenset({"at", "low", "high", "mass", "expert", "rationale"})
# statements pooled together: centers and scales within this factor of the narrowest scale
POOL_SPREAD = 1e8


def _entry_label(index: int, table: Any) -> str:
    name = table.get("name") if isinstance(table, Mapping) else None
    level = table.get("level") if isinstance(table, Mapping) else None
    if isinstance(name, str) and isinstance(level, str):
        return f"coefficient {index} ({name}[{level}])"
    return f"coefficient {index} ({name})" if isinstance(name, str) else f"coefficient {index}"


def _parse_coefficients(
    source: str, entries: Any, pool_table: FieldReader | None
) -> tuple[CoefficientPrior, ...]:
    if not isinstance(entries, list):
        raise PriorFileError(f"{source}: coefficient: must be an array of tables [[coefficient]]")
    choice = pool_choice(pool_table)
    groups: dict[str, dict[str, Any]] = {}
    for index, table in enumerate(entries, 1):
        r = FieldReader(source, _entry_label(index, table), table, _ENTRY_KEYS)
        name = r.text("name", required=True)
        level = r.text("level")
        column = name if level is None else f"{name}[{level}]"
        group = groups.setdefault(
            column, {"name": name, "level": level, "statements": [], "readers": [], "record": None}
        )
        if group["record"] is not None or (group["readers"] and r.has("statement") | is_mixture(r)):
            raise r.error("name", f"{column} has a pooled entry, which must be its only entry")
        group["readers"].append(r)
        if r.has("statement") or is_mixture(r) or r.has("component"):
            group["record"] = _parse_record(r, name, level)
        else:
            for key in ("pool", "pool_misfit"):
                if r.has(key):
                    raise r.error(key, "only a pooled entry with [[coefficient.statement]] tables")
            group["statements"].append(parse_statement(r))

    out = []
    for column, group in groups.items():
        if group["record"] is not None:
            out.append(group["record"])
            continue
        statements = tuple(group["statements"])
        families = {s.family for s in statements}
        first = group["readers"][0]
        if len(statements) > 1 and "flat" in families and families != {"flat"}:
            raise first.error("family", f"cannot pool a flat entry for {column} with others")
        shared = families.pop() if len(families) == 1 else None
        chosen = choice.family_for(group["name"], group["level"])
        family = (chosen or shared) if len(statements) > 1 else shared
        if family is None:
            raise first.error(
                "family", f"entries for {column} differ in family: set family in [pool]"
            )
        df = None
        if family == "student_t":
            dfs = [s.df for s in statements if s.df is not None]
            df = choice.df or (min(dfs) if dfs else convert.DEFAULT_DF)
        if len(statements) > 1 and family != "flat":
            _check_poolable(first, column, statements)
        prior = CoefficientPrior.from_statements(
            group["name"], group["level"], statements, family=family, df=df, method=choice.method
        )
        if len(statements) > 1 and family != "flat":
            what = f"pooling the entries for {column} "
            check_center_scale(first, None, prior.center, prior.scale, what=what)
        out.append(prior)
    return tuple(out)


def _check_poolable(r: FieldReader, column: str, statements) -> None:
    """Statements pooled together lie within :data:`POOL_SPREAD` of the narrowest one's scale
    (the pool's grid and root finding cannot resolve a wider spread)."""
    narrowest = min(s.scale for s in statements)
    spread = max(
        max(s.scale for s in statements),
        max(s.center for s in statements) - min(s.center for s in statements),
    )
    if spread > POOL_SPREAD * narrowest:
        raise r.error(
            None,
            f"the entries for {column} are too far apart to pool: their centers and scales "
            f"span {spread:.3g}, over {POOL_SPREAD:g} times the narrowest scale {narrowest:.3g}",
        )


def _parse_record(r: FieldReader, name: str, level: str | None) -> CoefficientPrior:
    if is_mixture(r) or r.has("component"):
        return mixture_record(r, name, level, parse_statement, STATEMENT_KEYS)
    for key in ("low", "high", "mass", "quantiles", "per", "expert", "rationale", "weight"):
        if r.has(key):
            raise r.error(key, "a pooled entry holds center/scale; statements go in its tables")
    family, df = r.family_and_df()
    if family == "flat":
        center, scale = 0.0, math.nan
        for key in ("center", "scale"):
            if r.has(key):
                raise r.error(key, "a flat prior takes no parameters")
    else:
        center = r.number("center", required=True)
        scale = r.number("scale", required=True, positive=True)
        check_center_scale(r, "scale", center, scale)
    method = r.text("pool")
    if method is not None and method not in METHODS:
        raise r.error("pool", f"must be one of {', '.join(METHODS)}, got {shown(method)}")
    misfit = r.number("pool_misfit", dimensionless=True)
    if misfit is not None and misfit < 0:
        raise r.error("pool_misfit", f"must be >= 0, got {misfit:g}")
    tables = r.table["statement"]
    if not isinstance(tables, list) or not tables:
        raise r.error("statement", "must be one or more [[coefficient.statement]] tables")
    statements = tuple(
        parse_statement(FieldReader(r.source, f"{r.where} statement {i}", t, STATEMENT_KEYS))
        for i, t in enumerate(tables, 1)
    )
    return CoefficientPrior(name, level, family, center, scale, df, statements, method, misfit)


def _parse_noise(source: str, table: Any, where: str = "[noise]") -> NoisePrior:
    r = FieldReader(source, where, table, _NOISE_KEYS)
    given = [k for k in ("sd", "low", "high", "mass", "shape", "scale") if r.has(k)]
    if not given:
        raise r.error(None, "give sd, or low/high/mass, or shape/scale")
    if r.has("sd"):
        if len(given) > 1:
            raise r.error(given[1], "give sd alone, or a range, or shape/scale")
        return NoisePrior(r.number("sd", positive=True), None, None, None, None, None)
    if r.has("shape") or r.has("scale"):
        if any(r.has(k) for k in ("low", "high", "mass")):
            raise r.error("shape", "give a range or shape/scale, not both")
        shape = r.number("shape", required=True, positive=True, dimensionless=True)
        scale = r.number("scale", required=True, positive=True)
        low, high = convert.NOISE_SHAPES
        if not low <= shape <= high:
            raise r.error("shape", f"must be within {low:g}..{high:g}, got {shape:g}")
        sd_range = convert.noise_range(shape, scale, 0.98)
        if not all(SMALLEST <= v <= LARGEST for v in sd_range):
            span = f"{sd_range[0]:.3g}..{sd_range[1]:.3g}"
            raise r.error(
                "scale", f"gives a noise sd whose 98% range {span} is not within "
                f"{SMALLEST:g}..{LARGEST:g} ({UNITS})",
            )  # fmt: skip
        return NoisePrior(None, None, None, None, shape, scale)
    low, high, mass = r.range()
    if not low > 0:
        raise r.error("low", f"a noise sd must be positive, got {low:g}")
    try:
        with np.errstate(divide="ignore", over="ignore"):  # a range too wide: the error below
            shape, scale = convert.noise_from_range(low, high, mass)
    except ValueError as exc:
        raise r.error("high", str(exc)) from None
    return NoisePrior(None, low, high, mass, shape, scale)


def _parse_block(source: str, table: Any, taken: set[str]) -> CorrelatedBlock:
    r = FieldReader(source, "[correlation]", table, _CORRELATION_KEYS)
    names = r.table.get("names")
    if not isinstance(names, list) or not names or not all(isinstance(n, str) and n for n in names):
        raise r.error("names", "must be a non-empty list of column names")
    if len(set(names)) != len(names):
        raise r.error("names", "lists a name twice")
    for n in names:
        if n in taken:
            raise r.error("names", f"{shown(n)} also has a [[coefficient]] entry")
    k = len(names)
    rows: tuple[RowStatement, ...] = ()
    mean = cov = None
    if r.has("row"):
        raw = r.table["row"]
        if not isinstance(raw, list):
            raise r.error("row", "must be [[correlation.row]] tables")
        if len(raw) != k:
            raise r.error("row", f"need {k} rows (one per name), got {len(raw)}")
        rows = tuple(_parse_row(source, i, t, names) for i, t in enumerate(raw, 1))
        try:
            mean, cov = from_stated_rows(
                names, [dict(s.at) for s in rows], [(s.low, s.high, s.mass) for s in rows]
            )
        except ValueError as exc:
            raise r.error("row", str(exc)) from None
    given_mean = r.numbers("mean")
    given_cov = r.table.get("cov")
    if (given_mean is None) != (given_cov is None):
        raise r.error("cov" if given_mean is not None else "mean", "give mean and cov together")
    if given_mean is not None:
        if len(given_mean) != k:
            raise r.error("mean", f"need {k} numbers (one per name), got {len(given_mean)}")
        if not isinstance(given_cov, list) or len(given_cov) != k:
            raise r.error("cov", f"must be a {k} x {k} list of lists")
        matrix = []
        for line in given_cov:
            if not isinstance(line, list) or len(line) != k:
                raise r.error("cov", f"must be a {k} x {k} list of lists")
            matrix.append([r.number("cov", value=v) for v in line])
        given = np.array(matrix)
        if not np.allclose(given, given.T, rtol=1e-12, atol=0):
            raise r.error("cov", "is not symmetric")
        given = 0.5 * (given + given.T)
        if mean is None:
            mean, cov = np.array(given_mean), given
        elif not (
            np.allclose(mean, given_mean, rtol=1e-9, atol=1e-12 * np.abs(mean).max())
            and np.allclose(cov, given, rtol=1e-9, atol=1e-12 * np.abs(cov).max())
        ):
            raise r.error("mean", "mean/cov do not match the rows: delete them to re-derive")
    if mean is None:
        raise r.error("mean", "give mean and cov, or the stated rows")
    try:
        np.linalg.cholesky(cov)
    except np.linalg.LinAlgError:
        raise r.error("cov", "is not positive definite") from None
    return CorrelatedBlock(tuple(names), mean, cov, rows)


def _parse_row(source: str, index: int, table: Any, names: list[str]) -> RowStatement:
    r = FieldReader(source, f"[correlation] row {index}", table, _ROW_KEYS)
    at = r.table.get("at")
    needed = [n for n in names if n != INTERCEPT]
    if not isinstance(at, Mapping):
        raise r.error("at", "must be a table of predictor values, e.g. at = {x = 1.0}")
    for key in at:
        if key not in needed:
            raise r.error("at", f"{shown(key)} is not one of the names {', '.join(needed)}")
    for key in needed:
        if key not in at:
            raise r.error("at", f"missing a value for {key!r}")
    low, high, mass = r.range()
    values = tuple((n, r.number("at", value=at[n])) for n in needed)
    return RowStatement(values, low, high, mass, r.text("expert"), r.text("rationale"))


def _parse_reference_rows(source: str, tables: Any) -> tuple[ReferenceRow, ...]:
    if not isinstance(tables, list):
        raise PriorFileError(f"{source}: reference_row: must be [[reference_row]] tables")
    rows = []
    for i, table in enumerate(tables, 1):
        r = FieldReader(source, f"reference_row {i}", table, None)
        label = r.text("label")
        values = {k: r.number(k) for k in r.table if k != "label"}
        if not values:
            raise r.error(None, "gives no predictor values")
        rows.append(ReferenceRow(label, values))
    return tuple(rows)


def parse_priors(doc: Mapping[str, Any], *, source: str = "<priors>") -> PriorSet:
    """Validate a prior document (the parsed TOML) into a :class:`PriorSet`.

    The one validator every path into a prior uses: the file reader, the interview, ``elicit
    pool`` and the Python API.

    Parameters
    ----------
    doc : mapping
        The document, as ``tomllib`` returns it.
    source : str
        Named in error messages (the file path).

    Raises
    ------
    PriorFileError
        One line naming ``source``, the entry and the field.

    Returns
    -------
    PriorSet

    Examples
    --------
    >>> import elicit
    >>> priors = elicit.parse_priors({"coefficient": [
    ...     {"name": "x", "family": "laplace", "low": -1.0, "high": 1.0, "mass": 0.5}]})
    >>> c = priors.get("x")
    >>> c.family, round(c.scale, 4)  # P(|X| <= 1) = 1 - exp(-1 / b) = 0.5: b = 1 / ln 2
    ('laplace', 1.4427)
    """
    top = FieldReader(source, "top level", doc, _TOP_KEYS)
    study = FieldReader(source, "[study]", doc.get("study", {}), _STUDY_KEYS)
    units_table = FieldReader(source, "[units]", doc.get("units", {}), None)
    units = {k: units_table.text(k) for k in units_table.table}
    noise = noise_record(source, doc["noise"], _parse_noise) if top.has("noise") else None
    pool_table = FieldReader(source, "[pool]", doc["pool"], POOL_KEYS) if top.has("pool") else None
    coefficients = _parse_coefficients(source, doc.get("coefficient", []), pool_table)
    block = None
    if top.has("correlation"):
        block = _parse_block(source, doc["correlation"], {c.column for c in coefficients})
    reference_rows = _parse_reference_rows(source, doc.get("reference_row", []))
    response = study.text("response")
    model = parse_model(source, doc["model"], response) if top.has("model") else None
    return PriorSet(
        path=source if source != "<priors>" else None,
        title=study.text("title"),
        response=response,
        response_units=study.text("response_units"),
        units=units,
        noise=noise,
        coefficients=coefficients,
        block=block,
        reference_rows=reference_rows,
        model=model,
    )
