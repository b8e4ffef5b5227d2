"""The stated priors as the sweep widens them: which are widened, their flat-prior limit,
their variances and intervals (for the variance ratios and the chart)."""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
from scipy import special

from bayes.errors import InputError
from bayes.sensitivity.wording import selection_words
from elicit.conditional import CorrelatedBlock
from elicit.pool import pool


def block_names(priors) -> tuple[str, ...]:
    """The coefficients of the correlated block (none without one)."""
    return priors.block.names if priors.block is not None else ()


def informative(priors) -> set[str]:
    """The coefficients whose prior is not flat (a correlated block's included)."""
    return {c.column for c in priors.coefficients if c.family != "flat"} | set(block_names(priors))


def widened(priors, names, *, columns=None, expert=None) -> tuple[set[str], str]:
    """The coefficients the sweep widens, and which priors those are in words.

    Parameters
    ----------
    priors : elicit.spec.PriorSet
    names : sequence of str
        Every coefficient of the model.
    columns : list of str, optional
        Widen only these coefficients' priors (default every informative prior).
    expert : str, optional
        Widen only this expert's statements.

    Raises
    ------
    InputError
        When nothing is informative, a column is unknown or flat, or the expert made no
        statement.
    """
    chosen = informative(priors)
    if not chosen:
        raise InputError(
            "every coefficient prior is flat: there is nothing to widen (give a prior file "
            "with informative priors)"
        )
    if columns is not None:
        for c in columns:
            if c not in names:
                raise InputError(f"columns {c!r}: no such coefficient "
                                 f"(coefficients: {', '.join(names)})")  # fmt: skip
            if c not in chosen:
                raise InputError(f"columns {c!r}: its prior is flat; nothing to widen")
    if expert is not None:
        experts = sorted({s.expert for c in priors.coefficients for s in c.statements if s.expert})
        if expert not in experts:
            raise InputError(f"expert {expert!r}: no statement by this expert "
                             f"(experts: {', '.join(experts) or 'none named'})")  # fmt: skip
    swept = set(chosen if columns is None else columns)
    if expert is not None:
        swept &= {c.column for c in priors.coefficients
                  if any(s.expert == expert for s in c.statements)}  # fmt: skip
    return swept, selection_words(columns, expert)


def flat_limit(priors, *, columns=None, expert=None):
    """The prior set in the limit of infinitely wide swept priors.

    The swept priors become flat. A correlated block widened on some of its
    coefficients keeps, on the others, the limit of its density: the Gaussian with
    the conditional covariance given the widened ones. When one expert's statements
    are widened, a log-pooled coefficient tends to the log pool of the other
    experts' statements (exactly so for normal pools); a linear pool widens without bound
    and becomes flat.
    """
    chosen = None if columns is None else set(columns)
    coefs = []
    for c in priors.coefficients:
        if c.family == "flat" or (chosen is not None and c.column not in chosen):
            coefs.append(c)
            continue
        if expert is None:
            coefs.append(replace(c, family="flat", center=0.0, scale=math.nan, df=None))
            continue
        mine = [s for s in c.statements if s.expert == expert]
        others = [s for s in c.statements if s.expert != expert and s.family != "flat"]
        if not mine:
            coefs.append(c)
        elif c.pool == "log" and others:
            # The log pool raises each density to its normalised weight; the widened
            # statements' factors tend to constants, the others keep their exponents
            # w_i / sum(all w): the pool of the others with precision times sum(w_others) /
            # sum(all w) (exact for normal pools).
            pooled = pool(others, method="log", family=c.family, df=c.df)
            share = sum(s.weight for s in others) / sum(s.weight for s in c.statements)
            coefs.append(replace(c, center=pooled.center, scale=pooled.scale / math.sqrt(share),
                                 pool_misfit=pooled.misfit))  # fmt: skip
        else:
            coefs.append(replace(c, family="flat", center=0.0, scale=math.nan, df=None))
    block = priors.block
    if block is not None and expert is None:
        keep = [i for i, n in enumerate(block.names) if chosen is not None and n not in chosen]
        if not keep:
            block = None
        elif len(keep) < len(block.names):
            drop = [i for i in range(len(block.names)) if i not in keep]
            C = block.cov
            cond = C[np.ix_(keep, keep)] - C[np.ix_(keep, drop)] @ np.linalg.solve(
                C[np.ix_(drop, drop)], C[np.ix_(drop, keep)]
            )
            block = CorrelatedBlock(tuple(block.names[i] for i in keep), block.mean[keep], cond)
    return replace(priors, coefficients=tuple(coefs), block=block)


def prior_variance(priors, name: str) -> float | None:
    """The stated prior variance of coefficient ``name`` (None for a flat prior)."""
    cp = priors.get(name)
    if cp is not None and cp.family != "flat":
        return float(cp.sd) ** 2
    if name in block_names(priors):
        i = priors.block.names.index(name)
        return float(priors.block.cov[i, i])
    return None


def variance_ratios(names, priors, sd: np.ndarray) -> list[float | None]:
    """Posterior over prior variance per coefficient (None where the prior is flat).

    Parameters
    ----------
    names : sequence of str, length k
    priors : elicit.spec.PriorSet
    sd : ndarray, shape (k,)
        Posterior standard deviations at the stated priors.
    """
    out = []
    for n, s in zip(names, sd, strict=True):
        pv = prior_variance(priors, n)
        out.append(float(s**2 / pv) if pv and math.isfinite(pv) else None)
    return out


def prior_interval(priors, name: str, level: float) -> tuple[float, float] | None:
    """Central interval of coefficient ``name``'s stated prior at ``level`` (None if flat)."""
    cp = priors.get(name)
    if cp is not None and cp.family == "normal":  # closed form: freezing a scipy law costs 1 ms
        return _normal_interval(cp.center, cp.scale, level)
    if cp is not None and cp.family != "flat":
        lo, hi = cp.dist().interval(level)
        return float(lo), float(hi)
    if name in block_names(priors):
        i = priors.block.names.index(name)
        return _normal_interval(priors.block.mean[i], np.sqrt(priors.block.cov[i, i]), level)
    return None


def _normal_interval(center: float, sd: float, level: float) -> tuple[float, float]:
    half = float(sd * special.ndtri((1 + level) / 2))
    return float(center) - half, float(center) + half
