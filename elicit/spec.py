"""The validated prior objects ``bayes`` uses: plain immutable types, in natural units.

A :class:`PriorSet` holds everything a prior file says: one :class:`CoefficientPrior` per design
column (with the :class:`Statement` records of who said what), the :class:`NoisePrior`, the
correlated block (:class:`elicit.conditional.CorrelatedBlock`) and the reference rows. They are
made by the one validator, :func:`elicit.validate.parse_priors` (the file format is described in
:mod:`elicit.read`), and written back by :mod:`elicit.write`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace

from elicit import convert
from elicit.conditional import CorrelatedBlock
from elicit.errors import InputError, PriorFileError
from elicit.model_spec import ModelSpec
from elicit.noise_prior import NoisePrior  # noqa: F401 (its home; re-exported for callers)
from elicit.pool import DEFAULT_METHOD, linear_misfit, pool
from elicit.pool_mixture import MIXTURE, Component, from_opinions, moments
from elicit.pool_mixture import widened as widened_components
from elicit.statement_record import Statement

FAMILIES = ("normal", "laplace", "student_t", "flat")
POOL_FAMILIES = (*FAMILIES, MIXTURE)  # a pool may also be kept as the experts' mixture
INTERCEPT = "intercept"


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
        One of FAMILIES, or "mixture" (the experts' linear pool kept as it is).
    center : float
        Response units per one unit of predictor (0 for flat; the mean of a mixture).
    scale : float
        Normal sd, Laplace b, Student-t scale (nan for flat; the sd of a mixture).
    df : float or None
        Student-t degrees of freedom.
    statements : tuple of Statement
        Who said what.
    pool : str or None
        "linear" or "log" when pooled from several statements.
    pool_misfit : float or None
        Loss of fit of the pooled prior to its family (see :mod:`elicit.pool`): the worst cdf
        error ``sup_x |F_fitted(x) - F_pool(x)|`` (None when not recorded; see
        :attr:`pool_error`).
    components : tuple of elicit.pool_mixture.Component
        The mixture's components (family "mixture" only).

    Examples
    --------
    >>> import elicit
    >>> priors = elicit.parse_priors({"coefficient": [
    ...     {"name": "x", "low": -9.0, "high": -3.0, "mass": 0.9, "per": 0.1}]})
    >>> c = priors.get("x")
    >>> c.family, round(c.center, 6)  # the midpoint -6, per 0.1 unit: -60 per unit
    ('normal', -60.0)
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
    components: tuple[Component, ...] = ()

    @property
    def column(self) -> str:
        """Design column: ``name``, or ``name[level]`` for a categorical level."""
        return self.name if self.level is None else f"{self.name}[{self.level}]"

    @property
    def sd(self) -> float:
        """Prior standard deviation (inf for flat and for Student-t with df <= 2)."""
        if self.family == MIXTURE:
            return self.scale
        return _sd(self.family, self.scale, self.df)

    @property
    def pool_error(self) -> float | None:
        """Worst cdf error of a prior fitted to the experts' linear pool (None: not one).

        The recorded ``pool_misfit``, or, for an entry written without it, recomputed from
        its statements (:func:`elicit.pool.linear_misfit`).
        """
        if self.pool != "linear" or self.family in ("flat", MIXTURE):
            return None
        if self.pool_misfit is not None:
            return self.pool_misfit
        if not self.statements or any(s.family == "flat" for s in self.statements):
            return None
        return linear_misfit(self.statements, self.family, self.center, self.scale, df=self.df)

    def dist(self):
        """Frozen scipy.stats distribution of the prior (None for flat).

        A mixture gives a :class:`elicit.mixture_distribution.MixtureDistribution` (same methods).
        """
        if self.family == "flat":
            return None
        if self.family == MIXTURE:
            from elicit.mixture_distribution import MixtureDistribution  # lazily: scipy.stats

            return MixtureDistribution(self.components)
        return convert.distribution(self.family, self.center, self.scale, df=self.df)

    @classmethod
    def mixture(
        cls,
        name: str,
        level: str | None,
        parts: tuple[Component, ...],
        statements: tuple[Statement, ...] = (),
        pool: str | None = "linear",
    ) -> CoefficientPrior:
        """A mixture prior of ``parts`` (its center and scale are the mixture's mean and sd)."""
        center, scale = moments(parts)
        return cls(name, level, MIXTURE, center, scale, None, statements, pool, None, parts)

    @classmethod
    def from_statements(
        cls,
        name: str,
        level: str | None,
        statements: tuple[Statement, ...],
        *,
        family: str,
        df: float | None,
        method: str | None = None,
    ) -> CoefficientPrior:
        """The prior of one column from its statements: a single one as is, several pooled.

        Several statements are pooled with ``method`` (default linear, see :mod:`elicit.pool`)
        into one ``family`` prior (Student-t: ``df``); a flat ``family`` stays flat.
        """
        if len(statements) == 1 and statements[0].family == family:
            s = statements[0]
            return cls(name, level, s.family, s.center, s.scale, s.df, statements)
        if family == "flat":
            return cls(name, level, "flat", 0.0, math.nan, None, statements)
        if family == MIXTURE:  # the linear pool kept as it is
            parts = from_opinions(statements, method=method, column=name)
            return cls.mixture(name, level, parts, statements)
        method = method or DEFAULT_METHOD
        result = pool(statements, method=method, family=family, df=df)
        return cls(
            name, level, family, result.center, result.scale, df, statements, method, result.misfit
        )

    def rescaled(self, factor: float) -> CoefficientPrior:
        """The same prior with its scale multiplied by ``factor`` (> 0); flat stays flat.

        A mixture widens each component about its own centre.
        """
        if self.family == "flat":
            return self
        if self.family == MIXTURE:
            parts = widened_components(self.components, factor)
            return replace(self, scale=moments(parts)[1], components=parts)
        return replace(self, scale=self.scale * factor)

    def as_family(self, family: str, *, df: float | None = None) -> CoefficientPrior:
        """The same stated range read as another family.

        The prior's central interval at the stated mass (0.9 when the statements do not share
        one) is kept and re-read as ``family`` (Student-t: ``df``, default 5). The statements
        stay as they are: they are the record of what was said. A flat prior stays flat; to
        "flat", the parameters are dropped. A mixture is matched to ``family`` as its linear
        pool is (:func:`elicit.pool.linear_pool`).
        """
        new_df = (df if df is not None else convert.DEFAULT_DF) if family == "student_t" else None
        if self.family == "flat" or (family, new_df) == (self.family, self.df):
            return self
        if family == "flat":
            return replace(self, family="flat", center=0.0, scale=math.nan, df=None, components=())
        if self.family == MIXTURE:
            result = pool(self.components, method="linear", family=family, df=new_df)
            return replace(self, family=family, center=result.center, scale=result.scale,
                           df=new_df, pool="linear", pool_misfit=result.misfit,
                           components=())  # fmt: skip
        masses = {s.mass for s in self.statements if s.mass is not None}
        mass = masses.pop() if len(masses) == 1 else 0.9
        low, high = convert.central_range(self.family, self.center, self.scale, mass, df=self.df)
        center, scale = convert.from_range(family, low, high, mass, df=new_df)
        return replace(self, family=family, center=center, scale=scale, df=new_df)


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
    model : ModelSpec or None
        The file's ``[model]`` table (formula, reference levels, intercept); None when absent.

    Examples
    --------
    >>> import elicit
    >>> priors = elicit.parse_priors({
    ...     "study": {"response": "strength", "response_units": "MPa"},
    ...     "coefficient": [{"name": "x", "center": 2.0, "scale": 0.5}]})
    >>> priors.get("x").scale, priors.get("w") is None  # columns without an entry are flat
    (0.5, True)
    >>> priors.rescaled(2.0).get("x").scale
    1.0
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
    model: ModelSpec | None = None

    _source = property(lambda self: self.path or "<priors>")

    def __repr__(self) -> str:
        from elicit.display import prior_set_text

        return prior_set_text(self)

    def _repr_html_(self) -> str:
        from elicit.display import prior_set_html

        return prior_set_html(self)

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
        *,
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
            raise InputError(f"factor must be positive and finite, got {factor}")
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
                pooled = CoefficientPrior.from_statements(
                    c.name, c.level, widened, family=c.family, df=c.df, method=c.pool
                )
                coefficients.append(replace(pooled, statements=c.statements))
            else:
                coefficients.append(c)
        block = self.block
        if block is not None and expert is None:
            block = block.rescaled(factor, columns=chosen)
        return replace(self, coefficients=tuple(coefficients), block=block)

    def as_family(self, family: str) -> PriorSet:
        """Every coefficient prior re-read as ``family`` (the correlated block is unchanged)."""
        if family not in FAMILIES:
            raise InputError(f"unknown family {family!r} (expected one of {', '.join(FAMILIES)})")
        return replace(self, coefficients=tuple(c.as_family(family) for c in self.coefficients))


def flat_priors() -> PriorSet:
    """No prior file: every coefficient flat, Jeffreys prior on the noise.

    Returns
    -------
    PriorSet

    Examples
    --------
    >>> import elicit
    >>> flat = elicit.flat_priors()
    >>> flat.coefficients, flat.noise  # no coefficient prior; None: the Jeffreys noise prior
    ((), None)
    """
    return PriorSet(None, None, None, None, {}, None, (), None)
