"""The prior file: reading, the one validator, and the validated prior objects ``bayes`` uses.

Every path into a prior (a file, the interview, the Python API) goes through
:func:`parse_priors`. Errors are :class:`PriorFileError`, one line naming the file, the entry and
the field. Warnings (e.g. asymmetric quantiles) are :class:`ElicitationWarning`.

File format (TOML, read with ``tomllib``). All keys are optional unless said otherwise;
any other key is an error.

``[study]``
    ``title``, ``response`` (column of the data), ``response_units``.
``[units]``
    ``predictor = "unit"`` for each predictor (used in feedback and reports).
``[noise]`` (the residual sd of the response; absent: Jeffreys prior)
    Either ``sd`` (known), or ``low``, ``high``, ``mass`` (a stated range of the sd, read as
    an inverse-gamma prior on the variance, see :mod:`elicit.convert`), or ``shape``, ``scale``
    (that inverse gamma given directly: ``scipy.stats.invgamma(shape, scale=scale)``).
``[pool]`` (how several entries for one coefficient are combined, see :mod:`elicit.pool`)
    ``method = "linear" | "log"`` (default ``"linear"``); ``family`` and ``df`` of pooled
    priors (default: the family the entries share; required when they differ). A column with
    a single entry keeps its own family.
``[[coefficient]]`` (one per statement; several for one column are pooled)
    ``name`` (required: column name, or ``"intercept"``); ``level`` (a categorical level: the
    prior is on its difference from the reference level, column ``name[level]``);
    ``family = "normal" | "laplace" | "student_t" | "flat"`` (default ``"normal"``);
    ``df`` (student_t only, default 5); then exactly one of

    - ``low``, ``high``, ``mass``: the range holds the effect with probability ``mass``;
    - ``quantiles = [[0.05, -80], [0.5, -60], [0.95, -35]]``: (probability, value) pairs,
      fitted by least squares on the quantile scale;
    - ``center``, ``scale``: the distribution's own parameters, per one unit of predictor;

    (none of them for ``flat``); ``per`` (default 1: the range or quantiles are for a change of
    ``per`` units of the predictor); ``expert``, ``rationale`` (kept for the record);
    ``weight`` (pooling weight, default 1).

    A pooled entry, as written by ``elicit pool``, holds the pooled ``center``, ``scale``
    (and ``df``) with ``pool = "linear" | "log"`` and ``pool_misfit``, followed by the original
    statements as ``[[coefficient.statement]]`` tables (same keys as a plain entry, without
    ``name`` and ``level``); its values are taken as written and it must be the only entry for
    its column.
``[correlation]`` (a conditional-means prior: correlated Gaussian, see :mod:`elicit.conditional`)
    ``names`` (coefficient columns, may include ``"intercept"``; none may also have a
    ``[[coefficient]]`` entry); ``mean`` (k numbers) and ``cov`` (k x k, positive definite),
    and/or the stated rows ``[[correlation.row]]`` with ``at = {predictor = value, ...}``,
    ``low``, ``high``, ``mass``, ``expert``, ``rationale``. With rows, mean and cov are derived
    from them (and, if also written, must agree with them).
``[[reference_row]]``
    ``label`` and ``predictor = value`` pairs: rows at which ``elicit show`` reports what the
    priors imply for the response.
"""

from __future__ import annotations

import math
import tomllib
import warnings
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import numpy as np

from elicit import convert
from elicit.conditional import from_stated_rows
from elicit.errors import ElicitationWarning, PriorFileError
from elicit.pool import DEFAULT_METHOD, METHODS, pool

FAMILIES = ("normal", "laplace", "student_t", "flat")
INTERCEPT = "intercept"

_STATEMENT_KEYS = frozenset(
    {"family", "low", "high", "mass", "per", "quantiles", "center", "scale", "df"}
    | {"expert", "rationale", "weight"}
)
_ENTRY_KEYS = _STATEMENT_KEYS | {"name", "level", "pool", "pool_misfit", "statement"}
_TOP_KEYS = frozenset(
    {"study", "units", "noise", "pool", "coefficient", "correlation", "reference_row"}
)
_STUDY_KEYS = frozenset({"title", "response", "response_units"})
_NOISE_KEYS = frozenset({"sd", "low", "high", "mass", "shape", "scale"})
_POOL_KEYS = frozenset({"method", "family", "df"})
_CORRELATION_KEYS = frozenset({"names", "mean", "cov", "row"})
_ROW_KEYS = frozenset({"at", "low", "high", "mass", "expert", "rationale"})


