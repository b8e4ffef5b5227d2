"""Helpers for the mode and sampler tests: natural-unit priors, Monte Carlo comparisons."""

from __future__ import annotations

import warnings

import numpy as np

from bayes.engine.scaled import scaled_prior
from bayes.problem import DataFactor, ScaledPrior
from elicit.conditional import CorrelatedBlock
from elicit.spec import CoefficientPrior, NoisePrior, PriorSet


def natural_prior(
    factor: DataFactor,
    coefficients: dict[str, tuple],
    noise_sd: float | None = None,
    noise_invgamma: tuple[float, float] | None = None,
    block: tuple[tuple[str, ...], np.ndarray, np.ndarray] | None = None,
) -> ScaledPrior:
    """The scaled prior of natural-unit priors, through the library's own mapping.

    ``coefficients`` maps a column (or "intercept") to ``(family, center, scale[, df])``;
    unnamed columns are flat. The noise is known (``noise_sd``), inverse-gamma on
    sigma^2 (``noise_invgamma = (shape, scale)``) or, with neither, Jeffreys.
    """
    entries = tuple(
        CoefficientPrior(name, None, spec[0], float(spec[1]), float(spec[2]),
                         float(spec[3]) if len(spec) > 3 else None)
        for name, spec in coefficients.items()
    )  # fmt: skip
    if noise_sd is not None:
        noise = NoisePrior(noise_sd, None, None, None, None, None)
    elif noise_invgamma is not None:
        noise = NoisePrior(None, None, None, None, *noise_invgamma)
    else:
        noise = None
    blk = None if block is None else CorrelatedBlock(block[0], block[1], block[2])
    return scaled_prior(factor, PriorSet(None, None, None, None, {}, noise, entries, blk))


def quiet_arviz():
    """arviz, imported without its FutureWarnings."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FutureWarning)
        import arviz

    return arviz


def assert_draws_match(draws: np.ndarray, mean: float, sd: float, q025: float, q975: float):
    """Mean, sd and 2.5/97.5% quantiles of (chains, draws) within 4 Monte Carlo errors.

    The Monte Carlo standard errors come from arviz.mcse (effective sample size
    based), so the tolerance is the sampling error of the check itself.
    """
    az = quiet_arviz()
    checks = [
        ("mean", np.mean(draws), mean, az.mcse(draws, method="mean")),
        ("sd", np.std(draws, ddof=1), sd, az.mcse(draws, method="sd")),
        ("q2.5", np.quantile(draws, 0.025), q025, az.mcse(draws, method="quantile", prob=0.025)),
        ("q97.5", np.quantile(draws, 0.975), q975, az.mcse(draws, method="quantile", prob=0.975)),
    ]
    for what, got, want, mcse in checks:
        assert abs(got - want) <= 4 * mcse, (
            f"{what}: sampled {got:.6g}, reference {want:.6g}, MCSE {mcse:.3g}"
        )
