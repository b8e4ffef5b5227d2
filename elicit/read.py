"""The prior file: its format, and reading it into a validated :class:`elicit.spec.PriorSet`.

Reading goes through the one validator, :func:`elicit.validate.parse_priors`. Errors are
:class:`elicit.errors.PriorFileError`, one line naming the file, the entry and the field.
Warnings (e.g. asymmetric quantiles) are :class:`elicit.errors.ElicitationWarning`.

File format (TOML, read with ``tomllib``). All keys are optional unless said otherwise;
any other key is an error.

``[study]``
    ``title``, ``response`` (column of the data), ``response_units``.
``[units]``
    ``predictor = "unit"`` for each predictor (used in feedback and reports).
``[model]`` (the model the priors were stated for, see :mod:`elicit.model_spec`)
    ``formula`` (as ``bayes fit --formula`` takes it), ``reference = {column = "level"}``,
    ``intercept`` (default true). ``bayes`` commands use it when no option says otherwise.
``[noise]`` (the residual sd of the response; absent: Jeffreys prior)
    Either ``sd`` (known), or ``low``, ``high``, ``mass`` (a stated range of the sd, read as
    an inverse-gamma prior on the variance, see :mod:`elicit.convert`), or ``shape``, ``scale``
    (that inverse gamma given directly: ``scipy.stats.invgamma(shape, scale=scale)``).
``[pool]`` (how several entries for one coefficient are combined, see :mod:`elicit.pool`)
    ``method = "linear" | "log"`` (default ``"linear"``); ``family`` and ``df`` of pooled
    priors (default: the family the entries share; required when they differ). A column with
    a single entry keeps its own family. ``family = "mixture"`` keeps the linear pool as the
    experts' mixture (normal or Laplace entries; see :mod:`elicit.validate_mixture`).
``[[coefficient]]`` (one per statement; several for one column are pooled)
    ``name`` (required: column name, or ``"intercept"``); ``level`` (a categorical level: the
    prior is on its difference from the reference level, column ``name[level]``);
    ``family = "normal" | "laplace" | "student_t" | "flat"`` (default ``"normal"``);
    ``df`` (student_t only, default 5); then exactly one of

    - ``low``, ``high``, ``mass``: the range holds the effect with probability ``mass``;
    - ``quantiles = [[0.05, -80], [0.5, -60], [0.95, -35]]``: (probability, value) pairs,
      fitted by least squares on the quantile scale, or, with ``fit = "probability"``, on the
      stated cumulative probabilities (:mod:`elicit.cumulative_fit`);
    - ``bins = [-10, -8, -6, -4, -2]``, ``chips = [1, 4, 4, 1]``: chips in bins (edges, and
      a whole count per bin), fitted on the cumulative proportions at the edges;
    - ``center``, ``scale``: the distribution's own parameters, per one unit of predictor;

    (none of them for ``flat``); ``per`` (default 1: the range or quantiles are for a change of
    ``per`` units of the predictor); ``expert``, ``rationale`` (kept for the record);
    ``weight`` (pooling weight, default 1).

    A pooled entry, as written by ``elicit pool``, holds the pooled ``center``, ``scale``
    (and ``df``) with ``pool = "linear" | "log"`` and ``pool_misfit``, followed by the original
    statements as ``[[coefficient.statement]]`` tables (same keys as a plain entry, without
    ``name`` and ``level``); its values are taken as written and it must be the only entry for
    its column. Without ``pool_misfit`` (files written before it was recorded) the misfit of a
    linear pool is recomputed from the statements. A mixture entry has ``family = "mixture"``
    and ``[[coefficient.component]]`` tables (``weight``, ``family``, ``center``, ``scale``).
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

import re
import sys
import tomllib
from pathlib import Path
from typing import Any

from elicit.errors import PriorFileError
from elicit.limits import LARGEST
from elicit.spec import PriorSet
from elicit.validate import parse_priors


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
            data = handle.read()
        return tomllib.loads(data.decode())
    except OSError as exc:
        raise PriorFileError(f"{source}: cannot read: {exc.strerror or exc}") from None
    except tomllib.TOMLDecodeError as exc:
        raise PriorFileError(f"{source}: {exc}") from None
    except UnicodeDecodeError as exc:
        raise PriorFileError(f"{source}: not UTF-8 text: {exc.reason}") from None
    except RecursionError:  # tomllib recurses into nested arrays and inline tables
        raise PriorFileError(f"{source}: arrays or tables nested too deeply") from None
    except ValueError as exc:  # an integer beyond Python's digit limit (tomllib's only other)
        where = _long_integer(data.decode(errors="replace"))
        if where is None:
            raise PriorFileError(f"{source}: cannot read: {exc}") from None
        raise PriorFileError(
            f"{source}: {where}: an integer with thousands of digits (numbers must be at most "
            f"{LARGEST:g} in magnitude)"
        ) from None


def _long_integer(text: str) -> str | None:
    """``"line L, column C"`` of the first run of more digits than Python reads as an int."""
    limit = sys.get_int_max_str_digits() or 4300
    match = re.search(r"[0-9](?:_?[0-9]){" + str(limit) + ",}", text)
    if match is None:
        return None
    start = match.start()
    line, column = text.count("\n", 0, start) + 1, start - text.rfind("\n", 0, start)
    return f"line {line}, column {column}"


def read_prior_file(path: str | Path) -> PriorSet:
    """Read and validate a TOML prior file.

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    PriorSet

    Raises
    ------
    PriorFileError
        Unreadable file, TOML syntax error or duplicate key (with line and column), or any
        validation error (see :func:`elicit.validate.parse_priors`).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "priors.toml"
    >>> _ = path.write_text('''
    ... [[coefficient]]
    ... name = "dose"
    ... center = 2.0
    ... scale = 0.5
    ... ''')
    >>> read_prior_file(path).coefficients[0].scale
    0.5
    """
    return parse_priors(load_document(path), source=str(path))


def load_priors(priors: PriorSet | str | Path | None) -> PriorSet:
    """The prior set a fit uses: a :class:`PriorSet` as it is, a prior file read by
    :func:`read_prior_file`, or flat priors for ``None``.

    Parameters
    ----------
    priors : PriorSet, str, Path or None

    Returns
    -------
    PriorSet

    Raises
    ------
    PriorFileError
        As :func:`read_prior_file`.

    Examples
    --------
    >>> import elicit
    >>> elicit.load_priors(None).coefficients  # no file: every coefficient flat
    ()
    """
    from elicit.spec import flat_priors

    if priors is None:
        return flat_priors()
    if isinstance(priors, PriorSet):
        return priors
    return read_prior_file(Path(priors))