@dataclass(frozen=True)
class Statement:
    """One expert's words, kept verbatim for the record, with the prior they convert to.

    Attributes
    ----------
    expert, rationale : str or None
    low, high, mass : float or None
        Stated range (response units per ``per`` units of predictor) and its probability.
    per : float
        The range or quantiles are for a change of ``per`` units of the predictor.
    quantiles : tuple of (probability, value) or None
        As stated.
    family : str
        One of FAMILIES.
    center, scale : float
        The converted prior, per one unit of predictor (flat: 0 and nan).
    df : float or None
        Student-t degrees of freedom.
    weight : float
        Pooling weight (> 0).
    """

    expert: str | None
    rationale: str | None
    low: float | None
    high: float | None
    mass: float | None
    per: float
    quantiles: tuple[tuple[float, float], ...] | None
    family: str
    center: float
    scale: float
    df: float | None
    weight: float


def _sd(family: str, scale: float, df: float | None) -> float:
    if family == "normal":
        return scale
    if family == "laplace":
        return math.sqrt(2.0) * scale
    if family == "student_t" and df is not None and df > 2:
        return scale * math.sqrt(df / (df - 2.0))
    return math.inf


@dataclass(frozen=True)
class CoefficientPrior:
    """The validated prior of one design column, in natural units.

    Attributes
    ----------
    name : str
        Column name as in the data ("fly_ash"), or "intercept".
    level : str or None
        Categorical level (difference from the reference level).
    family : str
        One of FAMILIES.
    center : float
        Response units per one unit of predictor (0 for flat).
    scale : float
        Normal sd, Laplace b, Student-t scale (nan for flat).
    df : float or None
        Student-t degrees of freedom.
    statements : tuple of Statement
        Who said what.
    pool : str or None
        "linear" or "log" when pooled from several statements.
    pool_misfit : float or None
        Loss of fit of the pooled prior to its family (see :mod:`elicit.pool`).
    """

    name: str
    level: str | None
    family: str
    center: float
    scale: float
    df: float | None
    statements: tuple[Statement, ...] = ()
    pool: str | None = None
    pool_misfit: float | None = None

    @property
    def column(self) -> str:
        """Design column: ``name``, or ``name[level]`` for a categorical level."""
        return self.name if self.level is None else f"{self.name}[{self.level}]"

    @property
    def sd(self) -> float:
        """Prior standard deviation (inf for flat and for Student-t with df <= 2)."""
        return _sd(self.family, self.scale, self.df)

    def dist(self):
        """Frozen scipy.stats distribution of the prior (None for flat)."""
        if self.family == "flat":
            return None
        return convert.distribution(self.family, self.center, self.scale, self.df)

    def rescaled(self, factor: float) -> CoefficientPrior:
        """The same prior with its scale multiplied by ``factor`` (> 0); flat stays flat."""
        if self.family == "flat":
            return self
        return replace(self, scale=self.scale * factor)

    def as_family(self, family: str, df: float | None = None) -> CoefficientPrior:
        """The same stated range read as another family.

        The prior's central interval at the stated mass (0.9 when the statements do not share
        one) is kept and re-read as ``family`` (Student-t: ``df``, default 5). The statements
        stay as they are: they are the record of what was said. A flat prior stays flat; to
        "flat", the parameters are dropped.
        """
        new_df = (df if df is not None else convert.DEFAULT_DF) if family == "student_t" else None
        if self.family == "flat" or (family, new_df) == (self.family, self.df):
            return self
        if family == "flat":
            return replace(self, family="flat", center=0.0, scale=math.nan, df=None)
        masses = {s.mass for s in self.statements if s.mass is not None}
        mass = masses.pop() if len(masses) == 1 else 0.9
        low, high = convert.central_range(self.family, self.center, self.scale, mass, self.df)
        center, scale = convert.from_range(family, low, high, mass, df=new_df)
        return replace(self, family=family, center=center, scale=scale, df=new_df)


