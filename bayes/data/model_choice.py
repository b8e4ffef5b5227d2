"""The model a fit uses: the prior file's ``[model]`` table, unless an option says otherwise.

:func:`choose_model` takes the formula, reference levels and intercept given as options (None:
not given) and the prior set's :class:`elicit.model_spec.ModelSpec`, and returns what to build
the design with and which of the file's fields an option overrode (the commands say so in one
line each). :func:`file_errors` names the prior file and field in an error about a formula or
a reference level that came from the file.
"""

from __future__ import annotations

import contextlib
import re
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass, field

from bayes.errors import InputError
from elicit.model_spec import formula_lhs


@dataclass(frozen=True)
class ModelChoice:
    """What the design is built with.

    Attributes
    ----------
    formula : str or None
    reference : mapping of column -> level
    intercept : bool
    overrides : tuple of (option, field)
        The ``[model]`` fields an option replaced, e.g. ``("--formula", "formula")``.
    from_file : tuple of str
        The fields taken from the prior file (named in errors about them).
    source : str
        The prior file.
    """

    formula: str | None
    reference: Mapping[str, str] = field(default_factory=dict)
    intercept: bool = True
    overrides: tuple[tuple[str, str], ...] = ()
    from_file: tuple[str, ...] = ()
    source: str = "<priors>"

    def notes(self) -> list[str]:
        """One line per overridden field: ``--formula overrides the prior file's [model]
        formula``."""
        return [f"{option} overrides the prior file's [model] {name}"
                for option, name in self.overrides]  # fmt: skip


def choose_model(
    priors,
    *,
    formula: str | None = None,
    reference: Mapping[str, str] | None = None,
    intercept: bool | None = None,
    response: str | None = None,
    predictors: Sequence[str] | None = None,
) -> ModelChoice:
    """The model to fit: each of formula, reference and intercept from the option when given,
    else from ``priors.model``.

    ``predictors`` (a predictor list) and a ``response`` other than the file's formula's
    replace the file's formula; reference levels are merged, the options' winning.

    Examples
    --------
    >>> import elicit
    >>> priors = elicit.parse_priors({"model": {"formula": "y ~ x + soil"}})
    >>> choose_model(priors).formula
    'y ~ x + soil'
    >>> choose_model(priors, formula="y ~ x").notes()
    ["--formula overrides the prior file's [model] formula"]
    """
    model = getattr(priors, "model", None)
    reference = dict(reference or {})
    if model is None:
        return ModelChoice(formula, reference, True if intercept is None else intercept)
    overrides, taken = [], []
    chosen = formula
    if formula is not None:
        if model.formula is not None and formula.strip() != model.formula.strip():
            overrides.append(("--formula", "formula"))
    elif model.formula is not None:
        lhs = formula_lhs(model.formula)
        if predictors is not None:
            overrides.append(("--predictors", "formula"))
        elif response is not None and lhs is not None and response != lhs:
            overrides.append(("--response", "formula"))
        else:
            chosen = model.formula
            taken.append("formula")
    filed = dict(model.reference)
    if "formula" not in taken and model.formula is not None:  # another model: the file's
        words = set(re.findall(r"\w+", formula or "")) | set(predictors or ())  # levels of
        filed = {k: v for k, v in filed.items() if k in words}  # its columns only
    if any(filed.get(k, v) != v for k, v in reference.items()):
        overrides.append(("--reference", "reference"))
    if set(filed) - set(reference):
        taken.append("reference")
    merged = {**filed, **reference}
    if intercept is None:
        intercept = model.intercept
        taken.append("intercept")
    elif intercept != model.intercept:
        overrides.append(("--no-intercept" if not intercept else "intercept", "intercept"))
    source = getattr(priors, "path", None) or "<priors>"
    return ModelChoice(chosen, merged, intercept, tuple(overrides), tuple(taken), source)


@contextlib.contextmanager
def file_errors(choice: ModelChoice) -> Iterator[None]:
    """Re-raise an error about the formula or a reference level (``"formula: ..."``,
    ``"reference: ..."``) as one naming the prior file and field, when the file gave it."""
    try:
        yield
    except InputError as exc:
        text = str(exc)
        for name in ("formula", "reference"):
            if name in choice.from_file and text.startswith(f"{name}: "):
                where = f"{choice.source}: [model]: field '{name}'"
                raise InputError(f"{where}: {text[len(name) + 2 :]}") from None
        if "intercept" in choice.from_file and not choice.intercept and "intercept" in text:
            raise InputError(f"{choice.source}: [model]: field 'intercept': {text}") from None
        raise


def check_same_model(prior_sets: Sequence, *, formula=None, reference=None, intercept=None):
    """Raise InputError naming the file and field where a prior set's ``[model]`` differs from
    the first one's that has one (fields an option gives are not compared)."""
    given = {"formula": formula is not None, "reference": bool(reference),
             "intercept": intercept is not None}  # fmt: skip
    models = [(ps, ps.model) for ps in prior_sets if getattr(ps, "model", None) is not None]
    for ps, model in models[1:]:
        first, head = models[0]
        for name in ("formula", "reference", "intercept"):
            a, b = getattr(head, name), getattr(model, name)
            if not given[name] and a != b:
                hint = "" if name == "intercept" else f": give --{name} to choose"
                raise InputError(
                    f"{ps.path or '<priors>'}: [model]: field '{name}': {b!r} differs from {a!r} "
                    f"in {first.path or '<priors>'}{hint}"
                )
