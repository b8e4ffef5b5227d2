"""Model formulas: reading them and evaluating them, through ``formulaic``.

A model is given either as plain columns (the ``predictors`` list) or as a
Wilkinson-Rogers formula (``"strength ~ water_cement + cement_type +
fly_ash:curing_temp + I(water_cement**2)"``), parsed and evaluated with the
general-purpose ``formulaic`` library. A text column, and any ``C(column)``, is
categorical (coded by :mod:`bayes.data.coding`, see :mod:`bayes.data.terms`).

``formulaic`` is imported inside the functions that need it (it takes a while to
import).
"""

from __future__ import annotations

import keyword
import re
from collections.abc import Mapping, Sequence

import numpy as np
import pandas as pd

from bayes.data.grammar import check_formula, data_dependent, quote_keywords
from bayes.errors import InputError

_TREATMENT = re.compile(r"\[T\.")  # formulaic writes a treatment-coded level as name[T.level]
_NAME = re.compile(r"`([^`]+)`|([A-Za-z_][A-Za-z0-9_]*)")
_C_CALL = re.compile(r"^C\(\s*(`[^`]+`|[A-Za-z_][A-Za-z0-9_.]*)\s*\)$")


def first_line(e: Exception) -> str:
    """The first line of an exception's message (its type's name when it has none)."""
    text = str(e).strip()
    return text.splitlines()[0] if text else type(e).__name__


def formula_response(formula: str | None) -> str | None:
    """The left-hand side of a formula as written (None without a formula or a left side)."""
    lhs, tilde, _ = (formula or "").partition("~")
    return lhs.strip() or None if tilde else None


def split_formula(
    formula: str,
    *,
    response: str | None = None,
    predictors: Sequence[str] | None = None,
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
        does not list the variables inside every transform); one named as a Python
        keyword (``yield``) needs no backquotes.

    Returns
    -------
    response, rhs, variables
        ``variables`` are the data columns read by the right-hand side.
    """
    from formulaic import Formula
    from formulaic.errors import FormulaicError
    from formulaic.formula import SimpleFormula

    if predictors is not None:
        raise InputError("give either formula or predictors, not both")
    formula = quote_keywords(formula, columns)  # a column named yield or class
    text = check_formula(formula).strip()
    lhs_text, sep, rhs = text.partition("~")
    if not sep:
        lhs_text, rhs = "", text
    try:
        parsed = Formula(rhs)
        lhs = Formula(lhs_text) if lhs_text.strip() else None
    except (FormulaicError, SyntaxError, ValueError) as e:
        raise InputError(f"formula: cannot read '{formula}': {first_line(e)}") from None
    if not isinstance(parsed, SimpleFormula) or not isinstance(lhs, SimpleFormula | None):
        raise InputError(f"formula: '{formula}' must have one right-hand side")
    if lhs is not None:
        names = [str(t) for t in lhs if str(t) != "1"]
        if len(names) != 1 or len(list(lhs)[-1].factors) != 1:
            raise InputError(f"formula: the left-hand side of '{formula}' must be one column")
        lhs_name = names[0]
        if response and response != lhs_name:
            raise InputError(
                f"formula: its response '{lhs_name}' differs from response '{response}'"
            )
        response = lhs_name
    if not response:
        raise InputError(
            "no response column given (formula 'y ~ ...', response, or the prior file's "
            "[study] response)"
        )
    named = {m.group(1) or m.group(2) for m in _NAME.finditer(rhs)} & set(columns)
    return response, rhs, sorted({str(v) for v in parsed.required_variables} | named)


def formula_intercept(rhs: str) -> bool:
    """Whether the right-hand side ``rhs`` (checked by :func:`split_formula`) keeps the
    intercept: False for ``x - 1`` and ``0 + x``."""
    from formulaic import Formula

    check_formula(rhs)
    return any(str(t) == "1" for t in Formula(rhs))


def model_matrix(rhs: str, frame: pd.DataFrame, *, source: str) -> tuple[list[str], np.ndarray]:
    """Evaluate the right-hand side ``rhs`` on ``frame``.

    Returns
    -------
    names : list of str
        Design column names without the intercept (a level as ``name[level]``).
    X : ndarray, shape (n, len(names))
    """
    names, keep, mm = _evaluate(rhs, frame, source)
    return names, mm.to_numpy(dtype=float)[:, keep]


def categorical_factors(
    rhs: str, data: Mapping[str, np.ndarray], *, source: str
) -> list[tuple[str, str]]:
    """(factor name, data column) of each factor of ``rhs`` that formulaic codes as categories.

    Parameters
    ----------
    rhs : str
        Right-hand side of the formula.
    data : mapping of column -> ndarray
        Validated values (text columns as str arrays).
    """
    spec = _evaluate(rhs, pd.DataFrame(dict(data)), source)[2].model_spec
    out = []
    for expr, (kind, _) in spec.encoder_state.items():
        if getattr(kind, "value", kind) != "categorical":
            continue
        match = _C_CALL.match(expr)
        name = expr if expr in data else (match.group(1).strip("`") if match else None)
        if name is None or name not in data:
            raise InputError(
                f"formula: the categorical term '{expr}' must be a column or C(column) "
                "(its reference level is chosen with reference)"
            )
        numeric_uses = [e for e, (k, _) in spec.encoder_state.items()
                        if e == name and getattr(k, "value", k) != "categorical"]  # fmt: skip
        if numeric_uses and expr != name:
            raise InputError(
                f"formula: column '{name}' is used both as a number and, in {expr}, as "
                "categories: use one of them"
            )
        out.append((expr, name))
    return out


def quoted(name: str) -> str:
    """A column name as a formula term (backticks unless it is a plain identifier)."""
    if name.isidentifier() and not keyword.iskeyword(name):
        return name
    return f"`{name}`"


def term_key(name: str) -> frozenset | None:
    """The set of factors of a term, for spotting one term under two spellings.

    None for a level's column (``name[level]``) or what does not read as one term.
    """
    if "[" in name:
        return None
    from formulaic import Formula
    from formulaic.errors import FormulaicError

    try:
        check_formula(name)
        terms = [t for t in Formula(name) if str(t) != "1"]
    except (InputError, FormulaicError, SyntaxError, ValueError):
        return None
    if len(terms) != 1:
        return None
    return frozenset(str(f) for f in terms[0].factors)


def _evaluate(rhs: str, frame: pd.DataFrame, source: str):
    """formulaic's model matrix of ``rhs`` on ``frame``: (names without the intercept,
    their positions, the model matrix), after the checks every evaluation makes."""
    import warnings

    from formulaic import model_matrix as formulaic_matrix
    from formulaic.errors import FormulaicError

    check_formula(rhs)  # nothing outside our grammar reaches formulaic's evaluation
    namespace = {"sqrt": np.sqrt, "abs": np.abs}  # log and exp are formulaic's own
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            mm = formulaic_matrix(rhs, frame, na_action="ignore", context=namespace)
    except (FormulaicError, SyntaxError, NameError, TypeError, ValueError) as e:
        raise InputError(
            f"{source}: cannot evaluate the formula '{rhs}': {first_line(e)}"
        ) from None
    stateful = list(mm.model_spec.transform_state)
    if stateful:
        raise data_dependent(stateful[0])
    names = [_TREATMENT.sub("[", str(c)) for c in mm.columns]
    keep = [j for j, c in enumerate(names) if c != "Intercept"]
    return [names[j] for j in keep], keep, mm