@dataclass(frozen=True)
class NoisePrior:
    """Prior on the residual standard deviation ``sigma`` of the response.

    Attributes
    ----------
    sd : float or None
        Known value (response units), or None.
    low, high, mass : float or None
        Stated range of the sd and its probability.
    shape, scale : float or None
        ``sigma^2 ~ scipy.stats.invgamma(shape, scale=scale)`` (scale in response units^2).
    """

    sd: float | None
    low: float | None
    high: float | None
    mass: float | None
    shape: float | None
    scale: float | None

    @property
    def known(self) -> bool:
        return self.sd is not None

    @property
    def median(self) -> float:
        """The known sd, or the prior median of the sd (response units)."""
        if self.sd is not None:
            return self.sd
        return convert.noise_median(self.shape, self.scale)


@dataclass(frozen=True)
class RowStatement:
    """A stated range of the expected response at one reference row (conditional means)."""

    at: tuple[tuple[str, float], ...]
    low: float
    high: float
    mass: float
    expert: str | None = None
    rationale: str | None = None


@dataclass(frozen=True, eq=False)
class CorrelatedBlock:
    """Conditional-means prior: a correlated Gaussian on some coefficients, natural units.

    Attributes
    ----------
    names : tuple of str, length k
        Coefficient columns, may include "intercept".
    mean : ndarray, shape (k,)
    cov : ndarray, shape (k, k)
        Positive definite.
    rows : tuple of RowStatement
        The stated rows it was derived from (empty if given directly).
    """

    names: tuple[str, ...]
    mean: np.ndarray
    cov: np.ndarray
    rows: tuple[RowStatement, ...] = ()

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, CorrelatedBlock):
            return NotImplemented
        return (
            self.names == other.names
            and np.array_equal(self.mean, other.mean)
            and np.array_equal(self.cov, other.cov)
            and self.rows == other.rows
        )

    __hash__ = None  # type: ignore[assignment]

    def rescaled(self, factor: float, columns: set[str] | None = None) -> CorrelatedBlock:
        """Covariance rows and columns of ``columns`` (default all) multiplied by ``factor``.

        Rescaling all of it widens each stated row's range about its midpoint and derives the
        block again; rescaling part of it keeps mean and covariance and drops the rows (they no
        longer describe the block).
        """
        if columns is None or set(self.names) <= columns:
            if self.rows:
                rows = tuple(
                    replace(
                        r,
                        low=0.5 * (r.low + r.high) - 0.5 * factor * (r.high - r.low),
                        high=0.5 * (r.low + r.high) + 0.5 * factor * (r.high - r.low),
                    )
                    for r in self.rows
                )
                mean, cov = from_stated_rows(
                    self.names, [dict(r.at) for r in rows], [(r.low, r.high, r.mass) for r in rows]
                )
                return CorrelatedBlock(self.names, mean, cov, rows)
            return replace(self, cov=self.cov * factor**2)
        d = np.array([factor if n in columns else 1.0 for n in self.names])
        return CorrelatedBlock(self.names, self.mean, self.cov * np.outer(d, d))


@dataclass(frozen=True)
class ReferenceRow:
    """Predictor values at which feedback shows the implied response."""

    label: str | None
    values: Mapping[str, float]


