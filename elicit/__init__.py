"""Prior elicitation: an expert's stated ranges and quantiles turned into validated priors.

Modules, in the order they build on each other: :mod:`elicit.errors`, :mod:`elicit.units`,
:mod:`elicit.io` (atomic writes and the table reader), :mod:`elicit.convert` (statements ->
distributions), :mod:`elicit.pool` (several experts), :mod:`elicit.conditional`
(conditional-means prior), :mod:`elicit.spec` (the validated prior objects),
:mod:`elicit.fields` and :mod:`elicit.validate` (the one validator), :mod:`elicit.read` (the
prior file's format and reader), :mod:`elicit.write` (writing prior files),
:mod:`elicit.predictive` and :mod:`elicit.feedback` (what is shown before accepting, in
numbers), :mod:`elicit.show` (the same in words), :mod:`elicit.interview` and :mod:`elicit.cli`
(the ``elicit`` command).

The names below are imported from their modules on first use, so that ``elicit --help`` does not
load scipy; ``elicit.convert``, ``elicit.pool`` and ``elicit.show`` are the modules themselves
(statements to distributions, several experts into one prior, the feedback in words).

>>> import elicit
>>> priors = elicit.parse_priors({"coefficient": [
...     {"name": "dose", "low": 1.0, "high": 3.0, "mass": 0.9}]})
>>> round(priors.get("dose").scale, 4)  # (3 - 1) / (2 z_0.95) = 1 / 1.64485
0.608
"""

_HOMES = {
    "FAMILIES": "elicit.spec",
    "CoefficientPrior": "elicit.spec",
    "CorrelatedBlock": "elicit.conditional",
    "NoisePrior": "elicit.noise_prior",
    "PriorFileError": "elicit.errors",
    "PriorSet": "elicit.spec",
    "Statement": "elicit.statement_record",
    "flat_priors": "elicit.spec",
    "load_priors": "elicit.read",
    "write_prior_file": "elicit.write",
    "parse_priors": "elicit.validate",
    "read_prior_file": "elicit.read",
}

_MODULES = ("convert", "pool", "show")  # public submodules, loaded on first use too

__all__ = sorted([*_HOMES, *_MODULES])


def __getattr__(name: str):
    import importlib

    if name in _MODULES:
        return importlib.import_module(f"elicit.{name}")
    if name in _HOMES:
        return getattr(importlib.import_module(_HOMES[name]), name)
    raise AttributeError(f"module 'elicit' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
