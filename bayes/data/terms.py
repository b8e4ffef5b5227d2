"""Model terms: categorical predictors and derived terms, as named design columns.

A model is given either as plain columns (``--predictors``) or as a
Wilkinson-Rogers formula (``--formula "strength ~ water_cement + cement_type +
fly_ash:curing_temp + I(water_cement**2)"``), parsed and evaluated with the
general-purpose ``formulaic`` library. A text column, and any ``C(column)``,
is categorical and gets treatment coding: one indicator column per level other
than the reference level, so each level's coefficient is its difference from
the reference level, in response units.

Column names:

* a level: ``"cement_type[CEM-B]"`` (the prior file says ``name = "cement_type"``,
  ``level = "CEM-B"``);
* a derived term: formulaic's own name, e.g. ``"fly_ash:curing_temp"``,
  ``"I(water_cement ** 2)"``, ``"cement_type[CEM-B]:fly_ash"``.

The output prints these names and the prior file must use them as printed.
The coding (levels, reference level, formula) is kept in :class:`Terms`, saved
with a fit, so that new rows are coded the same way. ``formulaic`` is imported
inside the functions that need it (it takes a while to import).
"""

from __future__ import annotations

import keyword
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from bayes.data.design import _file_row, checked_values
from bayes.errors import InputError
from elicit.units import predictor_units, split_term

_TREATMENT = re.compile(r"\[T\.")  # formulaic writes a treatment-coded level as name[T.level]
_NAME = re.compile(r"`([^`]+)`|([A-Za-z_][A-Za-z0-9_]*)")
_C_CALL = re.compile(r"^C\(\s*(`[^`]+`|[A-Za-z_][A-Za-z0-9_.]*)\s*\)$")


@dataclass(frozen=True)
class Categorical:
    """A categorical predictor and its treatment coding.

    Attributes
    ----------
    name : str
        Data column.
    term : str
        The factor's name in the model: the column itself, or ``"C(shift)"``.
    levels : tuple of str
        Every level seen in the fit's data, the reference level first.
    numeric : bool
        The column holds numbers used as labels (``C(shift)`` on 1, 2, 3).
    """

    name: str
    term: str
    levels: tuple[str, ...]
    numeric: bool = False

    @property
    def reference(self) -> str:
        return self.levels[0]

    def column(self, level: str) -> str:
        """Design column of ``level`` (its difference from the reference level)."""
        return f"{self.term}[{level}]"