@dataclass(frozen=True)
class PriorSet:
    """Everything a prior file says, validated. One :class:`CoefficientPrior` per column.

    Attributes
    ----------
    path : str or None
    title, response, response_units : str or None
    units : mapping of predictor -> unit string
    noise : NoisePrior or None
        None: Jeffreys prior on the noise.
    coefficients : tuple of CoefficientPrior
        Pooled: one per column; columns without an entry are flat.
    block : CorrelatedBlock or None
    reference_rows : tuple of ReferenceRow
    """

    path: str | None
    title: str | None
    response: str | None
    response_units: str | None
    units: Mapping[str, str]
    noise: NoisePrior | None
    coefficients: tuple[CoefficientPrior, ...]
    block: CorrelatedBlock | None
    reference_rows: tuple[ReferenceRow, ...] = field(default=())

    @property
    def _source(self) -> str:
        return self.path or "<priors>"

    def get(self, column: str) -> CoefficientPrior | None:
        """The prior of design column ``column``, or None (flat or in the block)."""
        for coefficient in self.coefficients:
            if coefficient.column == column:
                return coefficient
        return None

    def check_columns(self, columns: Sequence[str]) -> None:
        """Raise PriorFileError naming the first prior whose column is not in ``columns``.

        ``"intercept"`` is always allowed.
        """
        known = set(columns) | {INTERCEPT}
        listing = ", ".join(columns)
        for c in self.coefficients:
            if c.column not in known:
                what = f"level '{c.level}' of '{c.name}'" if c.level and c.name in known else None
                raise PriorFileError(
                    f"{self._source}: coefficient ({c.column}): field "
                    f"'{'level' if what else 'name'}': "
                    f"{what or repr(c.name)} is not in the data (columns: {listing})"
                )
        if self.block is not None:
            for name in self.block.names:
                if name not in known:
                    raise PriorFileError(
                        f"{self._source}: [correlation]: field 'names': {name!r} is not in the "
                        f"data (columns: {listing})"
                    )
        for i, row in enumerate(self.reference_rows, 1):
            for name in row.values:
                if name not in known:
                    raise PriorFileError(
                        f"{self._source}: reference_row {i}: field {name!r}: not a column of the "
                        f"data (columns: {listing})"
                    )

    def rescaled(
        self,
        factor: float,
        columns: Sequence[str] | None = None,
        expert: str | None = None,
    ) -> PriorSet:
        """Priors with scales multiplied by ``factor`` (for sensitivity sweeps).

        Parameters
        ----------
        factor : float
            > 0; 1 leaves the priors unchanged.
        columns : sequence of str, optional
            Only these columns (default all). The correlated block's covariance is rescaled
            on its rows and columns among them.
        expert : str, optional
            Only this expert's statements are widened and the column pooled again; the
            statements kept on the result are the original record.
        """
        if not (math.isfinite(factor) and factor > 0):
            raise ValueError(f"factor must be positive and finite, got {factor}")
        chosen = None if columns is None else set(columns)
        coefficients = []
        for c in self.coefficients:
            if chosen is not None and c.column not in chosen:
                coefficients.append(c)
            elif expert is None:
                coefficients.append(c.rescaled(factor))
            elif any(s.expert == expert for s in c.statements):
                widened = tuple(
                    replace(s, scale=s.scale * factor)
                    if s.expert == expert and s.family != "flat"
                    else s
                    for s in c.statements
                )
                pooled = _combine(c.name, c.level, widened, c.pool, c.family, c.df)
                coefficients.append(replace(pooled, statements=c.statements))
            else:
                coefficients.append(c)
        block = self.block
        if block is not None and expert is None:
            block = block.rescaled(factor, chosen)
        return replace(self, coefficients=tuple(coefficients), block=block)

    def as_family(self, family: str) -> PriorSet:
        """Every coefficient prior re-read as ``family`` (the correlated block is unchanged)."""
        if family not in FAMILIES:
            raise ValueError(f"unknown family {family!r} (expected one of {', '.join(FAMILIES)})")
        return replace(self, coefficients=tuple(c.as_family(family) for c in self.coefficients))


def flat_priors() -> PriorSet:
    """No prior file: every coefficient flat, Jeffreys prior on the noise."""
    return PriorSet(None, None, None, None, {}, None, (), None)


def _combine(
    name: str,
    level: str | None,
    statements: tuple[Statement, ...],
    method: str | None,
    family: str,
    df: float | None,
) -> CoefficientPrior:
    """One CoefficientPrior from its statements: a single one as is, several pooled."""
    if len(statements) == 1 and statements[0].family == family:
        s = statements[0]
        return CoefficientPrior(name, level, s.family, s.center, s.scale, s.df, statements)
    if family == "flat":
        return CoefficientPrior(name, level, "flat", 0.0, math.nan, None, statements)
    method = method or DEFAULT_METHOD
    result = pool(statements, method, family, df)
    return CoefficientPrior(
        name, level, family, result.center, result.scale, df, statements, method, result.misfit
    )


# ----------------------------------------------------------------------------- the validator


