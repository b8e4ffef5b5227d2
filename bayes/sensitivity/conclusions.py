"""Following each conclusion along the widths: where its probability crosses the level.

For the sign of every slope (the sign that holds at the stated priors) and for each
threshold, the posterior probability of the conclusion at every width factor; the flip
factors, nearest to 1 on either side, are the roots in log factor of that probability
minus the level, found by Brent's method between the grid factors that bracket them
(the engines give the marginals at any factor, so the probability is a smooth function
of it).

Sampled sweeps: each probability carries its Monte Carlo standard error (MCSE, from the
chains' effective sample sizes and the importance weights,
:func:`bayes.engine.diagnostics.weighted_mean_mcse`), and each flip factor a range
(:func:`flip_range`): the factors nearest to it where the probability crosses the level plus
and minus ``FLIP_MCSE`` (2, :mod:`bayes.settings`) times its MCSE at the flip.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import optimize

from bayes.sensitivity.result import Conclusion
from bayes.sensitivity.sampled import MIN_ESS, mcse_of
from bayes.settings import FLIP_MCSE


def probability(mix, j: int, op: str, value: float) -> float:
    """P(beta_j op value) under the marginals ``mix`` (``op`` is ``"<"`` or ``">"``)."""
    x = np.full(mix.k, value)
    return float(mix.cdf(x)[j] if op == "<" else mix.sf(x)[j])


def probability_mcse(mix, j: int, value: float) -> float:
    """Monte Carlo standard error of P(beta_j op value) (either op; 0 for exact marginals)."""
    return float(mcse_of(mix, "cdf", np.full(mix.k, value))[j])


def _root(p, target: float, f_in: float, f_out: float) -> float:
    """Root in log factor of ``p(f) - target`` between two factors (Brent's method)."""
    return float(math.exp(optimize.brentq(lambda lf: p(math.exp(lf)) - target, math.log(f_in),
                                          math.log(f_out), xtol=1e-12)))  # fmt: skip


def _follow(engine, factors, probs, j, op, value, level) -> tuple[float | None, float | None]:
    """Nearest crossings of the level below and above factor 1 (None: no crossing)."""
    i1 = int(np.flatnonzero(factors == 1.0)[0])
    state = probs[i1] >= level

    def p(f: float) -> float:
        return probability(engine.at(f), j, op, value)

    found = []
    for step in (-1, 1):
        hit = None
        i = i1
        while 0 <= i + step < len(factors):
            if (probs[i + step] >= level) != state and np.isfinite(probs[i + step]):
                hit = _root(p, level, factors[i], factors[i + step])
                break
            if not np.isfinite(probs[i + step]):
                break
            i += step
        found.append(hit)
    return found[0], found[1]


def _nearest_roots(p, factors, flip: float, targets) -> list[float | None]:
    """For each target, the crossing of ``p(f) = target`` nearest to ``flip`` (in log factor),
    searched outward from it over the grid while ``p`` is finite; None when there is none."""
    values = {float(f): p(float(f)) for f in factors}
    values[flip] = p(flip)
    points = sorted(values)
    i0 = points.index(flip)
    out = []
    for target in targets:
        best = None
        for step in (-1, 1):
            i = i0
            while 0 <= i + step < len(points):
                a, b = points[i], points[i + step]
                if not (np.isfinite(values[a]) and np.isfinite(values[b])):
                    break
                if (values[a] - target) * (values[b] - target) <= 0:
                    root = a if values[a] == target else _root(p, target, a, b)
                    if best is None or abs(math.log(root / flip)) < abs(math.log(best / flip)):
                        best = root
                    break
                i += step
        out.append(best)
    return out


def flip_range(engine, factors, j, op, value, level, flip, rising: bool) -> tuple | None:
    """The factors around a flip where the probability lies within ``FLIP_MCSE`` Monte Carlo
    standard errors of the level (:mod:`bayes.settings`).

    The probability is followed from the draws of each of the two sampled factors nearest to
    the flip (:meth:`SampledEngine.sources`), each with its own MCSE at the flip, and the
    range holds every crossing of level -+ ``FLIP_MCSE`` MCSE found: the nearest run's values
    jump where the next run takes over, and a flip found at that jump has both runs' errors.

    Parameters
    ----------
    rising : bool
        Whether the probability rises with the factor at the flip (then level + 2 MCSE is
        crossed above it, level - 2 MCSE below).

    Returns
    -------
    (low, high) or None
        An end None when no run finds its crossing (past the grid, or past the factors the
        draws reach with enough effective draws); ``(flip, flip)`` when the probability is
        exact; None when there is no flip.
    """
    if flip is None:
        return None
    if not probability_mcse(engine.at(flip), j, value) > 0:
        return (flip, flip)
    below, above = [], []  # the crossings found on either side
    for source in engine.sources(flip):
        here = engine.at(flip, source)
        if here.ess < MIN_ESS:
            continue
        s = FLIP_MCSE * probability_mcse(here, j, value)

        def p(f: float, source=source) -> float:
            m = engine.at(f, source)
            return probability(m, j, op, value) if m.ess >= MIN_ESS else math.nan

        up, down = _nearest_roots(p, factors, flip, (level + s, level - s))
        for root, side in ((up, rising), (down, not rising)):
            if root is not None:  # a run whose draws do not reach that far says nothing
                (above if side else below).append(root)
    roots = below + above
    return (min([flip, *roots]) if below else None, max([flip, *roots]) if above else None)


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
        held = bool(probs[i1] >= level)  # below 1 the probability rises to it if it holds there
        ranges = [flip_range(engine, factors, j, op, value, level, f, rising)
                  for f, rising in ((narrower, held), (wider, not held))]  # fmt: skip
        out.append(Conclusion(names[j], kind, op, value, response, probs, float(probs[i1]),
                              narrower, wider, level, span, errs, float(errs[i1]), draws,
                              *ranges))  # fmt: skip
    return out