@dataclass(frozen=True)
class Terms:
    """How the data columns become design columns; saved with a fit.

    Attributes
    ----------
    response : str
    formula : str
        Right-hand side of the model formula as given (built from the
        predictor list when no formula was given).
    variables : tuple of str
        Data columns the right-hand side reads.
    categorical : tuple of Categorical
    columns : tuple of str, length p
        Design column names (no intercept), in formulaic's order.
    notes : tuple of str
        Plain-language notes (the reference levels) for the fit's output.
    """

    response: str
    formula: str
    variables: tuple[str, ...]
    categorical: tuple[Categorical, ...]
    columns: tuple[str, ...]
    notes: tuple[str, ...] = field(default=(), compare=False)

    def get(self, term: str) -> Categorical | None:
        """The categorical predictor whose factor is named ``term`` (or whose column is)."""
        for c in self.categorical:
            if term in (c.term, c.name):
                return c
        return None

    def matrix(self, frame: pd.DataFrame, source: str = "new data") -> np.ndarray:
        """Design columns of new rows, coded as in the fit.

        Parameters
        ----------
        frame : DataFrame
            Holds every column in ``variables``.
        source : str
            Name used in error messages.

        Returns
        -------
        ndarray, shape (n, p)

        Raises
        ------
        InputError
            A missing column or value, or a level the fit has not seen (named).
        """
        frame = frame.set_axis([str(c) for c in frame.columns], axis=1)
        for c in self.variables:
            if c not in frame.columns:
                raise InputError(
                    f"{source}: no column named '{c}' (the fit needs {', '.join(self.variables)})"
                )
        sub = frame[list(self.variables)]
        text = [c.name for c in self.categorical if not c.numeric]
        values, _ = checked_values(sub, source, text=text)
        rows = np.array([_file_row(sub, i) for i in range(len(sub))])
        return self.evaluate(values, rows, source)

    def evaluate(
        self, values: Mapping[str, np.ndarray], rows: np.ndarray, source: str
    ) -> np.ndarray:
        """Design columns from validated values (see :func:`bayes.data.design.checked_values`).

        Parameters
        ----------
        values : mapping of column -> ndarray, shape (n,)
        rows : ndarray of int, shape (n,)
            File row of each value (for messages).

        Returns
        -------
        ndarray, shape (n, p)
        """
        names, X = _model_matrix(self.formula, self._coded(values, rows, source), source)
        if tuple(names) != self.columns:
            raise InputError(
                f"{source}: the formula gives columns {', '.join(names)} on these rows, the fit "
                f"has {', '.join(self.columns)}"
            )
        bad = ~np.isfinite(X)
        if bad.any():
            i, j = (int(v[0]) for v in np.nonzero(bad))
            raise InputError(f"{source}: term '{names[j]}' is not finite at row {rows[i]}")
        return X

    def _coded(self, values: Mapping[str, np.ndarray], rows, source: str) -> pd.DataFrame:
        """The values with each categorical column as a pandas Categorical of the fit's levels."""
        data = dict(values)
        for c in self.categorical:
            labels = _labels(data[c.name], c.numeric)
            unseen = ~np.isin(labels, c.levels)
            if unseen.any():
                i = int(np.flatnonzero(unseen)[0])
                raise InputError(
                    f"{source}: row {rows[i]}: level '{labels[i]}' of '{c.name}' was not in the "
                    f"data of the fit (levels: {', '.join(c.levels)})"
                )
            data[c.name] = pd.Categorical(labels, categories=list(c.levels))
        return pd.DataFrame(data)

    def check_priors(self, priors) -> None:
        """Check a prior set's entries against the model's columns and levels.

        Parameters
        ----------
        priors : elicit.spec.PriorSet

        Raises
        ------
        InputError
            Naming the prior file and the entry: a level not in the data, a prior
            on the reference level, a categorical predictor without a level, or
            a term the model does not have (with the printed name when the
            entry means a term under another spelling).
        """
        src = priors.path or "priors"
        known = {"intercept", *self.columns}
        for cp in priors.coefficients:
            cat = self.get(cp.name)
            if cp.level is not None and cat is not None:
                if cp.level == cat.reference:
                    raise InputError(
                        f"{src}: coefficient {cp.column}: '{cp.level}' is the reference level of "
                        f"'{cp.name}' (its effect is 0 by definition; the other levels are "
                        "differences from it): drop the entry or choose another reference level"
                    )
                if cp.level not in cat.levels:
                    raise InputError(
                        f"{src}: coefficient {cp.column}: level '{cp.level}' of '{cp.name}' is "
                        f"not in the data (levels: {', '.join(cat.levels)})"
                    )
            elif cp.level is not None:
                raise InputError(
                    f"{src}: coefficient {cp.column}: '{cp.name}' is not a categorical "
                    "predictor of the model, so it takes no 'level'"
                )
            elif cat is not None and cp.column not in known:
                others = ", ".join(cat.levels[1:])
                raise InputError(
                    f"{src}: coefficient {cp.name}: '{cp.name}' is categorical: give one entry "
                    f'per level with level = "..." (reference level {cat.reference}; '
                    f"levels: {others})"
                )
            if cp.column not in known:
                raise InputError(f"{src}: coefficient {cp.column}: {self._unknown(cp.column)}")
        if priors.block is not None:
            for name in priors.block.names:
                if name not in known:
                    raise InputError(f"{src}: [correlation] names: {self._unknown(name)}")

    def _unknown(self, name: str) -> str:
        key = _term_key(name)
        for c in self.columns:
            if key is not None and _term_key(c) == key:
                return f"the model names the term '{name}' as '{c}': use that name"
        return f"'{name}' is not a term of the model (terms: {', '.join(self.columns)})"

    def describe(self, column: str, response: str = "the response") -> str:
        """What the coefficient of ``column`` means, in words (for the interview and report)."""
        parts = split_term(column)
        level_parts = [_level_of(self, p) for p in parts]
        said = [
            f"'{cat.name}' at {level} rather than the reference level {cat.reference}"
            for cat, level in (lp for lp in level_parts if lp is not None)
        ]
        numeric = [p for p, lp in zip(parts, level_parts, strict=True) if lp is None]
        if not numeric:
            return f"the difference in {response} for {' and '.join(said)}"
        if len(numeric) == 1:
            text = f"the change in {response} per unit of {numeric[0]}"
        else:
            text = (
                f"the change in the slope of {response} on {numeric[0]} per unit of "
                f"{' per unit of '.join(numeric[1:])}"
            )
        return text + (f", for {' and '.join(said)}" if said else "")

    def to_dict(self) -> dict:
        """A JSON-ready description (stored as ``terms.json`` in a fit folder)."""
        return {
            "response": self.response,
            "formula": self.formula,
            "variables": list(self.variables),
            "categorical": [
                {"name": c.name, "term": c.term, "levels": list(c.levels), "numeric": c.numeric}
                for c in self.categorical
            ],
            "columns": list(self.columns),
        }

    @classmethod
    def from_dict(cls, doc: Mapping) -> Terms:
        """Inverse of :meth:`to_dict`."""
        cats = tuple(
            Categorical(c["name"], c["term"], tuple(c["levels"]), bool(c["numeric"]))
            for c in doc["categorical"]
        )
        return cls(
            doc["response"], doc["formula"], tuple(doc["variables"]), cats, tuple(doc["columns"])
        )


