"""Sensitivity of the posterior to the priors: the width sweep and what it concludes.

:func:`sweep` rescales the scale of every informative prior (or of chosen
coefficients' priors, or of one expert's statements) by factors over a grid,
from narrower than stated to wider, plus the flat-prior limit, and reports
each coefficient's posterior mean and interval along it. From the sweep it draws:

* conclusions that flip: for the sign of every slope (the sign that holds at
  the stated priors) and for user thresholds (``water_cement<-40``), the width
  factor where the posterior probability of the conclusion crosses
  ``conclusion_level``, by root finding on the continuous factor;
* how much the data dominate: each coefficient's posterior-to-prior variance
  ratio and the prior's share of its posterior precision;
* prior-data conflict and power-scaling sensitivity (:mod:`bayes.sensitivity.conflict`);
* the family swap: the same stated ranges read as normal, Laplace and Student-t.

Gaussian priors: the whole grid comes from one generalized eigendecomposition
(:mod:`bayes.engine.widths`), exact at every factor, including the noise integrated
out. When only some priors are widened, or one expert's statements (which are
then pooled again), each factor gets its own decomposition, still exact.
Laplace and Student-t priors: :mod:`bayes.sensitivity.sampled`.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, replace

import numpy as np
from scipy import optimize, special

from bayes.engine.exact import exact_posterior
from bayes.engine.scaled import scaled_prior
from bayes.engine.widths import CoefficientMixtures, WidthPath
from bayes.errors import InputError
from bayes.problem import DataFactor
from bayes.report.sweep_chart import plot_sweep  # noqa: F401  (public: bayes.sensitivity.plot_sweep)
from bayes.results.result import FitResult
from bayes.results.summary import prior_text
from bayes.sensitivity.conflict import power_scaling_exact, prior_data_conflict
from bayes.settings import DEFAULT_SAMPLER, SamplerSettings

DEFAULT_COUNT = 30
DEFAULT_RANGE = (1.0 / 8.0, 8.0)
FAMILIES = ("normal", "laplace", "student_t")

_THRESHOLD = re.compile(r"^\s*(?P<name>[^<>=]+?)\s*(?P<op><=|>=|<|>)\s*(?P<value>\S+)\s*$")


# --------------------------------------------------------------------------- inputs


@dataclass(frozen=True)
class Threshold:
    """A conclusion to test: ``name op value``, e.g. ``water_cement < -40``.

    Attributes
    ----------
    name : str
        Coefficient name.
    op : {"<", ">"}
        ``<=`` and ``>=`` read as ``<`` and ``>`` (the posterior is continuous).
    value : float
        Natural units of the coefficient.
    """

    name: str
    op: str
    value: float

    @classmethod
    def parse(cls, text: str) -> Threshold:
        """Read ``'water_cement<-40'``; :class:`InputError` when malformed."""
        m = _THRESHOLD.match(text)
        if not m:
            raise InputError(
                f"--threshold {text!r}: expected NAME<VALUE or NAME>VALUE, e.g. water_cement<-40"
            )
        try:
            value = float(m["value"])
        except ValueError:
            raise InputError(f"--threshold {text!r}: {m['value']!r} is not a number") from None
        if not math.isfinite(value):
            raise InputError(f"--threshold {text!r}: the value must be finite")
        return cls(m["name"], m["op"][0], value)

    @property
    def text(self) -> str:
        return f"{self.name} {self.op} {self.value:g}"


def default_factors(
    count: int = DEFAULT_COUNT, low: float = DEFAULT_RANGE[0], high: float = DEFAULT_RANGE[1]
) -> np.ndarray:
    """``count`` log-spaced width factors from ``low`` to ``high``, plus 1 (the stated priors).

    Raises
    ------
    InputError
        When the range is not 0 < low < 1 < high or count < 2.
    """
    if count < 2:
        raise InputError(f"--factors must be at least 2 (got {count})")
    if not (0 < low < 1 < high and math.isfinite(high)):
        raise InputError(
            f"the factor range must satisfy 0 < min < 1 < max (got {low:g} to {high:g})"
        )
    return _with_one(np.geomspace(low, high, count))


def _with_one(factors) -> np.ndarray:
    f = np.unique(np.asarray(factors, dtype=float))
    if f.size == 0 or not np.all(np.isfinite(f)) or np.any(f <= 0):
        raise InputError("width factors must be positive and finite")
    if not np.any(f == 1.0):
        f = np.sort(np.append(f, 1.0))
    return f


# --------------------------------------------------------------------------- results


@dataclass(frozen=True)
class Conclusion:
    """One conclusion followed along the width factor.

    Attributes
    ----------
    name : str
        Coefficient.
    kind : {"sign", "threshold"}
    op, value : str, float
        The conclusion is ``beta op value``.
    statement : str
        In words ("fly_ash lowers strength").
    probability : ndarray, shape (F + 1,)
        Posterior probability of the conclusion at each factor and in the flat-prior
        limit (last; nan when the flat limit is not available).
    stated : float
        The probability at the stated priors.
    narrower, wider : float or None
        Factor below / above 1 where the probability first crosses the level
        (nearest to 1); None when it does not cross on the grid.
    sentence : str
    """

    name: str
    kind: str
    op: str
    value: float
    statement: str
    probability: np.ndarray
    stated: float
    narrower: float | None
    wider: float | None
    sentence: str

    def holds(self, level: float) -> bool:
        return self.stated >= level

    def to_dict(self, level: float) -> dict:
        flat = self.probability[-1]
        return {
            "name": self.name,
            "kind": self.kind,
            "op": self.op,
            "value": self.value,
            "statement": self.statement,
            "probability": _json_array(self.probability),
            "at_stated": self.stated,
            "holds_at_stated": self.holds(level),
            "narrower_flip": self.narrower,
            "wider_flip": self.wider,
            "flat_probability": None if np.isnan(flat) else float(flat),
            "holds_flat": None if np.isnan(flat) else bool(flat >= level),
            "status": _status(self, level),
            "sentence": self.sentence,
        }


@dataclass(frozen=True)
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


@dataclass(frozen=True)
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
    headline : tuple of str
    conflict, power_scaling : dict
    family_swap : dict or None
    notes : tuple of str
    extra : dict
        Engine details (sampled factors, effective sample sizes).
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
    headline: tuple[str, ...]
    conflict: dict
    power_scaling: dict
    family_swap: dict | None
    notes: tuple[str, ...]
    extra: dict

    @classmethod
    def from_dict(cls, doc: dict) -> SweepResult:
        """The result back from its JSON object (``sweep.json``), as :meth:`to_dict` wrote it.

        Missing numbers (JSON null) come back as nan; conclusions in the order of their
        coefficients.
        """

        def arr(values) -> np.ndarray:
            return np.array([np.nan if v is None else v for v in values], dtype=float)

        coefficients, conclusions = [], []
        for row in doc["coefficients"]:
            interval = row.get("prior_interval")
            coefficients.append(CoefficientSweep(
                row["name"], row["prior"], bool(row["swept"]), arr(row["mean"]), arr(row["sd"]),
                arr(row["lower"]), arr(row["upper"]), arr(row["p_positive"]),
                arr(row["mode"]) if row.get("mode") is not None else None,
                row.get("variance_ratio"), row.get("prior_share"),
                None if interval is None else (float(interval[0]), float(interval[1])),
            ))  # fmt: skip
            for k in row.get("conclusions", ()):
                conclusions.append(Conclusion(
                    k["name"], k["kind"], k["op"], float(k["value"]), k["statement"],
                    arr(k["probability"]), float(k["at_stated"]), k["narrower_flip"],
                    k["wider_flip"], k["sentence"],
                ))  # fmt: skip
        own = set(_FIELDS) - {"coefficients"}
        return cls(
            doc["response"], dict(doc.get("units") or {}),
            np.array([f for f in doc["factors"] if f is not None], dtype=float), doc["level"],
            doc["conclusion_level"], doc["method"], doc["detail"], doc["selection"],
            tuple(coefficients), tuple(conclusions), tuple(doc["headline"]), doc["conflict"],
            doc["power_scaling"], doc.get("family_swap"), tuple(doc.get("notes", ())),
            {k: v for k, v in doc.items() if k not in own and k != "coefficients"},
        )  # fmt: skip

    def to_dict(self) -> dict:
        """The JSON object (``factors`` with the flat-prior limit as None)."""
        coefs = []
        for c in self.coefficients:
            mine = [k for k in self.conclusions if k.name == c.name]
            row = {
                "name": c.name,
                "prior": c.prior,
                "swept": c.swept,
                "mean": _json_array(c.mean),
                "sd": _json_array(c.sd),
                "lower": _json_array(c.lower),
                "upper": _json_array(c.upper),
                "p_positive": _json_array(c.p_positive),
                "variance_ratio": c.variance_ratio,
                "prior_share": c.prior_share,
                "prior_interval": None if c.prior_interval is None else list(c.prior_interval),
                "conclusions": [k.to_dict(self.conclusion_level) for k in mine],
                "flip_factors": sorted(
                    f for k in mine for f in (k.narrower, k.wider) if f is not None
                ),
            }
            if c.mode is not None:
                row["mode"] = _json_array(c.mode)
            coefs.append(row)
        return _jsonable({
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
        from bayes.results.format import fmt, format_table

        pct = f"{100 * self.level:g}%"
        lines = [f"Sensitivity of '{self.response}' to the prior widths ({self.selection}; "
                 f"{self.detail}).", "", "Conclusions:"]  # fmt: skip
        lines += [f"  {h}" for h in self.headline] or ["  (none)"]
        picks = sorted({0, int(np.argmin(np.abs(np.log(self.factors)))), len(self.factors) - 1})
        headers = ["coefficient", *(f"x{self.factors[i]:.3g}" for i in picks), "flat"]
        body = []
        for c in self.coefficients:
            cells = [c.name]
            for i in [*picks, len(self.factors)]:
                cells.append(
                    "-"
                    if np.isnan(c.mean[i])
                    else f"{fmt(c.mean[i], 4)} [{fmt(c.lower[i], 3)}, {fmt(c.upper[i], 3)}]"
                )
            body.append(cells)  # fmt: skip
        lines += ["", f"Posterior mean [{pct} interval] at prior width factors "
                  "(x1 = as stated):", format_table(headers, body), ""]  # fmt: skip
        lines.append(self.conflict["joint"]["sentence"])
        lines += [r["sentence"] for r in self.conflict["coefficients"]]
        lines += ["", "Power-scaling sensitivity (cut-off "
                  f"{self.power_scaling['threshold']:g}):"]  # fmt: skip
        lines += [f"  {r['sentence']}" for r in self.power_scaling["coefficients"]]
        if self.family_swap:
            fams = self.family_swap["families"]
            body = [[r["name"], *(f"{fmt(r[f]['mean'], 4)} [{fmt(r[f]['lower'], 3)}, "
                                  f"{fmt(r[f]['upper'], 3)}]" for f in fams)]
                    for r in self.family_swap["coefficients"]]  # fmt: skip
            lines += ["", "Family swap (the same stated ranges read as each family):",
                      format_table(["coefficient", *fams], body)]  # fmt: skip
        lines += [f"Note: {n}" for n in self.notes]
        return "\n".join(lines)


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


def _json_array(a: np.ndarray) -> list:
    return [None if not np.isfinite(x) else float(x) for x in np.asarray(a, dtype=float)]


def _jsonable(obj):
    if isinstance(obj, dict):
        return {k: _jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_jsonable(v) for v in obj]
    if isinstance(obj, (float, np.floating)):
        return float(obj) if math.isfinite(obj) else None
    if isinstance(obj, np.integer):
        return int(obj)
    if isinstance(obj, np.bool_):
        return bool(obj)
    if isinstance(obj, np.ndarray):
        return _jsonable(obj.tolist())
    return obj


# --------------------------------------------------------------------------- which priors


def _informative(priors) -> set[str]:
    cols = {c.column for c in priors.coefficients if c.family != "flat"}
    if priors.block is not None:
        cols |= set(priors.block.names)
    return cols


def _check_selection(priors, names, columns, expert) -> tuple[set[str], str]:
    informative = _informative(priors)
    if not informative:
        raise InputError(
            "every coefficient prior is flat: there is nothing to widen (give a prior file "
            "with informative priors)"
        )
    if columns is not None:
        for c in columns:
            if c not in names:
                raise InputError(f"--coefficient {c!r}: no such coefficient "
                                 f"(coefficients: {', '.join(names)})")  # fmt: skip
            if c not in informative:
                raise InputError(f"--coefficient {c!r}: its prior is flat; nothing to widen")
    if expert is not None:
        experts = sorted({s.expert for c in priors.coefficients for s in c.statements if s.expert})
        if expert not in experts:
            raise InputError(f"--expert {expert!r}: no statement by this expert "
                             f"(experts: {', '.join(experts) or 'none named'})")  # fmt: skip
    swept = set(informative if columns is None else columns)
    if expert is not None:
        swept &= {c.column for c in priors.coefficients
                  if any(s.expert == expert for s in c.statements)}  # fmt: skip
    words = (
        "every informative prior"
        if columns is None
        else ("the prior" + ("s" if len(columns) > 1 else "") + " of " + ", ".join(columns))
    )
    if expert is not None:
        words += f", statements by {expert}"
    return swept, words


def flat_limit(priors, columns=None, expert=None):
    """The prior set in the limit of infinitely wide swept priors.

    The swept priors become flat. A correlated block widened on some of its
    coefficients keeps, on the others, the limit of its density: the Gaussian with
    the conditional covariance given the widened ones. When one expert's statements
    are widened, a log-pooled coefficient tends to the log pool of the other
    experts' statements (exactly so for normal pools); a linear pool widens without bound
    and becomes flat.
    """
    from elicit.conditional import CorrelatedBlock
    from elicit.pool import pool

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


# --------------------------------------------------------------------------- Gaussian engine


class _GaussianEngine:
    """Exact marginals at any factor: one decomposition, or one per factor for subsets."""

    method = "exact"

    def __init__(self, factor: DataFactor, priors, columns, expert, swept: set[str]):
        self.factor, self.priors = factor, priors
        self.columns, self.expert = columns, expert
        self.stated = WidthPath.build(factor, scaled_prior(factor, priors))
        self.one = expert is None and swept == _informative(priors)
        self.detail = (
            "exact; every width from one generalized eigendecomposition"
            if self.one
            else "exact; one decomposition per width"
        )
        if not self.stated.known:
            self.detail += ", noise sd integrated out by quadrature"

    def at(self, f: float) -> CoefficientMixtures:
        if self.one:
            return CoefficientMixtures.from_path(self.stated, 1.0 / f**2)
        if f == 1.0:
            return CoefficientMixtures.from_path(self.stated, 1.0)
        rescaled = self.priors.rescaled(f, columns=self.columns, expert=self.expert)
        path = WidthPath.build(self.factor, scaled_prior(self.factor, rescaled))
        return CoefficientMixtures.from_path(path, 1.0)

    def flat(self) -> tuple[CoefficientMixtures | None, str | None]:
        limit = flat_limit(self.priors, self.columns, self.expert)
        try:
            post = exact_posterior(self.factor, scaled_prior(self.factor, limit))
        except InputError as e:
            return None, f"no flat-prior limit: {e}"
        return CoefficientMixtures.from_posterior(post), None

    def checks(self, priors) -> tuple[dict, dict]:
        """Prior-data conflict and power-scaling sensitivity at the stated priors."""
        return prior_data_conflict(self.stated, priors), power_scaling_exact(self.stated)

    def dominance(self, names, priors) -> tuple[list, list]:
        """Variance ratio and prior share at the stated priors, per coefficient."""
        weights, sigma = self.stated.noise_mixture(1.0)
        share = weights @ self.stated.prior_share(sigma, 1.0)
        sd = CoefficientMixtures.from_path(self.stated, 1.0).sd
        return _variance_ratios(names, priors, sd), [
            float(s) if n in _informative(priors) else None
            for n, s in zip(names, share, strict=True)
        ]


def _prior_var(priors, name: str) -> float | None:
    cp = priors.get(name)
    if cp is not None and cp.family != "flat":
        return float(cp.sd) ** 2
    if priors.block is not None and name in priors.block.names:
        i = priors.block.names.index(name)
        return float(priors.block.cov[i, i])
    return None


def _prior_interval(priors, name: str, level: float) -> tuple[float, float] | None:
    cp = priors.get(name)
    if cp is not None and cp.family == "normal":  # closed form: freezing a scipy law costs 1 ms
        return _normal_interval(cp.center, cp.scale, level)
    if cp is not None and cp.family != "flat":
        lo, hi = cp.dist().interval(level)
        return float(lo), float(hi)
    if priors.block is not None and name in priors.block.names:
        i = priors.block.names.index(name)
        return _normal_interval(priors.block.mean[i], np.sqrt(priors.block.cov[i, i]), level)
    return None


def _normal_interval(center: float, sd: float, level: float) -> tuple[float, float]:
    half = float(sd * special.ndtri((1 + level) / 2))
    return float(center) - half, float(center) + half


def _variance_ratios(names, priors, sd: np.ndarray) -> list:
    out = []
    for n, s in zip(names, sd, strict=True):
        pv = _prior_var(priors, n)
        out.append(float(s**2 / pv) if pv and math.isfinite(pv) else None)
    return out


# --------------------------------------------------------------------------- conclusions


def _times(x: float) -> str:
    return f"{x:.0f}" if x >= 10 else f"{x:.2g}"


def _status(c: Conclusion, level: float) -> str:
    if not c.holds(level):
        return "does not hold at the stated priors"
    if c.narrower is None and c.wider is None:
        return "holds over the whole grid"
    return "flips"


def _prob(mix, j: int, op: str, value: float) -> float:
    x = np.full(mix.k, value)
    return float(mix.cdf(x)[j] if op == "<" else mix.sf(x)[j])


def _crossing(engine, j, op, value, level, f_in, f_out) -> float:
    """Root in log factor of P(conclusion) - level between two grid factors."""

    def g(lf: float) -> float:
        return _prob(engine.at(math.exp(lf)), j, op, value) - level

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


def _sentence(c: Conclusion, level: float, factors: np.ndarray) -> str:
    lo, hi = factors[0], factors[-1]
    flat = c.probability[-1]
    head = f"The conclusion that {c.statement}"
    if c.holds(level):
        if c.narrower is None and c.wider is None:
            s = (f"{head} holds over the whole grid (priors {_times(1 / lo)} times narrower "
                 f"to {_times(hi)} times wider than stated)")  # fmt: skip
            if np.isnan(flat):
                return s + "."
            if flat >= level:
                return s + " and with flat priors."
            return s + (f" but not with flat priors (probability {flat:.3f}): it rests on the "
                        "experts' priors.")  # fmt: skip
        if c.wider is None:
            s = f"{head} holds unless the priors are made {_times(1 / c.narrower)} times narrower"
            s += " than stated"
            if not np.isnan(flat) and flat < level:
                s += f" (and it does not hold with flat priors: probability {flat:.3f})"
            return s + "."
        if c.narrower is None:
            return (f"{head} holds unless the priors are made {_times(c.wider)} times wider "
                    "than stated.")  # fmt: skip
        return (f"{head} holds only while the priors stay between {_times(1 / c.narrower)} "
                f"times narrower and {_times(c.wider)} times wider than stated.")  # fmt: skip
    if c.kind == "sign":
        s = (f"The sign of {c.name} is not settled: the probability that {c.statement} is "
             f"{c.stated:.3f} at the stated priors (below {level:g})")  # fmt: skip
    else:
        s = (f"{head} does not hold at the stated priors (posterior probability "
             f"{c.stated:.3f} < {level:g})")  # fmt: skip
    ways = []
    if c.narrower is not None:
        ways.append(f"with priors {_times(1 / c.narrower)} times narrower")
    if c.wider is not None:
        ways.append(f"with priors {_times(c.wider)} times wider")
    elif not np.isnan(flat) and flat >= level:
        ways.append("with flat priors")
    if ways:
        return s + "; it would hold " + " or ".join(ways) + "."
    return (
        s + ", and no width on the grid settles it."
        if c.kind == "sign"
        else (s + " and holds at no width on the grid.")
    )


def _conclusions(engine, mixes, flat_mix, p_positive, names, response, thresholds, factors,
                 level):  # fmt: skip
    """Sign conclusions for every slope, then the thresholds; ``p_positive`` is (F + 1, k)."""
    i1 = int(np.flatnonzero(factors == 1.0)[0])
    targets = []
    for j, name in enumerate(names):
        if name == "intercept":
            continue
        if p_positive[i1, j] >= 0.5:
            targets.append((j, "sign", ">", 0.0, f"{name} raises {response}", p_positive[:, j]))
        else:
            targets.append((j, "sign", "<", 0.0, f"{name} lowers {response}",
                            1.0 - p_positive[:, j]))  # fmt: skip
    for t in thresholds:
        j = names.index(t.name)
        probs = [math.nan if m is None else _prob(m, j, t.op, t.value) for m in [*mixes, flat_mix]]
        targets.append((j, "threshold", t.op, t.value, t.text, np.array(probs)))
    out = []
    for j, kind, op, value, statement, probs in targets:
        narrower, wider = _follow(engine, factors, probs[:-1], j, op, value, level)
        c = Conclusion(names[j], kind, op, value, statement, probs, float(probs[i1]), narrower,
                       wider, "")  # fmt: skip
        out.append(replace(c, sentence=_sentence(c, level, factors)))
    return out


# --------------------------------------------------------------------------- the sweep


def sweep(
    fit: FitResult | DataFactor,
    priors=None,
    response: str | None = None,
    *,
    factors=None,
    columns=None,
    expert: str | None = None,
    thresholds=(),
    level: float | None = None,
    conclusion_level: float = 0.95,
    family_swap: bool = True,
    sampler: SamplerSettings = DEFAULT_SAMPLER,
) -> SweepResult:
    """Sweep the prior widths and say what depends on them.

    Parameters
    ----------
    fit : FitResult or DataFactor
        A fit (its data factor, priors, response and level are used) or a data factor.
    priors : PriorSet or path, optional
        Required with a DataFactor; overrides the fit's priors otherwise.
    response : str, optional
        Response name for the sentences.
    factors : array_like, optional
        Width factors (> 0); 1 is added when absent. Default :func:`default_factors`.
    columns : sequence of str, optional
        Widen only these coefficients' priors (default every informative prior).
    expert : str, optional
        Widen only this expert's statements (each coefficient is pooled again).
    thresholds : sequence of Threshold or str
        Extra conclusions, e.g. ``"water_cement<-40"``.
    level : float, optional
        Credible level of the intervals (default the fit's, else 0.95).
    conclusion_level : float
        Posterior probability at which a conclusion holds.
    family_swap : bool
        Also read the stated ranges as normal, Laplace and Student-t priors (the
        non-normal readings are sampled).
    chains, draws, warmup, seed : int
        Sampler settings for sampled parts (non-Gaussian priors, the family swap).

    Returns
    -------
    SweepResult
    """
    from bayes.api import load_priors

    if isinstance(fit, DataFactor):
        factor = fit
        if priors is None:
            raise InputError("sweep needs priors: there is nothing to widen without them")
        level = 0.95 if level is None else level
    else:
        factor = fit.factor
        priors = fit.priors if priors is None else priors
        response = response or fit.response
        level = fit.level if level is None else level
    priors = load_priors(priors)
    response = response or priors.response or "the response"
    for name, value in (("--level", level), ("--conclusion-level", conclusion_level)):
        if not 0.0 < value < 1.0:
            raise InputError(f"{name} must lie strictly between 0 and 1 (got {value})")
    names = ("intercept", *factor.names)
    columns = None if columns is None or len(columns) == 0 else list(columns)
    swept, selection = _check_selection(priors, names, columns, expert)
    thresholds = [t if isinstance(t, Threshold) else Threshold.parse(t) for t in thresholds]
    for t in thresholds:
        if t.name not in names:
            raise InputError(f"--threshold {t.text!r}: no coefficient named {t.name!r} "
                             f"(coefficients: {', '.join(names)})")  # fmt: skip
    grid = default_factors() if factors is None else _with_one(factors)
    scaled = scaled_prior(factor, priors)
    if scaled.gaussian_only:
        engine = _GaussianEngine(factor, priors, columns, expert, swept)
    else:
        from bayes.sensitivity.sampled import SampledEngine

        engine = SampledEngine(factor, priors, columns, expert, grid, sampler)
    mixes = [engine.at(float(f)) for f in grid]
    extra = dict(getattr(engine, "extra", {}))
    if engine.method == "sampled":
        from bayes.sensitivity.sampled import MIN_ESS

        extra["ess"] = [m.ess for m in mixes]
        mixes = [m if m.ess >= MIN_ESS else None for m in mixes]
    flat_mix, flat_note = engine.flat()
    notes = [] if flat_note is None else [flat_note]
    notes += getattr(engine, "notes", [])
    a = (1 - level) / 2
    rows = []
    ratios, shares = engine.dominance(names, priors)
    modes = getattr(engine, "modes", None)
    every = [*mixes, flat_mix]
    nan = np.full(len(names), np.nan)
    table = {  # statistic -> (F + 1, k): each computed once per factor for every coefficient
        key: np.array([nan if m is None else fn(m) for m in every])
        for key, fn in (
            ("mean", lambda m: m.mean),
            ("sd", lambda m: m.sd),
            ("lower", lambda m: m.quantile(a)),
            ("upper", lambda m: m.quantile(1 - a)),
            ("p_positive", lambda m: m.sf(np.zeros(len(names)))),
        )
    }
    for j, name in enumerate(names):
        rows.append(CoefficientSweep(
            name, prior_text(priors.get(name)) if name not in _block(priors) else "correlated",
            name in swept, *(table[key][:, j] for key in ("mean", "sd", "lower", "upper",
                                                          "p_positive")),
            None if modes is None else modes[:, j], ratios[j], shares[j],
            _prior_interval(priors, name, level),
        ))  # fmt: skip
    conclusions = _conclusions(engine, mixes, flat_mix, table["p_positive"], names, response,
                               thresholds, grid, conclusion_level)  # fmt: skip
    conflict, power = engine.checks(priors)
    swap = _family_swap(factor, priors, level, sampler) if family_swap else None
    units = {"response": priors.response_units, **dict(priors.units)}
    return SweepResult(
        response, units, grid, level, conclusion_level, engine.method, engine.detail, selection,
        tuple(rows), tuple(conclusions), tuple(c.sentence for c in conclusions), conflict, power,
        swap, tuple(notes), extra,
    )  # fmt: skip


def _block(priors) -> tuple[str, ...]:
    return priors.block.names if priors.block is not None else ()


# --------------------------------------------------------------------------- family swap


def _family_swap(factor, priors, level, sampler: SamplerSettings) -> dict | None:
    """The stated ranges read as each family: posterior mean and interval per coefficient."""
    if not any(c.family in FAMILIES for c in priors.coefficients):
        return None
    from bayes.sensitivity.sampled import WeightedDraws

    names = ("intercept", *factor.names)
    a = (1 - level) / 2
    per = {}
    for fam in FAMILIES:
        read = priors.as_family(fam)
        sp = scaled_prior(factor, read)
        if sp.gaussian_only:
            mix = CoefficientMixtures.from_posterior(exact_posterior(factor, sp))
            how = "exact"
        else:
            mix = WeightedDraws.sample(factor, sp, sampler)
            how = f"Gibbs sampling ({sampler.chains} chains of {sampler.draws} draws)"
        per[fam] = (read, mix, how)
    rows = []
    for j, name in enumerate(names):
        row = {"name": name}
        for fam, (read, mix, _) in per.items():
            cp = read.get(name)
            row[fam] = {
                "prior": prior_text(cp),
                "mean": float(mix.mean[j]),
                "lower": float(mix.quantile(a)[j]),
                "upper": float(mix.quantile(1 - a)[j]),
            }
        rows.append(row)  # fmt: skip
    return {"families": list(FAMILIES), "method": {f: v[2] for f, v in per.items()},
            "coefficients": rows}  # fmt: skip


# --------------------------------------------------------------------------- files


def sweep_design(design, priors, **options) -> SweepResult:
    """:func:`sweep` for a validated :class:`bayes.data.design.Design` (what ``bayes sweep`` runs).

    Parameters
    ----------
    design : Design
    priors : PriorSet or path
    **options
        Passed to :func:`sweep`.
    """
    from bayes.data.factor import factor_from_arrays

    if priors is None:
        raise InputError("bayes sweep needs --priors: there is nothing to widen without them")
    factor = factor_from_arrays(design.X, design.y, design.names)
    return sweep(factor, priors, design.response, **options)