class _Reader:
    """Field access with one-line errors naming source, entry and field."""

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
        where = f"{self.source}: {self.where}"
        return PriorFileError(
            f"{where}: field '{key}': {problem}" if key else f"{where}: {problem}"
        )

    def has(self, key: str) -> bool:
        return key in self.table

    def text(self, key: str, required: bool = False) -> str | None:
        if key not in self.table:
            if required:
                raise self.error(key, "missing")
            return None
        value = self.table[key]
        if not isinstance(value, str) or (required and not value.strip()):
            raise self.error(key, f"must be a non-empty string, got {value!r}")
        return value

    def number(
        self,
        key: str,
        required: bool = False,
        positive: bool = False,
        value: Any = None,
    ) -> float | None:
        if value is None:
            if key not in self.table:
                if required:
                    raise self.error(key, "missing")
                return None
            value = self.table[key]
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise self.error(key, f"must be a number, got {value!r}")
        value = float(value)
        if not math.isfinite(value):
            raise self.error(key, f"must be finite, got {value}")
        if positive and not value > 0:
            raise self.error(key, f"must be positive, got {value:g}")
        return value

    def mass(self, key: str = "mass") -> float:
        value = self.number(key, required=True)
        if not 0.0 < value < 1.0:
            raise self.error(key, f"must be in (0, 1), got {value:g}")
        return value

    def range(self) -> tuple[float, float, float]:
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
        df = self.number("df", positive=True)
        if df is not None and family != "student_t":
            raise self.error("df", f"applies to student_t only, not {family}")
        if family == "student_t" and df is None:
            df = convert.DEFAULT_DF
        return family, df

    def numbers(self, key: str, required: bool = False) -> list[float] | None:
        if key not in self.table:
            if required:
                raise self.error(key, "missing")
            return None
        values = self.table[key]
        if not isinstance(values, list):
            raise self.error(key, f"must be a list of numbers, got {values!r}")
        return [self.number(key, value=v) for v in values]


def _parse_statement(r: _Reader) -> Statement:
    family, df = r.family_and_df()
    weight = r.number("weight", positive=True)
    per = r.number("per", positive=True)
    modes = [
        m
        for m, keys in (
            ("range", ("low", "high", "mass")),
            ("quantiles", ("quantiles",)),
            ("center", ("center", "scale")),
        )
        if any(r.has(k) for k in keys)
    ]
    if len(modes) > 1:
        raise r.error(
            {"range": "low", "quantiles": "quantiles", "center": "center"}[modes[1]],
            "give one of low/high/mass, quantiles, or center/scale, not several",
        )
    mode = modes[0] if modes else None
    low = high = mass = quantiles = None
    if family == "flat":
        if mode is not None or per is not None:
            key = next(
                k
                for k in ("low", "high", "mass", "quantiles", "center", "scale", "per")
                if r.has(k)
            )
            raise r.error(key, "a flat prior takes no range or parameters")
        center, scale = 0.0, math.nan
    elif mode == "range":
        low, high, mass = r.range()
        center, scale = convert.from_range(family, low, high, mass, per or 1.0, df)
    elif mode == "quantiles":
        quantiles = _parse_quantiles(r)
        try:
            fit = convert.fit_quantiles(family, quantiles, per or 1.0, df)
        except ValueError as exc:
            raise r.error("quantiles", str(exc)) from None
        if fit.warning:
            warnings.warn(
                f"{r.source}: {r.where}: field 'quantiles': {fit.warning}",
                ElicitationWarning,
                stacklevel=2,
            )
        center, scale = fit.center, fit.scale
    elif mode == "center":
        if per is not None:
            raise r.error(
                "per",
                "applies to a stated range or quantiles; center and scale "
                "are per one unit of the predictor",
            )
        center = r.number("center", required=True)
        scale = r.number("scale", required=True, positive=True)
    else:
        raise r.error("low", f"a {family} prior needs low/high/mass, quantiles, or center/scale")
    return Statement(
        expert=r.text("expert"),
        rationale=r.text("rationale"),
        low=low,
        high=high,
        mass=mass,
        per=per or 1.0,
        quantiles=quantiles,
        family=family,
        center=center,
        scale=scale,
        df=df,
        weight=weight or 1.0,
    )


