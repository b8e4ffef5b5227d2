"""The one immutable result of a plan: the chosen runs, what they buy, how likely they settle.

:meth:`PlanResult.to_dict` is the JSON of ``bayes plan --format json`` and of ``plan.json``;
:meth:`PlanResult.from_dict` reads it back (the report's "Next trials" section).
"""

from __future__ import annotations

import html
import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType

#: The repr's HTML stays under this many characters (a notebook shows it inline).
HTML_LIMIT = 20_000


def _jsonable(obj):
    if isinstance(obj, Mapping):
        return {str(k): _jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_jsonable(v) for v in obj]
    if hasattr(obj, "item") and not isinstance(obj, (str, bytes)):
        obj = obj.item()
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    return obj


def _frozen(obj):
    if isinstance(obj, Mapping):
        return MappingProxyType({k: _frozen(v) for k, v in obj.items()})
    if isinstance(obj, list):
        return tuple(_frozen(v) for v in obj)
    return obj


@dataclass(frozen=True)
class PlanResult:
    """A plan of the next runs for a saved fit.

    Attributes
    ----------
    response : str
    response_units : str or None
    level : float
        The decision level a goal must pass, either way.
    criterion : str
        "D" (Bayesian D-optimality) or "c" (c-optimality for ``contrast``).
    contrast : str or None
    search : str
        "exchange" or "enumeration".
    restarts : int
    noise : str
        How the noise sd enters: "known", "quadrature", "conjugate" or "sampled".
    route : str
        How the assurance was computed: "closed form", "noise nodes", "importance weighting".
    columns : tuple of str
        The candidates' columns.
    runs : tuple of mapping
        In order of value: ``run`` (1, 2, ...), ``candidate`` (its row, 1 first), ``values``
        (column -> value), ``gain`` (its rise in the criterion: nats for D), ``extrapolated``.
    candidates, outside : int
        Candidates, and those beyond the data (range or leverage).
    outside_columns : mapping of str -> int
    gain_nats : float
        Expected information gain of the runs about the coefficients (given the noise sd,
        averaged over its posterior), nats.
    coefficients : tuple of mapping
        ``name``, ``sd_today``, ``sd_after`` (natural units), and ``kind`` ("coefficient" or
        "contrast").
    goals : tuple of mapping
        ``label``, ``p_today``, ``assurance``, ``settled_for``, ``settled_against``, ``mcse``,
        ``route``, ``ess``, ``smallest_runs`` (with a target).
    curve : mapping
        ``runs`` (K values) and, per goal label, ``assurance`` and ``mcse`` lists.
    target : float or None
        The ``--assurance`` aimed at.
    plot : mapping
        ``x``, ``y`` (the two predictors drawn), ``candidates``, ``chosen`` ([x, y, count]) and
        ``data`` points.
    notes : tuple of str

    Examples
    --------
    >>> import bayes, pandas as pd
    >>> frame = pd.DataFrame({"x": [-0.5, 0.0, 0.5, 0.2], "y": [0.9, 2.1, 2.9, 2.5]})
    >>> result = bayes.plan(bayes.fit(frame, response="y"),
    ...                     pd.DataFrame({"x": [-1.0, -0.5, 0.0, 0.5, 1.0]}), 2)
    >>> result.criterion, len(result.runs)  # Bayesian D-optimality (no contrast named), K = 2
    ('D', 2)
    """

    response: str
    response_units: str | None
    level: float
    criterion: str
    contrast: str | None
    search: str
    restarts: int
    noise: str
    route: str
    columns: tuple[str, ...]
    runs: tuple
    candidates: int
    outside: int
    outside_columns: Mapping
    gain_nats: float
    coefficients: tuple
    goals: tuple
    curve: Mapping
    target: float | None = None
    plot: Mapping = field(default_factory=dict)
    notes: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        for name in ("runs", "outside_columns", "coefficients", "goals", "curve", "plot"):
            value = getattr(self, name)
            object.__setattr__(self, name, _frozen(list(value) if isinstance(value, tuple)
                                                   else value))  # fmt: skip
        object.__setattr__(self, "columns", tuple(self.columns))
        object.__setattr__(self, "notes", tuple(self.notes))

    @property
    def k(self) -> int:
        """Runs planned."""
        return len(self.runs)

    def to_dict(self) -> dict:
        return {
            "response": self.response, "response_units": self.response_units,
            "level": self.level, "criterion": self.criterion, "contrast": self.contrast,
            "search": self.search, "restarts": self.restarts, "noise": self.noise,
            "route": self.route, "columns": list(self.columns), "runs": _jsonable(self.runs),
            "candidates": self.candidates, "outside": self.outside,
            "outside_columns": _jsonable(self.outside_columns),
            "gain_nats": _jsonable(self.gain_nats),
            "coefficients": _jsonable(self.coefficients), "goals": _jsonable(self.goals),
            "curve": _jsonable(self.curve), "target": self.target,
            "plot": _jsonable(self.plot), "notes": list(self.notes),
        }  # fmt: skip

    @classmethod
    def from_dict(cls, doc: Mapping) -> PlanResult:
        """The plan of :meth:`to_dict` (extra fields, such as the command line, ignored)."""
        names = [f.name for f in cls.__dataclass_fields__.values()]
        kwargs = {n: doc[n] for n in names if n in doc}
        for n in ("columns", "runs", "coefficients", "goals", "notes"):
            kwargs[n] = tuple(kwargs.get(n) or ())
        kwargs["gain_nats"] = float(kwargs["gain_nats"]) if kwargs.get("gain_nats") is not None \
            else math.nan  # fmt: skip
        return cls(**kwargs)

    def frame(self):
        """The runs as a table in the candidates' columns, in order of value (plan.csv)."""
        import pandas as pd

        rows = [{"run": r["run"], **dict(r["values"]), "candidate_row": r["candidate"],
                 "gain": r["gain"], "extrapolated": r["extrapolated"]}
                for r in self.runs]  # fmt: skip
        return pd.DataFrame(rows, columns=["run", *self.columns, "candidate_row", "gain",
                                           "extrapolated"])  # fmt: skip

    def text(self) -> str:
        """The terminal table, with the cautions."""
        from bayes.plan.wording import plan_text

        return plan_text(self)

    def __repr__(self) -> str:
        goals = ", ".join(f"{g['label']}: {g['assurance']:.2f}" for g in self.goals)
        return (f"PlanResult({self.k} runs of {self.candidates} candidates, {self.criterion}-"
                f"optimal, gain {self.gain_nats:.3g} nats" + (f"; assurance {goals}" if goals
                                                               else "") + ")")  # fmt: skip

    def _repr_html_(self) -> str:
        e = html.escape
        head = "".join(f"<th>{e(str(c))}</th>" for c in ("run", *self.columns))
        body, size = [], 0
        for r in self.runs:
            row = "".join(f"<td>{e(str(v))}</td>" for v in (r["run"], *r["values"].values()))
            size += len(row)
            if size > HTML_LIMIT // 2:
                body.append(f"<tr><td colspan='{len(self.columns) + 1}'>... "
                            f"{self.k - len(body)} more runs</td></tr>")  # fmt: skip
                break
            body.append(f"<tr>{row}</tr>")
        goals = "".join(f"<li>{e(g['label'])}: assurance {g['assurance']:.3f}</li>"
                        for g in self.goals[:50])  # fmt: skip
        out = (f"<p>{e(repr(self))}</p><table><tr>{head}</tr>{''.join(body)}</table>"
               f"<ul>{goals}</ul>")  # fmt: skip
        return out[:HTML_LIMIT]
