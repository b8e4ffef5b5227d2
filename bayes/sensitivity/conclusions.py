"""Following each conclusion along the widths: where its probability crosses the level.

For the sign of every slope (the sign that holds at the stated priors) and for each
threshold, the posterior probability of the conclusion at every width factor; the flip
factors, nearest to 1 on either side, are the roots in log factor of that probability
minus the level, found by Brent's method between the grid factors that bracket them
(the engines give the marginals at any factor, so the probability is a smooth function
of it).
"""

from __future__ import annotations

import math

import numpy as np
from scipy import optimize

from bayes.sensitivity.result import Conclusion


def probability(mix, j: int, op: str, value: float) -> float:
    """P(beta_j op value) under the marginals ``mix`` (``op`` is ``"<"`` or ``">"``)."""
    x = np.full(mix.k, value)
    return float(mix.cdf(x)[j] if op == "<" else mix.sf(x)[j])


def _crossing(engine, j, op, value, level, f_in, f_out) -> float:
    """Root in log factor of P(conclusion) - level between two grid factors."""

    def g(lf: float) -> float:
        return probability(engine.at(math.exp(lf)), j, op, value) - level

    return float(math.exp(optimize.brentq(g, math.log(f_in), math.log(f_out), xtol=1e-12)))


def _follow(engine, factors, probs, j, op, value, level) -> tuple[float | None, float | None]:
    """Nearest crossings of the level below and above factor 1 (None: no crossing)."""
    i1 = int(np.flatnonzero(factors == 1.0)[0])
    state = probs[i1] >= level
    found = []
    for step in (-1, 1):
        hit = None
        i = i1
        while 0 <= i + step < len(factors):
            if (probs[i + step] >= level) != state and np.isfinite(probs[i + step]):
                hit = _crossing(engine, j, op, value, level, factors[i], factors[i + step])
                break
            if not np.isfinite(probs[i + step]):
                break
            i += step
        found.append(hit)
    return found[0], found[1]


def follow_conclusions(
    engine, every, p_positive, names, *, response, thresholds, factors, level
) -> list[Conclusion]:
    """Sign conclusions for every slope, then the thresholds, each with its flip factors.

    Parameters
    ----------
    engine
        Gives the marginals at any width factor (``engine.at(f)``).
    every : list
        The marginals at each factor and in the flat-prior limit (last); None where
        not available.
    p_positive : ndarray, shape (F + 1, k)
        P(beta > 0) at each factor and in the flat limit.
    names : sequence of str
        The coefficients.
    response : str
        The response's name, for the statements.
    thresholds : sequence of Threshold
    factors : ndarray, shape (F,)
        The grid (ascending, 1 included).
    level : float
        The probability a conclusion needs to hold.
    """
    i1 = int(np.flatnonzero(factors == 1.0)[0])
    targets = []
    for j, name in enumerate(names):
        if name == "intercept":
            continue
        if p_positive[i1, j] >= 0.5:
            targets.append((j, "sign", ">", 0.0, p_positive[:, j]))
        else:
            targets.append((j, "sign", "<", 0.0, 1.0 - p_positive[:, j]))
    for t in thresholds:
        j = names.index(t.name)
        probs = [math.nan if m is None else probability(m, j, t.op, t.value) for m in every]
        targets.append((j, "threshold", t.op, t.value, np.array(probs)))
    span = (float(factors[0]), float(factors[-1]))
    out = []
    for j, kind, op, value, probs in targets:
        narrower, wider = _follow(engine, factors, probs[:-1], j, op, value, level)
        out.append(Conclusion(names[j], kind, op, value, response, probs, float(probs[i1]),
                              narrower, wider, level, span))  # fmt: skip
    return out