def is_text(series: pd.Series) -> bool:
    """Whether a column holds labels rather than numbers.

    A column is text when fewer than half of its non-missing values read as
    numbers: a numeric column with a stray typo stays numeric (and the typo is
    reported with its row), a column of cement types becomes categorical.
    """
    if pd.api.types.is_numeric_dtype(series) or pd.api.types.is_bool_dtype(series):
        return False
    present = series.dropna()
    if present.empty:
        return False
    numbers = pd.to_numeric(present, errors="coerce").notna()
    return bool(numbers.mean() < 0.5)


def reference_levels(pairs) -> dict[str, str]:
    """Reference levels from ``"COLUMN=LEVEL"`` strings: ``("cement_type=CEM-A",)`` ->
    ``{"cement_type": "CEM-A"}``.

    Raises
    ------
    InputError
        For a string that is not ``COLUMN=LEVEL``.
    """
    out = {}
    for pair in pairs or ():
        name, sep, level = pair.partition("=")
        if not sep or not name.strip() or not level.strip():
            raise InputError(f"reference level '{pair}' is not COLUMN=LEVEL")
        out[name.strip()] = level.strip()
    return out


def formula_response(formula: str | None) -> str | None:
    """The left-hand side of a formula as written (None without a formula or a left side)."""
    lhs, tilde, _ = (formula or "").partition("~")
    return lhs.strip() or None if tilde else None


def split_formula(
    formula: str,
    response: str | None,
    predictors: Sequence[str] | None,
    columns: Sequence[str] = (),
) -> tuple[str, str, list[str]]:
    """Read a model formula: its response, right-hand side and the data columns it uses.

    Parameters
    ----------
    formula : str
        ``"strength ~ water_cement + cement_type"``, or ``"~ ..."`` with ``response`` given.
    response : str, optional
        Must agree with the formula's left-hand side when both are given.
    predictors : sequence of str, optional
        Must be None: a formula replaces the predictor list.
    columns : sequence of str
        The data's columns: any of them named in the formula is a variable (formulaic
        does not list the variables inside every transform).

    Returns
    -------
    response, rhs, variables
        ``variables`` are the data columns read by the right-hand side.
    """
    from formulaic import Formula
    from formulaic.errors import FormulaicError
    from formulaic.formula import SimpleFormula

    if predictors is not None:
        raise InputError("give either --formula or --predictors, not both")
    text = formula.strip()
    lhs_text, sep, rhs = text.partition("~")
    if not sep:
        lhs_text, rhs = "", text
    try:
        parsed = Formula(rhs)
        lhs = Formula(lhs_text) if lhs_text.strip() else None
    except (FormulaicError, SyntaxError, ValueError) as e:
        raise InputError(f"--formula: cannot read '{formula}': {_first_line(e)}") from None
    if not isinstance(parsed, SimpleFormula) or not isinstance(lhs, SimpleFormula | None):
        raise InputError(f"--formula: '{formula}' must have one right-hand side")
    if lhs is not None:
        names = [str(t) for t in lhs if str(t) != "1"]
        if len(names) != 1 or len(list(lhs)[-1].factors) != 1:
            raise InputError(f"--formula: the left-hand side of '{formula}' must be one column")
        lhs_name = names[0]
        if response and response != lhs_name:
            raise InputError(
                f"--formula: its response '{lhs_name}' differs from --response '{response}'"
            )
        response = lhs_name
    if not response:
        raise InputError("no response column given (--formula 'y ~ ...', --response, or [study])")
    if not any(str(t) == "1" for t in parsed):
        raise InputError(
            f"--formula: '{formula}' removes the intercept: the model always has one "
            "(its prior is flat unless the prior file gives one)"
        )
    named = {m.group(1) or m.group(2) for m in _NAME.finditer(rhs)} & set(columns)
    return response, rhs, sorted({str(v) for v in parsed.required_variables} | named)


