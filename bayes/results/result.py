"""The one immutable result of a fit: it knows how to summarise itself."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from bayes.data.design import Design
from bayes.engine.posterior import Posterior
from bayes.problem import DataFactor
from bayes.results.format import fmt, format_table
from bayes.results.summary import coefficient_rows, diagnostics, penalty_rows

CONDITION_WARNING = 30.0  # condition index above which collinearity is strong (common practice)


@dataclass(frozen=True)
class FitResult:
    """A fitted model: data factor, priors, posterior and the summaries computed from them.

    Attributes
    ----------
    response : str
    factor : DataFactor
    priors : elicit.spec.PriorSet
    posterior : Posterior
    level : float
        Credible level of the reported intervals.
    rows : tuple of dict
        The coefficient table (see :func:`bayes.results.summary.coefficient_rows`).
    diagnostics : dict
    penalties : tuple of dict
        Equivalent ridge/lasso penalties in natural units.
    notes : tuple of str
        Plain-language notes and warnings shown under the table.
    data : Design, optional
        The in-memory data (absent for streamed fits).
    provenance : dict
        Data file, its SHA-256, command line, date, versions, seed.
    terms : bayes.data.terms.Terms, optional
        Coding of categorical predictors and derived terms (applied to new rows
        by ``bayes predict``); None when the design columns are data columns.
    """

    response: str
    factor: DataFactor
    priors: object
    posterior: Posterior
    level: float
    rows: tuple[dict, ...]
    diagnostics: dict
    penalties: tuple[dict, ...]
    notes: tuple[str, ...]
    data: Design | None = None
    provenance: dict = field(default_factory=dict)
    inference: object = None
    terms: object | None = None

    @property
    def names(self) -> tuple[str, ...]:
        return self.posterior.names

    def summary(self):
        """The coefficient table as a pandas DataFrame indexed by coefficient name."""
        import pandas as pd

        return pd.DataFrame(list(self.rows)).set_index("name")

    def to_dict(self) -> dict:
        """The JSON object of the command-line contract (plus extra fields)."""
        post = self.posterior
        return {
            "n": self.factor.n,
            "p": self.factor.p,
            "level": self.level,
            "method": post.method,
            "detail": post.detail,
            "response": self.response,
            "mode_kind": post.mode_kind,
            "coefficients": [_jsonable(r) for r in self.rows],
            "diagnostics": _jsonable(self.diagnostics),
            "penalties": [_jsonable(r) for r in self.penalties],
            "noise": {
                "known": post.noise_known,
                "sd_at_mode": post.sigma_mode,
                "median": post.sigma_quantile(0.5),
                "lower": post.sigma_quantile((1 - self.level) / 2),
                "upper": post.sigma_quantile((1 + self.level) / 2),
            },
            "notes": list(self.notes),
            "provenance": _jsonable(self.provenance),
        }

    def text(self, digits: int = 6) -> str:
        """The terminal table with the diagnostics and notes below it."""
        pct = f"{100 * self.level:g}%"
        extra = [c for c in ("r_hat", "ess_bulk", "ess_tail") if c in self.rows[0]]
        headers = ["coefficient", "prior", "mean", "mode", "sd", f"{pct} lower", f"{pct} upper",
                   "P(>0)", "sd/prior sd", *extra]  # fmt: skip
        body = [
            [r["name"], r["prior"], fmt(r["mean"], digits), fmt(r["mode"], digits),
             fmt(r["sd"], 3), fmt(r["lower"], digits), fmt(r["upper"], digits),
             f"{r['p_positive']:.3f}", fmt(r["sd_ratio"], 3),
             *(fmt(r[c], 4) for c in extra)]
            for r in self.rows
        ]  # fmt: skip
        d = self.diagnostics
        lines = [
            f"Posterior for '{self.response}' ({self.posterior.detail}); "
            f"mode column: {self.posterior.mode_kind}.",
            "",
            format_table(headers, body),
            "",
            f"n = {d['n']}, p = {d['p']} predictors + intercept, residual sd = "
            f"{fmt(d['residual_sd'], 4)}, R^2 = {d['r_squared']:.4f}, "
            f"condition number (scaled design) = {fmt(d['condition_number'], 4)}",
        ]
        if self.penalties:
            lines.append("Equivalent penalties (natural units):")
            for r in self.penalties:
                lam = r["lambda"]
                expr = "sigma^2/tau^2" if r["penalty"] == "ridge" else "sigma^2/b"
                lines.append(
                    f"  {r['name']}: {r['penalty']} lambda = {expr} = {fmt(lam, 4)} "
                    f"(sigma = {fmt(r['noise_sd'], 4)}, {r['noise_basis']})"
                )
        lines += [f"Note: {n}" for n in self.notes]
        return "\n".join(lines)


def _jsonable(obj):
    if isinstance(obj, dict):
        return {k: _jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_jsonable(v) for v in obj]
    if isinstance(obj, (np.floating, float)):
        x = float(obj)
        return x if math.isfinite(x) else None
    if isinstance(obj, np.integer):
        return int(obj)
    if isinstance(obj, np.ndarray):
        return _jsonable(obj.tolist())
    return obj


def make_result(
    response: str,
    factor: DataFactor,
    priors,
    posterior: Posterior,
    level: float,
    data: Design | None = None,
    provenance: dict | None = None,
    notes: tuple[str, ...] = (),
    extra_columns: dict[str, list] | None = None,
    inference: object = None,
) -> FitResult:
    """Compute the summaries of a posterior once and freeze them in a :class:`FitResult`.

    ``extra_columns`` adds per-coefficient columns (R-hat, ESS for sampled fits).
    """
    rows = coefficient_rows(posterior, priors, level)
    for key, values in (extra_columns or {}).items():
        for r, v in zip(rows, values, strict=True):
            r[key] = v
    diag = diagnostics(factor, posterior)
    if posterior.noise_known:
        sigma, basis = float(posterior.sigma[0]), "known noise sd"
    else:
        sigma, basis = diag["noise_sd_median"], "posterior median of the noise sd"
    all_notes = list(notes)
    if not priors.coefficients and priors.block is None and priors.noise is None:
        all_notes.insert(
            0,
            "no prior file: flat priors on every coefficient and the Jeffreys prior on the "
            "noise sd (the least-squares limit).",
        )
    cond = diag["condition_number"]
    if cond > CONDITION_WARNING:
        all_notes.append(
            f"the scaled design is ill-conditioned (condition number {fmt(cond, 3)} > "
            f"{CONDITION_WARNING:g}): collinear predictors; coefficients with flat priors are "
            "poorly determined and informative priors weigh heavily."
        )
    dropped = data.dropped if data is not None else (provenance or {}).get("dropped", 0)
    if dropped:
        all_notes.append(f"{dropped} row(s) with missing values dropped.")
    terms = getattr(data, "terms", None)
    if terms is not None:
        all_notes.extend(terms.notes)
    return FitResult(
        response, factor, priors, posterior, level, tuple(rows), diag,
        tuple(penalty_rows(priors, sigma, basis)), tuple(all_notes), data, provenance or {},
        terms=terms, inference=inference,
    )  # fmt: skip
