"""The family swap: the same stated ranges read as normal, Laplace and Student-t priors.

Each reading keeps every stated range and its probability and changes only the family;
the normal reading is exact, the others are sampled.
"""

from __future__ import annotations

from bayes.engine.scaled import scaled_prior
from bayes.problem import DataFactor
from bayes.sensitivity.sampled import marginals, mcse_of
from bayes.sensitivity.wording import family_method, prior_label
from bayes.settings import SamplerSettings

FAMILIES = ("normal", "laplace", "student_t")


def family_swap(
    factor: DataFactor, priors, *, level: float, sampler: SamplerSettings
) -> dict | None:
    """The stated ranges read as each family: posterior mean and interval per coefficient.

    Returns
    -------
    dict or None
        ``families``, how each was computed (``method``) and per coefficient each
        family's prior, mean and interval at ``level``, each number with its Monte Carlo
        standard error (``mean_mcse``, ``lower_mcse``, ``upper_mcse``; 0 when exact); None
        when no prior has a family to swap.
    """
    if not any(c.family in FAMILIES for c in priors.coefficients):
        return None
    names = factor.coefficient_names
    a = (1 - level) / 2
    per = {}
    for fam in FAMILIES:
        read = priors.as_family(fam)
        sp = scaled_prior(factor, read)
        per[fam] = (read, marginals(factor, sp, sampler), family_method(sp.gaussian_only, sampler))
    errors = {  # Monte Carlo standard errors of mean, lower, upper (0 for the exact reading)
        fam: (mcse_of(mix, "mean"), mcse_of(mix, "quantile", a), mcse_of(mix, "quantile", 1 - a))
        for fam, (_, mix, _) in per.items()
    }
    rows = []
    for j, name in enumerate(names):
        row = {"name": name}
        for fam, (read, mix, _) in per.items():
            row[fam] = {
                "prior": prior_label(read.get(name)),
                "mean": float(mix.mean[j]),
                "lower": float(mix.quantile(a)[j]),
                "upper": float(mix.quantile(1 - a)[j]),
                "mean_mcse": float(errors[fam][0][j]),
                "lower_mcse": float(errors[fam][1][j]),
                "upper_mcse": float(errors[fam][2][j]),
            }
        rows.append(row)
    return {"families": list(FAMILIES), "method": {f: v[2] for f, v in per.items()},
            "coefficients": rows}  # fmt: skip