def make_terms(
    values: Mapping[str, np.ndarray],
    response: str,
    predictors: Sequence[str],
    formula: str | None,
    reference: Mapping[str, str] | None,
    rows: np.ndarray,
    source: str,
) -> Terms:
    """Work out the coding of a model from the validated values of its columns.

    Parameters
    ----------
    values : mapping of column -> ndarray, shape (n,)
        Float arrays for numeric columns, string arrays for text columns
        (from :func:`bayes.data.design.checked_values`).
    response : str
    predictors : sequence of str
        Data columns used (the formula's variables, or the predictor list).
    formula : str or None
        Right-hand side; None builds ``a + b + ...`` from ``predictors``.
    reference : mapping of column -> level, optional
        Reference levels; default the most frequent level (ties: the first in order).
    rows : ndarray of int, shape (n,)
        File row of each value (for messages).
    source : str

    Returns
    -------
    Terms
    """
    rhs = (
        formula.strip()
        if formula is not None
        else " + ".join(_quoted(c) for c in predictors) or "1"
    )
    data = {c: values[c] for c in predictors}
    _, first = _model_matrix(rhs, pd.DataFrame(data), source, spec=True)
    cat_terms = _categorical_terms(first, data)
    reference = dict(reference or {})
    categorical, notes = [], []
    n = len(rows)
    for term, name in cat_terms:
        numeric = data[name].dtype.kind in "fiub"
        labels = _labels(data[name], numeric)
        found, counts = np.unique(labels, return_counts=True)
        order = np.argsort(np.array(found, dtype=float)) if numeric else np.arange(len(found))
        found, counts = found[order], counts[order]
        if len(found) < 2:
            raise InputError(
                f"{source}: column '{name}' has a single level '{found[0]}': it has no effect"
            )
        chosen = reference.pop(name, None)
        if chosen is None:
            ref = str(found[int(np.argmax(counts))])
            why = f"the most frequent, {int(counts.max())} of {n} rows"
        elif chosen in found:
            ref, why = chosen, "as asked"
        else:
            raise InputError(
                f"--reference {name}={chosen}: no level '{chosen}' in the data "
                f"(levels: {', '.join(map(str, found))})"
            )
        levels = (ref, *(str(v) for v in found if v != ref))
        categorical.append(Categorical(name, term, levels, numeric))
        notes.append(
            f"{term}: reference level '{ref}' ({why}); each {term}[level] coefficient is "
            f"that level's difference from {ref}, in response units."
        )
    if reference:
        name = next(iter(reference))
        cats = ", ".join(c.name for c in categorical) or "none"
        raise InputError(
            f"--reference {name}={reference[name]}: '{name}' is not a categorical predictor of "
            f"the model (categorical: {cats})"
        )
    terms = Terms(response, rhs, tuple(predictors), tuple(categorical), (), tuple(notes))
    names, _ = _model_matrix(rhs, terms._coded(data, rows, source), source)
    if len(set(names)) != len(names):
        twice = next(c for c in names if names.count(c) > 1)
        raise InputError(f"--formula: the design column '{twice}' appears twice")
    return Terms(response, rhs, tuple(predictors), tuple(categorical), tuple(names), tuple(notes))


def _categorical_terms(spec, data: Mapping[str, np.ndarray]) -> list[tuple[str, str]]:
    """(factor name, data column) of each categorical factor that formulaic found."""
    out = []
    for expr, (kind, _) in spec.encoder_state.items():
        if getattr(kind, "value", kind) != "categorical":
            continue
        match = _C_CALL.match(expr)
        name = expr if expr in data else (match.group(1).strip("`") if match else None)
        if name is None or name not in data:
            raise InputError(
                f"--formula: the categorical term '{expr}' must be a column or C(column) "
                "(its reference level is chosen with --reference)"
            )
        numeric_uses = [e for e, (k, _) in spec.encoder_state.items()
                        if e == name and getattr(k, "value", k) != "categorical"]  # fmt: skip
        if numeric_uses and expr != name:
            raise InputError(
                f"--formula: column '{name}' is used both as a number and, in {expr}, as "
                "categories: use one of them"
            )
        out.append((expr, name))
    return out