def _parse_quantiles(r: _Reader) -> tuple[tuple[float, float], ...]:
    raw = r.table["quantiles"]
    if not isinstance(raw, list) or len(raw) < 2:
        raise r.error("quantiles", "must be a list of at least two [probability, value] pairs")
    pairs = []
    for pair in raw:
        if not isinstance(pair, list) or len(pair) != 2:
            raise r.error("quantiles", f"each item must be [probability, value], got {pair!r}")
        p = r.number("quantiles", value=pair[0])
        if not 0.0 < p < 1.0:
            raise r.error("quantiles", f"probability must be in (0, 1), got {p:g}")
        pairs.append((p, r.number("quantiles", value=pair[1])))
    return tuple(pairs)


def _entry_label(index: int, table: Any) -> str:
    name = table.get("name") if isinstance(table, Mapping) else None
    level = table.get("level") if isinstance(table, Mapping) else None
    if isinstance(name, str) and isinstance(level, str):
        return f"coefficient {index} ({name}[{level}])"
    return f"coefficient {index} ({name})" if isinstance(name, str) else f"coefficient {index}"


def _parse_coefficients(
    source: str, entries: Any, pool_table: _Reader | None
) -> tuple[CoefficientPrior, ...]:
    if not isinstance(entries, list):
        raise PriorFileError(f"{source}: coefficient: must be an array of tables [[coefficient]]")
    method = DEFAULT_METHOD
    pool_family = pool_df = None
    if pool_table is not None:
        method = pool_table.text("method") or DEFAULT_METHOD
        if method not in METHODS:
            raise pool_table.error("method", f"must be one of {', '.join(METHODS)}, got {method!r}")
        pool_family = pool_table.text("family")
        if pool_family is not None and pool_family not in FAMILIES:
            raise pool_table.error("family", f"unknown family {pool_family!r}")
        pool_df = pool_table.number("df", positive=True)

    groups: dict[str, dict[str, Any]] = {}
    for index, table in enumerate(entries, 1):
        r = _Reader(source, _entry_label(index, table), table, _ENTRY_KEYS)
        name = r.text("name", required=True)
        level = r.text("level")
        column = name if level is None else f"{name}[{level}]"
        group = groups.setdefault(
            column, {"name": name, "level": level, "statements": [], "readers": [], "record": None}
        )
        if group["record"] is not None or (r.has("statement") and group["readers"]):
            raise r.error("name", f"{column} has a pooled entry, which must be its only entry")
        group["readers"].append(r)
        if r.has("statement"):
            group["record"] = _parse_record(r, name, level)
        else:
            for key in ("pool", "pool_misfit"):
                if r.has(key):
                    raise r.error(key, "only a pooled entry with [[coefficient.statement]] tables")
            group["statements"].append(_parse_statement(r))

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
        family = (pool_family or shared) if len(statements) > 1 else shared
        if family is None:
            raise first.error(
                "family", f"entries for {column} differ in family: set family in [pool]"
            )
        df = None
        if family == "student_t":
            dfs = [s.df for s in statements if s.df is not None]
            df = pool_df or (min(dfs) if dfs else convert.DEFAULT_DF)
        out.append(_combine(group["name"], group["level"], statements, method, family, df))
    return tuple(out)


def _parse_record(r: _Reader, name: str, level: str | None) -> CoefficientPrior:
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
    method = r.text("pool")
    if method is not None and method not in METHODS:
        raise r.error("pool", f"must be one of {', '.join(METHODS)}, got {method!r}")
    misfit = r.number("pool_misfit")
    if misfit is not None and misfit < 0:
        raise r.error("pool_misfit", f"must be >= 0, got {misfit:g}")
    tables = r.table["statement"]
    if not isinstance(tables, list) or not tables:
        raise r.error("statement", "must be one or more [[coefficient.statement]] tables")
    statements = tuple(
        _parse_statement(_Reader(r.source, f"{r.where} statement {i}", t, _STATEMENT_KEYS))
        for i, t in enumerate(tables, 1)
    )
    return CoefficientPrior(name, level, family, center, scale, df, statements, method, misfit)


