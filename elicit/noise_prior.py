"""The prior on the residual noise sd: known, or an inverse gamma on the variance."""

from __future__ import annotations

from dataclasses import dataclass

from elicit import convert


@dataclass(frozen=True)
class NoisePrior:
    """Prior on the residual sd ``sigma`` of the response: ``sd`` (known, response units), or
    ``sigma^2 ~ scipy.stats.invgamma(shape, scale=scale)`` (scale in response units^2), from the
    stated range ``low``, ``high`` (probability ``mass``) when one was stated. ``expert`` and
    ``rationale`` are kept for the record; a pooled prior keeps the experts' noise priors in
    ``statements`` and its method in ``pool`` (:mod:`elicit.noise_record`).

    Examples
    --------
    >>> import elicit
    >>> elicit.parse_priors({"noise": {"sd": 2.5}}).noise.median  # a known sd is its own median
    2.5
    """

    sd: float | None
    low: float | None
    high: float | None
    mass: float | None
    shape: float | None
    scale: float | None
    expert: str | None = None
    rationale: str | None = None
    statements: tuple[NoisePrior, ...] = ()
    pool: str | None = None

    @property
    def known(self) -> bool:
        return self.sd is not None

    @property
    def median(self) -> float:
        """The known sd, or the prior median of the sd (response units)."""
        if self.sd is not None:
            return self.sd
        return convert.noise_median(self.shape, self.scale)