def _model_matrix(rhs: str, frame: pd.DataFrame, source: str, spec: bool = False):
    """Evaluate the right-hand side; returns (column names without the intercept, X or spec)."""
    import warnings

    from formulaic import model_matrix
    from formulaic.errors import FormulaicError

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            mm = model_matrix(rhs, frame, na_action="ignore")
    except (FormulaicError, SyntaxError, NameError, TypeError, ValueError) as e:
        raise InputError(
            f"{source}: cannot evaluate the formula '{rhs}': {_first_line(e)}"
        ) from None
    stateful = list(mm.model_spec.transform_state)
    if stateful:
        raise InputError(
            f"--formula: the term '{stateful[0]}' depends on the data it is fitted to (it cannot "
            "be applied to new rows the same way): write the column out, or use I(...)"
        )
    names = [_TREATMENT.sub("[", str(c)) for c in mm.columns]
    if "Intercept" not in names:
        raise InputError(f"--formula: '{rhs}' removes the intercept: the model always has one")
    keep = [j for j, c in enumerate(names) if c != "Intercept"]
    names = [names[j] for j in keep]
    if spec:
        return names, mm.model_spec
    return names, mm.to_numpy(dtype=float)[:, keep]


def _labels(values: np.ndarray, numeric: bool) -> np.ndarray:
    """Level labels: text as is; numbers as '2' (whole) or '0.5' (shortest repr)."""
    if not numeric:
        return np.array([str(v) for v in values], dtype=object)
    return np.array(
        [str(int(v)) if float(v).is_integer() else repr(float(v)) for v in values], dtype=object
    )


def _quoted(name: str) -> str:
    """A column name as a formula term (backticks unless it is a plain identifier)."""
    if name.isidentifier() and not keyword.iskeyword(name):
        return name
    return f"`{name}`"


def _first_line(e: Exception) -> str:
    text = str(e).strip()
    return text.splitlines()[0] if text else type(e).__name__


def _term_key(name: str) -> frozenset | None:
    """The set of factors of a term, for spotting one term under two spellings."""
    if "[" in name:
        return None
    from formulaic import Formula
    from formulaic.errors import FormulaicError

    try:
        terms = [t for t in Formula(name) if str(t) != "1"]
    except (FormulaicError, SyntaxError, ValueError):
        return None
    if len(terms) != 1:
        return None
    return frozenset(str(f) for f in terms[0].factors)


def _level_of(terms: Terms, part: str) -> tuple[Categorical, str] | None:
    for c in terms.categorical:
        prefix = f"{c.term}["
        if part.startswith(prefix) and part.endswith("]"):
            return c, part[len(prefix) : -1]
    return None


def interview_terms(design, units_mapping: Mapping[str, str] | None = None) -> list:
    """The interview's questions (``elicit.interview.Term``) for every column of a design.

    A level is asked as its difference from the reference level (reference rows: the
    indicator at 0 and at 1); a numeric or derived column with its units, data range
    and 10% / 90% quantiles.

    Parameters
    ----------
    design : bayes.data.design.Design
    units_mapping : mapping of predictor -> unit, optional

    Returns
    -------
    list of elicit.interview.Term
    """
    from elicit.interview import Term

    units = dict(units_mapping or {})
    terms = design.terms
    out = []
    for j, column in enumerate(design.names):
        x = design.X[:, j]
        parts = split_term(column)
        level = _level_of(terms, column) if terms is not None and len(parts) == 1 else None
        if level is not None:
            cat, name = level
            describe = (
                f"{terms.describe(column, design.response)}; {int(x.sum())} of {design.n} rows"
            )
            rows = ((f"{cat.name} = {cat.reference} (reference level)", 0.0),
                    (f"{cat.name} = {name}", 1.0))  # fmt: skip
            out.append(Term(cat.term, name, None, describe, rows))
            continue
        lo, hi = (float(v) for v in np.quantile(x, [0.1, 0.9]))
        describe = f"data: {x.min():.4g} to {x.max():.4g}, mean {x.mean():.4g}"
        if terms is not None and (len(parts) > 1 or column not in terms.variables):
            describe = f"{terms.describe(column, design.response)}; {describe}"
        rows = ((f"{column} = {lo:.4g} (10% quantile)", lo),
                (f"{column} = {hi:.4g} (90% quantile)", hi))  # fmt: skip
        out.append(Term(column, None, predictor_units(column, units), describe, rows))
    return out
