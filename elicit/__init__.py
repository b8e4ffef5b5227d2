"""Prior elicitation: an expert's stated ranges and quantiles turned into validated priors.

Modules: :mod:`elicit.convert` (statements -> distributions), :mod:`elicit.spec` (the prior
file and the one validator), :mod:`elicit.pool` (several experts), :mod:`elicit.conditional`
(conditional-means prior), :mod:`elicit.feedback` (what is shown before accepting),
:mod:`elicit.write` (writing prior files), :mod:`elicit.interview`, :mod:`elicit.io`
(atomic writes) and :mod:`elicit.cli` (the ``elicit`` command).

The names below are imported from :mod:`elicit.spec` on first use, so that ``elicit --help``
does not load scipy.
"""

__all__ = [
    "FAMILIES",
    "CoefficientPrior",
    "CorrelatedBlock",
    "NoisePrior",
    "PriorFileError",
    "PriorSet",
    "Statement",
    "flat_priors",
    "parse_priors",
    "read_prior_file",
]


def __getattr__(name: str):
    if name in __all__:
        from elicit import spec

        return getattr(spec, name)
    raise AttributeError(f"module 'elicit' has no attribute {name!r}")
