"""Prior elicitation: an expert's stated ranges and quantiles turned into validated priors.

Modules: :mod:`elicit.convert` (statements -> distributions), :mod:`elicit.spec` (the prior
file and the one validator), :mod:`elicit.pool` (several experts), :mod:`elicit.conditional`
(conditional-means prior), :mod:`elicit.io` (atomic writes).
"""

from elicit.spec import (
    FAMILIES,
    CoefficientPrior,
    CorrelatedBlock,
    NoisePrior,
    PriorFileError,
    PriorSet,
    Statement,
    flat_priors,
    parse_priors,
    read_prior_file,
)

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
