"""The record of one expert's statement about one coefficient: their words, kept verbatim, with
the prior they convert to (read and checked by :mod:`elicit.statements`)."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Statement:
    """One expert's words, kept verbatim for the record, with the prior they convert to.

    Attributes
    ----------
    expert, rationale : str or None
    low, high, mass : float or None
        Stated range (response units per ``per`` units of predictor) and its probability.
    per : float
        The range or quantiles are for a change of ``per`` units of the predictor.
    quantiles : tuple of (probability, value) or None
        As stated.
    family : str
        One of FAMILIES.
    center, scale : float
        The converted prior, per one unit of predictor (flat: 0 and nan).
    df : float or None
        Student-t degrees of freedom.
    weight : float
        Pooling weight (> 0).
    fit, bins, chips : str, tuple, tuple or None
        fit "probability": quantiles fitted on cumulative probabilities; chips in bins as stated.

    Examples
    --------
    >>> import elicit
    >>> priors = elicit.parse_priors({"coefficient": [
    ...     {"name": "x", "low": -2.0, "high": 2.0, "mass": 0.5, "expert": "engineer A"}]})
    >>> said = priors.get("x").statements[0]
    >>> said.expert, said.low, said.high, said.mass
    ('engineer A', -2.0, 2.0, 0.5)
    """

    expert: str | None
    rationale: str | None
    low: float | None
    high: float | None
    mass: float | None
    per: float
    quantiles: tuple[tuple[float, float], ...] | None
    family: str
    center: float
    scale: float
    df: float | None
    weight: float
    fit: str | None = None
    bins: tuple[float, ...] | None = None
    chips: tuple[int, ...] | None = None
