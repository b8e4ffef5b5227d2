"""The conclusions a plan aims to settle, and the contrasts it reports: read and defaulted.

A goal is ``EXPRESSION < VALUE`` or ``EXPRESSION > VALUE`` (``<=``, ``>=`` read the same for a
continuous posterior), the expression in the fit's coefficients as ``bayes contrast`` reads it
(:func:`bayes.results.expression.parse_linear`). Without goals, a plan aims at every conclusion
the saved sweep found unsettled, or, without a sweep, at the sign of each slope not yet past
the level either way.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from bayes.errors import InputError
from bayes.results.expression import parse_linear

_GOAL = re.compile(r"^(.*?)(<=|>=|<|>)(.*)$", re.S)


@dataclass(frozen=True, eq=False)
class Goal:
    """``a' beta op value`` (natural units).

    Attributes
    ----------
    label : str
        As given ("superplasticizer<0").
    a : ndarray, shape (k,)
    op : {"<", ">"}
    value : float
    """

    label: str
    a: np.ndarray
    op: str
    value: float


def parse_goal(text: str, names, terms=None) -> Goal:
    """The goal ``text`` ("superplasticizer<0", "fly_ash - water_cement > 0").

    Raises
    ------
    InputError
        No comparison, an unreadable value, an expression naming an unknown coefficient.
    """
    m = _GOAL.match(text.strip())
    if not m or not m[1].strip() or not m[3].strip():
        raise InputError(f"--goal: '{text}' is not EXPRESSION<VALUE or EXPRESSION>VALUE "
                         "(e.g. 'superplasticizer<0')")  # fmt: skip
    try:
        value = float(m[3])
    except ValueError:
        raise InputError(f"--goal: '{text}': '{m[3].strip()}' is not a number") from None
    if not np.isfinite(value):
        raise InputError(f"--goal: '{text}': the value must be finite")
    try:
        a, c = parse_linear(m[1], names, terms)
    except InputError as e:
        raise InputError(f"--goal '{text}': {e}") from None
    return Goal(text.strip(), a, m[2][0], value - c)


def parse_contrast(text: str, names, terms=None) -> tuple[np.ndarray, float]:
    """A contrast to report (and, for c-optimality, to plan for): ``a`` and its constant."""
    return parse_linear(text, names, terms)


def default_goals(result, sweep, level: float) -> tuple[Goal, ...]:
    """The goals of a plan given none: the sweep's conclusions not settled either way at
    ``level``, or, without a sweep, each slope's more probable sign when neither sign is past
    ``level``."""
    names = result.names
    goals = []
    if sweep is not None:
        for c in sweep.conclusions:
            if c.name not in names or max(c.stated, 1.0 - c.stated) >= level:
                continue
            a = np.eye(len(names))[names.index(c.name)]
            goals.append(Goal(f"{c.name}{c.op}{c.value:g}", a, c.op[0], float(c.value)))
        return tuple(goals)
    for j, name in enumerate(names):
        if name == "intercept":
            continue
        a = np.eye(len(names))[j]
        below = float(result.posterior.marginal(a).cdf(0.0))
        if max(below, 1.0 - below) < level:
            op = "<" if below >= 0.5 else ">"
            goals.append(Goal(f"{name}{op}0", a, op, 0.0))
    return tuple(goals)
