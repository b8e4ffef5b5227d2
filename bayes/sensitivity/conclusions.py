"""Following each conclusion along the widths: where its probability crosses the level.

For the sign of every slope (the sign that holds at the stated priors) and for each
threshold, the posterior probability of the conclusion at every width factor; the flip
factors, nearest to 1 on either side, are the roots in log factor of that probability
minus the level, found by Brent's method between the grid factors that bracket them
(the engines give the marginals at any factor, so the probability is a smooth function
of it).

Sampled sweeps: each probability carries its Monte Carlo standard error (MCSE, from the
chains' effective sample sizes and the importance weights,
:func:`bayes.engine.diagnostics.weighted_mean_mcse`), and each flip factor a range: the
factors nearest to it where the probability crosses the level plus and minus
:data:`bayes.settings.FLIP_MCSE` times its MCSE at the flip.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import optimize

from bayes.sensitivity.result import Conclusion
from bayes.sensitivity.sampled import mcse_of
from bayes.settings import FLIP_MCSE


def probability(mix, j: int, op: str, value: float) -> float:
    """P(beta_j op value) under the marginals ``mix`` (``op`` is ``"<"`` or ``">"``)."""
    x = np.full(mix.k, value)
    return float(mix.cdf(x)[j] if op == "<" else mix.sf(x)[j])


def probability_mcse(mix, j: int, value: float) -> float:
    """Monte Carlo standard error of P(beta_j op value) (either op; 0 for exact marginals)."""
    return float(mcse_of(mix, "cdf", np.full(mix.k, value))[j])


def _root(engine, j, op, value, target, f_in, f_out) -> float:
    """Root in log factor of P(conclusion) - target between two factors."""

    def g(lf: float) -> float:
        return probability(engine.at(math.exp(lf)), j, op, value) - target

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
                hit = _root(engine, j, op, value, level, factors[i], factors[i + step])
                break
            if not np.isfinite(probs[i + step]):
                break
            i += step
        found.append(hit)
    return found[0], found[1]


def _nearest_root(engine, factors, probs, j, op, value, target, flip) -> float | None:
    """The crossing of ``target`` nearest to the factor ``flip`` (in log factor), searching
    outward from it over the grid; None when there is none on the grid."""
    values = dict(zip((float(f) for f in factors), probs, strict=True))
    values[flip] = probability(engine.at(flip), j, op, value)
    points = sorted(values)
    i0 = points.index(flip)
    best = None
    for step in (-1, 1):
        i = i0
        while 0 <= i + step < len(points) and np.isfinite(values[points[i + step]]):
            a, b = points[i], points[i + step]
            if (values[a] - target) * (values[b] - target) <= 0:
                root = a if values[a] == target else _root(engine, j, op, value, target, a, b)
                if best is None or abs(math.log(root / flip)) < abs(math.log(best / flip)):
                    best = root
                break
            i += step
    return best


def flip_range(engine, factors, probs, j, op, value, level, flip) -> tuple | None:
    """The factors around a flip where the probability lies within :data:`bayes.settings.FLIP_MCSE`
    Monte Carlo standard errors (its error at the flip) of the level.

    Returns ``(low, high)``, an end None when the band reaches past the grid; ``(flip,
    flip)`` when the probability is exact; None when there is no flip.
    """
    if flip is None:
        return None
    s = probability_mcse(engine.at(flip), j, value)
    if not s > 0:
        return (flip, flip)
    roots = [_nearest_root(engine, factors, probs, j, op, value, level + sign * FLIP_MCSE * s,
                           flip) for sign in (-1, 1)]  # fmt: skip
    below = [r for r in roots if r is not None and r <= flip]
    above = [r for r in roots if r is not None and r >= flip]
    return (min(below) if below else None, max(above) if above else None)


def follow_conclusions(
    engine, every, p_positive, names, *, response, thresholds, factors, level, p_positive_mcse
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
    p_positive_mcse : ndarray, shape (F + 1, k)
        Monte Carlo standard errors of ``p_positive`` (0 where exact).
    """
    i1 = int(np.flatnonzero(factors == 1.0)[0])
    targets = []
    for j, name in enumerate(names):
        if name == "intercept":
            continue
        err = p_positive_mcse[:, j]
        if p_positive[i1, j] >= 0.5:
            targets.append((j, "sign", ">", 0.0, p_positive[:, j], err))
        else:
            targets.append((j, "sign", "<", 0.0, 1.0 - p_positive[:, j], err))
    for t in thresholds:
        j = names.index(t.name)
        probs = [math.nan if m is None else probability(m, j, t.op, t.value) for m in every]
        errs = [math.nan if m is None else probability_mcse(m, j, t.value) for m in every]
        targets.append((j, "threshold", t.op, t.value, np.array(probs), np.array(errs)))
    span = (float(factors[0]), float(factors[-1]))
    draws = engine.draws_at(1.0) if engine.method == "sampled" else None
    out = []
    for j, kind, op, value, probs, errs in targets:
        narrower, wider = _follow(engine, factors, probs[:-1], j, op, value, level)
        ranges = [flip_range(engine, factors, probs[:-1], j, op, value, level, f)
                  for f in (narrower, wider)]  # fmt: skip
        out.append(Conclusion(names[j], kind, op, value, response, probs, float(probs[i1]),
                              narrower, wider, level, span, errs, float(errs[i1]), draws,
                              *ranges))  # fmt: skip
    return out
