"""The sampler's settings, with the one set of defaults that the API, the command line, the
width sweep, the prior comparison and the demo all use.

Light on purpose (no numpy): the command line reads its option defaults from here.
"""

from __future__ import annotations

from dataclasses import dataclass

from bayes.errors import InputError


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

    Examples
    --------
    >>> SamplerSettings(draws=500).describe()
    '4 chains x 500 draws after 1000 warm-up, seed 20261201'
    """

    chains: int = 4
    draws: int = 2000
    warmup: int = 1000
    seed: int = 20261201

    def __post_init__(self) -> None:
        for name, low in (("chains", 1), ("draws", 10), ("warmup", 0)):
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