def _parse_noise(source: str, table: Any) -> NoisePrior:
    r = _Reader(source, "[noise]", table, _NOISE_KEYS)
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
        shape = r.number("shape", required=True, positive=True)
        scale = r.number("scale", required=True, positive=True)
        return NoisePrior(None, None, None, None, shape, scale)
    low, high, mass = r.range()
    if not low > 0:
        raise r.error("low", f"a noise sd must be positive, got {low:g}")
    try:
        shape, scale = convert.noise_from_range(low, high, mass)
    except ValueError as exc:
        raise r.error("high", str(exc)) from None
    return NoisePrior(None, low, high, mass, shape, scale)


def _parse_block(source: str, table: Any, taken: set[str]) -> CorrelatedBlock:
    r = _Reader(source, "[correlation]", table, _CORRELATION_KEYS)
    names = r.table.get("names")
    if not isinstance(names, list) or not names or not all(isinstance(n, str) and n for n in names):
        raise r.error("names", "must be a non-empty list of column names")
    if len(set(names)) != len(names):
        raise r.error("names", "lists a name twice")
    for n in names:
        if n in taken:
            raise r.error("names", f"{n!r} also has a [[coefficient]] entry")
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
    r = _Reader(source, f"[correlation] row {index}", table, _ROW_KEYS)
    at = r.table.get("at")
    needed = [n for n in names if n != INTERCEPT]
    if not isinstance(at, Mapping):
        raise r.error("at", "must be a table of predictor values, e.g. at = {x = 1.0}")
    for key in at:
        if key not in needed:
            raise r.error("at", f"{key!r} is not one of the names {', '.join(needed)}")
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
        r = _Reader(source, f"reference_row {i}", table, None)
        label = r.text("label")
        values = {k: r.number(k) for k in r.table if k != "label"}
        if not values:
            raise r.error(None, "gives no predictor values")
        rows.append(ReferenceRow(label, values))
    return tuple(rows)


def parse_priors(doc: Mapping[str, Any], source: str = "<priors>") -> PriorSet:
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
    """
    top = _Reader(source, "top level", doc, _TOP_KEYS)
    study = _Reader(source, "[study]", doc.get("study", {}), _STUDY_KEYS)
    units_table = _Reader(source, "[units]", doc.get("units", {}), None)
    units = {k: units_table.text(k) for k in units_table.table}
    noise = _parse_noise(source, doc["noise"]) if top.has("noise") else None
    pool_table = _Reader(source, "[pool]", doc["pool"], _POOL_KEYS) if top.has("pool") else None
    coefficients = _parse_coefficients(source, doc.get("coefficient", []), pool_table)
    block = None
    if top.has("correlation"):
        block = _parse_block(source, doc["correlation"], {c.column for c in coefficients})
    reference_rows = _parse_reference_rows(source, doc.get("reference_row", []))
    return PriorSet(
        path=source if source != "<priors>" else None,
        title=study.text("title"),
        response=study.text("response"),
        response_units=study.text("response_units"),
        units=units,
        noise=noise,
        coefficients=coefficients,
        block=block,
        reference_rows=reference_rows,
    )


def load_document(path: str | Path) -> dict[str, Any]:
    """The raw TOML document of a prior file, not yet validated.

    Raises
    ------
    PriorFileError
        Unreadable file, not UTF-8, TOML syntax error or duplicate key (with line and column).
    """
    source = str(path)
    try:
        with open(path, "rb") as handle:
            return tomllib.load(handle)
    except OSError as exc:
        raise PriorFileError(f"{source}: cannot read: {exc.strerror or exc}") from None
    except tomllib.TOMLDecodeError as exc:
        raise PriorFileError(f"{source}: {exc}") from None
    except UnicodeDecodeError as exc:
        raise PriorFileError(f"{source}: not UTF-8 text: {exc.reason}") from None


def read_prior_file(path: str | Path) -> PriorSet:
    """Read and validate a TOML prior file.

    Parameters
    ----------
    path : str or Path

    Raises
    ------
    PriorFileError
        Unreadable file, TOML syntax error or duplicate key (with line and column), or any
        validation error (see :func:`parse_priors`).
    """
    return parse_priors(load_document(path), str(path))
