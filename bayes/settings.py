"""The sampler's settings, with the one set of defaults that the API, the command line, the
width sweep, the prior comparison and the demo all use.

Light on purpose (no numpy): the command line reads its option defaults from here.
"""

from __future__ import annotations

from dataclasses import dataclass

from bayes.errors import InputError

# Sampled conclusions (the width sweep): a probability within DECIDE_MCSE Monte Carlo standard
# errors of its level is sampled again (up to SamplerSettings.max_draws), and a flip factor's
# range is where the probability lies within FLIP_MCSE of them of the level.
DECIDE_MCSE = 3.0
FLIP_MCSE = 2.0


@dataclass(frozen=True)
class SamplerSettings:
    """How the Gibbs sampler runs.

    Parameters
    ----------
    chains : int, default 4
        Independent chains (R-hat needs at least two).
    draws : int, default 2000
        Draws kept per chain after the warm-up.
    warmup : int, default 1000
        Draws discarded at the start of each chain.
    seed : int, default 20261201
        Seed of the ``numpy.random.Generator``: the same seed gives the same numbers.
    max_draws : int, default 16000
        Cap on the draws per chain that a sampled width sweep may spend at the stated priors
        when a conclusion's probability lies within 3 Monte Carlo standard errors of its level
        (8 times the default ``draws``): each further round adds as many chains again, each
        of ``draws`` draws, with new seeds derived from ``seed``, until the run holds
        ``chains x max_draws`` draws. A conclusion still that close is then reported as
        undecided at this precision. No further rounds when ``max_draws <= draws``.

    Examples
    --------
    >>> SamplerSettings(draws=500).describe()
    '4 chains x 500 draws after 1000 warm-up, seed 20261201'
    """

    chains: int = 4
    draws: int = 2000
    warmup: int = 1000
    seed: int = 20261201
    max_draws: int = 16000

    def __post_init__(self) -> None:
        for name, low in (("chains", 1), ("draws", 10), ("warmup", 0), ("max_draws", 10)):
            value = getattr(self, name)
            if isinstance(value, bool) or not isinstance(value, int) or value < low:
                raise InputError(f"{name} must be a whole number >= {low}, got {value!r}")
        if isinstance(self.seed, bool) or not isinstance(self.seed, int):
            raise InputError(f"seed must be a whole number, got {self.seed!r}")

    def describe(self) -> str:
        """The settings in words, as the output and the report print them."""
        return (
            f"{self.chains} chains x {self.draws} draws after {self.warmup} warm-up, "
            f"seed {self.seed}"
        )


DEFAULT_SAMPLER = SamplerSettings()
