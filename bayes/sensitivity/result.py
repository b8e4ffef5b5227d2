"""What the width sweep found: conclusions, coefficients along the grid, the whole result.

The objects hold numbers (read-only arrays, compared by identity); their sentences come
from :mod:`bayes.sensitivity.wording`. :meth:`SweepResult.to_dict` is the JSON of
``bayes sweep`` (``sweep.json``) and :meth:`SweepResult.from_dict` reads it back.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from bayes.arrays import freeze
from bayes.jsonable import json_array, json_range, jsonable
from bayes.sensitivity import wording
from bayes.settings import DECIDE_MCSE

MCSE_STATISTICS = ("mean", "lower", "upper", "p_positive")  # those given a Monte Carlo error
_ERRORS = tuple(f"{key}_mcse" for key in MCSE_STATISTICS)


@dataclass(frozen=True, eq=False)
class Conclusion:
    """One conclusion followed along the width factor.

    Attributes
    ----------
    name : str
        Coefficient.
    kind : {"sign", "threshold"}
    op, value : str, float
        The conclusion is ``beta op value``.
    response : str
        The response's name, for the statement of a sign.
    probability : ndarray, shape (F + 1,)
        Posterior probability of the conclusion at each factor and in the flat-prior
        limit (last; nan when the flat limit is not available).
    stated : float
        The probability at the stated priors.
    narrower, wider : float or None
        Factor below / above 1 where the probability first crosses the level
        (nearest to 1); None when it does not cross on the grid.
    level : float
        The probability the conclusion needs to hold (the sweep's ``conclusion_level``).
    span : (float, float)
        The grid's smallest and largest factor.
    mcse : ndarray, shape (F + 1,) or None
        Monte Carlo standard error of each probability (0 where exact; None: not known,
        a sweep saved before it was kept, read as 0).
    stated_mcse : float
        That of the probability at the stated priors.
    draws : int or None
        The draws behind the probability at the stated priors (sampled sweeps).
    narrower_range, wider_range : (float or None, float or None) or None
        Around each flip factor, the factors where the probability crosses the level plus
        and minus 2 MCSE (:data:`bayes.settings.FLIP_MCSE`); an end None when
        that band is not found on the grid; None when there is no flip (or it is not known).
    """

    name: str
    kind: str
    op: str
    value: float
    response: str
    probability: np.ndarray
    stated: float
    narrower: float | None
    wider: float | None
    level: float
    span: tuple[float, float]
    mcse: np.ndarray | None = None
    stated_mcse: float = 0.0
    draws: int | None = None
    narrower_range: tuple | None = None
    wider_range: tuple | None = None

    def __post_init__(self) -> None:
        freeze(self, "probability", "mcse")

    @property
    def decided(self) -> bool:
        """False while the stated probability lies within ``DECIDE_MCSE`` Monte Carlo standard
        errors of the level (:mod:`bayes.settings`; never when exact): the sweep samples more,
        and a conclusion still that close at the cap on the draws is undecided."""
        return not abs(self.stated - self.level) < DECIDE_MCSE * self.stated_mcse

    @property
    def draws_to_settle(self) -> int | None:
        """About how many draws in all would decide an undecided conclusion, were its
        probability to stay put and its error to shrink as 1 / sqrt(draws); else None."""
        gap = abs(self.stated - self.level)
        if self.decided or self.draws is None or gap == 0:
            return None
        return int(math.ceil(self.draws * (DECIDE_MCSE * self.stated_mcse / gap) ** 2))

    def holds(self, level: float | None = None) -> bool:
        """Whether the conclusion holds at the stated priors (at ``level``, default its own;
        False for an undecided one, which neither holds nor fails: see :attr:`decided`)."""
        if level is None and not self.decided:
            return False
        return self.stated >= (self.level if level is None else level)

    @property
    def statement(self) -> str:
        """In words ("fly_ash lowers strength")."""
        return wording.statement(self.kind, self.name, self.op, self.value, self.response)

    @property
    def sentence(self) -> str:
        """What the sweep concludes about it, with the flip factors."""
        return wording.conclusion_sentence(self)

    @property
    def status(self) -> str:
        return wording.status(self)

    def to_dict(self) -> dict:
        flat = self.probability[-1]
        mcse = np.zeros(len(self.probability)) if self.mcse is None else self.mcse
        return {
            "name": self.name,
            "kind": self.kind,
            "op": self.op,
            "value": self.value,
            "statement": self.statement,
            "probability": json_array(self.probability),
            "probability_mcse": json_array(mcse),
            "at_stated": self.stated,
            "at_stated_mcse": self.stated_mcse,
            "decided": self.decided,
            "holds_at_stated": self.holds() if self.decided else None,
            "draws_at_stated": self.draws,
            "draws_to_settle": self.draws_to_settle,
            "narrower_flip": self.narrower,
            "narrower_flip_range": json_range(self.narrower_range),
            "wider_flip": self.wider,
            "wider_flip_range": json_range(self.wider_range),
            "flat_probability": None if np.isnan(flat) else float(flat),
            "flat_probability_mcse": None if np.isnan(flat) else float(mcse[-1]),
            "holds_flat": None if np.isnan(flat) else bool(flat >= self.level),
            "status": self.status,
            "sentence": self.sentence,
        }


@dataclass(frozen=True, eq=False)
class CoefficientSweep:
    """One coefficient along the sweep (arrays aligned with the factors, flat limit last).

    Attributes
    ----------
    name, prior : str
        Name and the stated prior in words.
    swept : bool
        Whether the sweep widens this coefficient's prior.
    mean, sd, lower, upper, p_positive : ndarray, shape (F + 1,)
        Natural units; nan where not available.
    mode : ndarray, shape (F + 1,) or None
        Posterior modes (sampled sweeps).
    variance_ratio : float or None
        Posterior variance over prior variance at the stated priors.
    prior_share : float or None
        The prior's share of the posterior precision at the stated priors.
    prior_interval : (float, float) or None
        Central interval of the stated prior at the sweep's credible level.
    mean_mcse, lower_mcse, upper_mcse, p_positive_mcse : ndarray, shape (F + 1,) or None
        Monte Carlo standard errors of ``mean``, ``lower``, ``upper`` and ``p_positive``
        (0 where exact; None: a sweep saved before they were kept).
    """

    name: str
    prior: str
    swept: bool
    mean: np.ndarray
    sd: np.ndarray
    lower: np.ndarray
    upper: np.ndarray
    p_positive: np.ndarray
    mode: np.ndarray | None
    variance_ratio: float | None
    prior_share: float | None
    prior_interval: tuple[float, float] | None = None
    mean_mcse: np.ndarray | None = None
    lower_mcse: np.ndarray | None = None
    upper_mcse: np.ndarray | None = None
    p_positive_mcse: np.ndarray | None = None

    def __post_init__(self) -> None:
        freeze(self, "mean", "sd", "lower", "upper", "p_positive", "mode", *_ERRORS)


@dataclass(frozen=True, eq=False)
class SweepResult:
    """Everything the sweep found; :meth:`to_dict` is the JSON of ``bayes sweep``.

    Attributes
    ----------
    response : str
    units : dict
        ``response`` units and predictor units, for labels.
    factors : ndarray, shape (F,)
        The finite width factors (ascending, 1 included); the flat-prior limit follows.
    level : float
        Credible level of the intervals.
    conclusion_level : float
        Probability a conclusion needs to hold.
    method, detail : str
        "exact" or "sampled", and how.
    selection : str
        Which priors were widened, in words.
    coefficients : tuple of CoefficientSweep
    conclusions : tuple of Conclusion
        In the order the sweep drew them: the slopes' signs, then the thresholds.
    conflict, power_scaling : dict
    family_swap : dict or None
    notes : tuple of str
    extra : dict
        Engine details (sampled factors, effective sample sizes).

    Examples
    --------
    >>> import bayes, pandas as pd
    >>> frame = pd.DataFrame({"x": [0.0, 1.0, 2.0, 3.0], "y": [0.1, 0.9, 2.2, 2.8]})
    >>> import elicit
    >>> priors = elicit.parse_priors({"coefficient": [{"name": "x", "center": 0.0, "scale": 1.0}]})
    >>> result = bayes.sweep(bayes.fit(frame, response="y", priors=priors), factors=[0.1, 10.0])
    >>> [c.name for c in result.coefficients]
    ['intercept', 'x']
    >>> len(result.factors)  # 0.1, the stated width 1, and 10
    3
    """

    response: str
    units: dict
    factors: np.ndarray
    level: float
    conclusion_level: float
    method: str
    detail: str
    selection: str
    coefficients: tuple[CoefficientSweep, ...]
    conclusions: tuple[Conclusion, ...]
    conflict: dict
    power_scaling: dict
    family_swap: dict | None
    notes: tuple[str, ...]
    extra: dict

    def __post_init__(self) -> None:
        freeze(self, "factors")

    @property
    def headline(self) -> tuple[str, ...]:
        """Every conclusion's sentence, in order."""
        return tuple(c.sentence for c in self.conclusions)

    @classmethod
    def from_dict(cls, doc: dict) -> SweepResult:
        """The result back from its JSON object (``sweep.json``), as :meth:`to_dict` wrote it.

        Missing numbers (JSON null) come back as nan; conclusions in the order of the
        headline (the order the sweep drew them).
        """

        def arr(values) -> np.ndarray:
            return np.array([np.nan if v is None else v for v in values], dtype=float)

        factors = np.array([f for f in doc["factors"] if f is not None], dtype=float)
        span = (float(factors[0]), float(factors[-1]))
        coefficients, conclusions = [], []

        def optional(values) -> np.ndarray | None:  # absent from sweeps saved before
            return None if values is None else arr(values)

        def pair(values) -> tuple | None:
            return None if values is None else tuple(values)

        for row in doc["coefficients"]:
            interval = row.get("prior_interval")
            coefficients.append(CoefficientSweep(
                row["name"], row["prior"], bool(row["swept"]), arr(row["mean"]), arr(row["sd"]),
                arr(row["lower"]), arr(row["upper"]), arr(row["p_positive"]),
                arr(row["mode"]) if row.get("mode") is not None else None,
                row.get("variance_ratio"), row.get("prior_share"),
                None if interval is None else (float(interval[0]), float(interval[1])),
                *(optional(row.get(f"{key}_mcse")) for key in MCSE_STATISTICS),
            ))  # fmt: skip
            for k in row.get("conclusions", ()):
                conclusions.append((k["sentence"], Conclusion(
                    k["name"], k["kind"], k["op"], float(k["value"]), doc["response"],
                    arr(k["probability"]), float(k["at_stated"]), k["narrower_flip"],
                    k["wider_flip"], doc["conclusion_level"], span,
                    optional(k.get("probability_mcse")), float(k.get("at_stated_mcse") or 0.0),
                    k.get("draws_at_stated"), pair(k.get("narrower_flip_range")),
                    pair(k.get("wider_flip_range")),
                )))  # fmt: skip
        order = {s: i for i, s in reversed(list(enumerate(doc["headline"])))}
        conclusions.sort(key=lambda pair: order.get(pair[0], len(order)))
        return cls(
            doc["response"], dict(doc.get("units") or {}), factors, doc["level"],
            doc["conclusion_level"], doc["method"], doc["detail"], doc["selection"],
            tuple(coefficients), tuple(c for _, c in conclusions), doc["conflict"],
            doc["power_scaling"], doc.get("family_swap"), tuple(doc.get("notes", ())),
            {k: v for k, v in doc.items() if k not in _FIELDS},
        )  # fmt: skip

    def __repr__(self) -> str:
        from bayes.results.display import sweep_repr

        return sweep_repr(self)

    def _repr_html_(self) -> str:
        from bayes.results.display import sweep_html

        return sweep_html(self)

    def to_dict(self) -> dict:
        """The JSON object (``factors`` with the flat-prior limit as None)."""
        coefs = []
        for c in self.coefficients:
            mine = [k for k in self.conclusions if k.name == c.name]
            row = {
                "name": c.name,
                "prior": c.prior,
                "swept": c.swept,
                "mean": json_array(c.mean),
                "sd": json_array(c.sd),
                "lower": json_array(c.lower),
                "upper": json_array(c.upper),
                "p_positive": json_array(c.p_positive),
                "variance_ratio": c.variance_ratio,
                "prior_share": c.prior_share,
                "prior_interval": None if c.prior_interval is None else list(c.prior_interval),
                **{
                    f"{key}_mcse": json_array(getattr(c, f"{key}_mcse"))
                    for key in MCSE_STATISTICS
                    if getattr(c, f"{key}_mcse") is not None
                },
                "conclusions": [k.to_dict() for k in mine],
                "flip_factors": sorted(
                    f for k in mine for f in (k.narrower, k.wider) if f is not None
                ),
            }
            if c.mode is not None:
                row["mode"] = json_array(c.mode)
            coefs.append(row)
        return jsonable({
            "response": self.response,
            "units": self.units,
            "level": self.level,
            "conclusion_level": self.conclusion_level,
            "method": self.method,
            "detail": self.detail,
            "selection": self.selection,
            "factors": [*(float(f) for f in self.factors), None],
            "coefficients": coefs,
            "headline": list(self.headline),
            "conflict": self.conflict,
            "power_scaling": self.power_scaling,
            "family_swap": self.family_swap,
            "notes": list(self.notes),
            **self.extra,
        })  # fmt: skip

    def text(self) -> str:
        """The terminal summary: headline, the sweep at a few factors, checks."""
        return wording.sweep_text(self)


_FIELDS = (
    "response",
    "units",
    "level",
    "conclusion_level",
    "method",
    "detail",
    "selection",
    "factors",
    "coefficients",
    "headline",
    "conflict",
    "power_scaling",
    "family_swap",
    "notes",
)  # the keys of SweepResult.to_dict other than the engine's extras
