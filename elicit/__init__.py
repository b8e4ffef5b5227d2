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
load scipy.
"""

_HOMES = {
    "FAMILIES": "elicit.spec",
    "CoefficientPrior": "elicit.spec",
    "CorrelatedBlock": "elicit.conditional",
    "NoisePrior": "elicit.spec",
    "PriorFileError": "elicit.errors",
    "PriorSet": "elicit.spec",
    "Statement": "elicit.spec",
    "flat_priors": "elicit.spec",
    "parse_priors": "elicit.validate",
    "read_prior_file": "elicit.read",
}

__all__ = sorted(_HOMES)


def __getattr__(name: str):
    if name in _HOMES:
        import importlib

        return getattr(importlib.import_module(_HOMES[name]), name)
    raise AttributeError(f"module 'elicit' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
