"""The one immutable result of a fit: it stores the primitives and derives its summaries.

Like a statistics package's results object, :class:`FitResult` keeps only what the fit made
(data factor, priors, posterior, credible level, data, provenance) and derives the coefficient
table, diagnostics, equivalent penalties and notes from them on first use, so nothing can go
stale: ``dataclasses.replace(result, level=0.5)`` has 50% intervals.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from functools import cached_property
from types import MappingProxyType

import numpy as np

from bayes.data.design import Design
from bayes.engine.posterior import Posterior
from bayes.jsonable import jsonable
from bayes.problem import DataFactor
from bayes.results import notes as wording
from bayes.results.format import fmt, format_table
from bayes.results.summary import (
    coefficient_rows,
    diagnostics,
    every_prior_flat,
    least_squares_se,
    penalty_rows,
)

CONVERGENCE_COLUMNS = ("r_hat", "ess_bulk", "ess_tail")
#: Monte Carlo standard errors in a sampled fit's rows (arviz), after the convergence columns.
MCSE_COLUMNS = ("mcse_mean", "mcse_sd", "mcse_lower", "mcse_upper", "mcse_p_positive")


def _frozen(row: Mapping) -> Mapping:
    return MappingProxyType(dict(row))


@dataclass(frozen=True, eq=False)
class FitResult:
    """A fitted model: data factor, priors and posterior, and the summaries derived from them.

    Attributes
    ----------
    response : str
    factor : DataFactor
    priors : elicit.spec.PriorSet
    posterior : Posterior
    level : float
        Credible level of the reported intervals.
    data : Design, optional
        The in-memory data (absent for streamed fits).
    provenance : dict
        Data file, its SHA-256, command line, date, versions, seed.
    inference : arviz.InferenceData, optional
        The draws of a sampled fit, labelled.
    terms : bayes.data.terms.Terms, optional
        Coding of categorical predictors and derived terms (applied to new rows by
        ``bayes predict``); None when the design columns are data columns.

    Derived (read-only, computed on first use): ``rows`` (the coefficient table),
    ``diagnostics``, ``penalties`` (equivalent ridge/lasso penalties in natural units),
    ``notes`` (plain-language notes and warnings) and, for sampled fits, ``convergence``.

    Examples
    --------
    >>> import bayes, pandas as pd
    >>> frame = pd.DataFrame({"x": [0.0, 1.0, 2.0, 3.0], "y": [0.1, 0.9, 2.2, 2.8]})
    >>> result = bayes.fit(frame, response="y")
    >>> result.posterior.names
    ('intercept', 'x')
    >>> round(float(result.summary().loc["intercept", "mean"]), 2)  # 1.5 - 0.94 * 1.5
    0.09
    """

    response: str
    factor: DataFactor
    priors: object
    posterior: Posterior
    level: float
    data: Design | None = None
    provenance: Mapping = field(default_factory=dict)
    inference: object = None
    terms: object | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "provenance", MappingProxyType(dict(self.provenance or {})))

    @property
    def names(self) -> tuple[str, ...]:
        return self.posterior.names

    @property
    def sampled(self) -> bool:
        return self.posterior.method == "sampled"

    @cached_property
    def convergence(self):
        """R-hat and bulk/tail ESS per coefficient (and sigma) of a sampled fit, else None."""
        if not self.sampled:
            return None
        from bayes.engine.diagnostics import summarize_draws

        post = self.posterior
        return summarize_draws(post.draws, post.sigma_draws, self.names)

    @property
    def flat(self) -> bool:
        """True when every coefficient has a flat prior (the least-squares limit)."""
        return every_prior_flat(self.priors, self.names)

    @cached_property
    def rows(self) -> tuple[Mapping, ...]:
        """The coefficient table: one read-only mapping per coefficient (intercept first).

        ``se`` is the classical least-squares standard error in flat-prior fits (None
        otherwise); sampled fits add R-hat, the effective sample sizes and the Monte Carlo
        standard errors of the mean, sd, interval ends and P(> 0) (:data:`MCSE_COLUMNS`).
        """
        se = least_squares_se(self.factor) if self.flat else None
        rows = coefficient_rows(self.posterior, self.priors, self.level, se)
        if self.convergence is not None:
            from bayes.engine.diagnostics import monte_carlo_errors

            mcse = monte_carlo_errors(self.posterior.draws, self.level)
            infinite = self._sampled_infinite[0]
            for j, row in enumerate(rows):
                if infinite is not None and infinite[j]:  # the draws' spread is finite, the
                    row["sd"] = math.inf  # posterior's is not (the noise tail's check)
                    row["sd_ratio"] = None if row["sd_ratio"] is None else math.inf
                for key in CONVERGENCE_COLUMNS:
                    row[key] = float(self.convergence[key][j])
                for key in MCSE_COLUMNS:
                    row[key] = float(mcse[key][j])
        return tuple(_frozen(r) for r in rows)

    @cached_property
    def diagnostics(self) -> Mapping:
        """n, p, rss and residual sd at the posterior mean, R^2, condition number, noise sd."""
        return _frozen({**diagnostics(self.factor, self.posterior), **self._crossings})

    @cached_property
    def _crossings(self) -> dict:
        """A sampled fit's checks that its chains cross between the noise sd's modes and the
        mixture components, as diagnostics fields (:mod:`bayes.engine.crossings`)."""
        if not self.sampled:
            return {}
        from bayes.engine.crossings import crossing_diagnostics

        return crossing_diagnostics(self.posterior)

    @cached_property
    def noise_basis(self) -> tuple[float, str]:
        """The noise sd the equivalent penalties use, and what it is: that of the reported mode.

        At that sd the mode column is the penalised least-squares solution with the printed
        lambda (:func:`bayes.results.summary.penalty_rows`).
        """
        if self.posterior.noise_known:
            return self.posterior.sigma_mode, "known noise sd"
        return self.posterior.sigma_mode, "noise sd at the reported mode"

    @cached_property
    def penalties(self) -> tuple[Mapping, ...]:
        """Equivalent ridge (sigma^2/tau^2) and lasso (sigma^2/b) penalties, natural units.

        ``lambda`` at the noise sd of the reported mode; ``lambda_at_median_noise_sd`` at
        the posterior median of the noise sd.
        """
        sigma, basis = self.noise_basis
        median = self.diagnostics["noise_sd_median"]
        return tuple(_frozen(r) for r in penalty_rows(self.priors, sigma, basis, median))

    @cached_property
    def notes(self) -> tuple[str, ...]:
        """Plain-language notes and warnings shown under the table, in a fixed order."""
        out: list[str | None] = []
        p = self.priors
        if not p.coefficients and p.block is None and p.noise is None:
            out.append(wording.FLAT_PRIORS)
        if self.convergence is not None:
            c = self.convergence
            k = len(self.names)  # sigma, when sampled, is not part of the table's notes
            out += wording.convergence(self.names, c.r_hat[:k], c.ess_bulk[:k], c.ess_tail[:k])
            out.append(wording.lasso_zeros(*self._lasso_zeros()))
            out.append(wording.monte_carlo(self.level, *self._largest_mcse()))
        if self.rows[0]["se"] is not None:
            out.append(wording.least_squares_columns(self._jeffreys_df()))
        out.append(wording.infinite_variance(*self._infinite_sd()))
        out.append(wording.ill_conditioned(self.diagnostics["condition_number"]))
        if not self.sampled or self.posterior.noise_modes_exact:
            out.append(wording.noise_modes(getattr(self.posterior, "noise_modes", ())))
        if self.diagnostics.get("noise_modes_not_crossed"):
            out.append(wording.noise_modes_not_crossed(self.diagnostics["noise_mode_check"]))
        out.append(wording.labels_not_switched(getattr(self.posterior, "label_switching", ())))
        out += wording.pool_misfit([(c.column, c.pool_error) for c in p.coefficients])
        dropped = self.data.dropped if self.data is not None else self.provenance.get("dropped", 0)
        out.append(wording.dropped_rows(int(dropped or 0)))
        if self.data is not None:  # the row label and the columns not used
            out.extend(self.data.notes)
        if self.terms is not None:
            out.extend(self.terms.notes)
        return tuple(n for n in out if n)

    def _largest_mcse(self) -> tuple[float, float]:
        """The largest MCSE of P(> 0), and of an interval end in posterior sds, over the rows."""
        p = max(r["mcse_p_positive"] for r in self.rows)
        ends = max(max(r["mcse_lower"], r["mcse_upper"]) / r["sd"] for r in self.rows
                   if r["sd"] > 0)  # fmt: skip
        return p, ends

    @cached_property
    def _sampled_infinite(self) -> tuple[np.ndarray | None, float]:
        """A sampled fit's coefficients with infinite posterior variance, and the noise
        tail's df (:func:`bayes.engine.diagnostics.infinite_sampled`)."""
        from bayes.engine.diagnostics import infinite_sampled, noise_tail_df
        from bayes.engine.mixture_prior import stand_in_prior

        prior = stand_in_prior(self.factor, self.priors)
        return infinite_sampled(self.factor, prior), noise_tail_df(self.factor, prior)

    def _infinite_sd(self) -> tuple[list[str], float]:
        """The coefficients whose exact posterior sd is infinite, and the noise tail's df."""
        post = self.posterior
        df = getattr(post, "df", np.inf)
        df = df if np.isfinite(df) else getattr(post, "tail_df", np.inf)
        df = self._sampled_infinite[1] if self.sampled else df
        return [r["name"] for r in self.rows if r["sd"] == math.inf], float(df)

    def _jeffreys_df(self) -> float | None:
        """n - k when the noise has the Jeffreys prior (sd = se sqrt(df / (df - 2))), else None."""
        noise = self.priors.noise
        return None if noise is not None else float(self.factor.n - len(self.names))

    def _lasso_zeros(self) -> tuple[int, int]:
        """(modes exactly at their Laplace prior's location, Laplace-prior coefficients)."""
        at, count = 0, 0
        for j, name in enumerate(self.names):
            cp = self.priors.get(name)
            if cp is None or cp.family != "laplace":
                continue
            count += 1
            # The mode sits exactly on the location in the scaled problem; back in natural
            # units the division by the column scale can move it by an ulp or two.
            mode, centre = float(self.posterior.mode[j]), float(cp.center)
            at += abs(mode - centre) <= 8 * np.finfo(float).eps * max(abs(centre), 1e-300)
        return at, count

    def units(self) -> dict[str, str]:
        """Units of each coefficient in words ("MPa per ratio"), from the prior file's units."""
        from elicit.units import term_units

        given = dict(getattr(self.priors, "units", {}) or {})
        response = getattr(self.priors, "response_units", None)
        return {name: term_units(name, given, response) for name in self.names}

    def summary(self):
        """The coefficient table as a pandas DataFrame indexed by coefficient name.

        Columns: the coefficient's ``units``, then those of :attr:`rows` (for sampled
        fits with the Monte Carlo standard errors of :data:`MCSE_COLUMNS`, from arviz).

        Examples
        --------
        >>> import bayes, pandas as pd
        >>> frame = pd.DataFrame({"x": [0.0, 1.0, 2.0, 3.0], "y": [0.1, 0.9, 2.2, 2.8]})
        >>> table = bayes.fit(frame, response="y").summary()  # least squares: slope 4.7 / 5
        >>> list(table.index), round(float(table.loc["x", "mean"]), 2)
        (['intercept', 'x'], 0.94)
        """
        import pandas as pd

        table = pd.DataFrame([dict(r) for r in self.rows]).set_index("name")
        table.insert(0, "units", [self.units()[n] for n in table.index])
        table["se"] = table["se"].astype(float)  # NaN where not a flat-prior fit
        return table

    def sample(self, n: int = 4000, *, seed: int = 0):
        """Draws from the posterior as a DataFrame: one column per coefficient, then "sigma".

        Exact fits give iid draws from the exact posterior (see :mod:`bayes.results.draws`);
        sampled fits give ``n`` of their chains' draws, evenly spaced.

        Examples
        --------
        >>> import bayes, pandas as pd
        >>> frame = pd.DataFrame({"x": [0.0, 1.0, 2.0, 3.0], "y": [0.1, 0.9, 2.2, 2.8]})
        >>> bayes.fit(frame, response="y").sample(5, seed=1).shape
        (5, 3)
        """
        import pandas as pd

        from bayes.results.draws import posterior_draws

        beta, sigma = posterior_draws(self.posterior, n, seed=seed)
        table = pd.DataFrame(beta, columns=list(self.names))
        table["sigma"] = sigma
        return table

    def to_inference_data(self, *, n: int = 4000, seed: int = 0):
        """The fit as an arviz InferenceData (see :mod:`bayes.results.inference`)."""
        from bayes.results.inference import to_inference_data

        return to_inference_data(self, n=n, seed=seed)

    def __repr__(self) -> str:
        from bayes.results.display import fit_repr

        return fit_repr(self)

    def _repr_html_(self) -> str:
        from bayes.results.display import fit_html

        return fit_html(self)

    def to_dict(self) -> dict:
        """The JSON object of the command-line contract (plus extra fields)."""
        post = self.posterior
        return {
            "n": self.factor.n,
            "p": self.factor.p,
            "intercept": self.factor.intercept,
            "level": self.level,
            "method": post.method,
            "detail": post.detail,
            "response": self.response,
            "mode_kind": post.mode_kind,
            "coefficients": [jsonable(r) for r in self.rows],
            "diagnostics": jsonable(self.diagnostics),
            "penalties": [jsonable(r) for r in self.penalties],
            "noise": {
                "known": post.noise_known,
                "sd_at_mode": post.sigma_mode,
                "median": post.sigma_quantile(0.5),
                "lower": post.sigma_quantile((1 - self.level) / 2),
                "upper": post.sigma_quantile((1 + self.level) / 2),
            },
            "notes": list(self.notes),
            "provenance": jsonable(self.provenance),
            "row_label": None if self.data is None else self.data.row_label,
            "column_notes": [] if self.data is None else list(self.data.notes),
        }

    def text(self, digits: int = 6) -> str:
        """The terminal table with the diagnostics and notes below it."""
        pct = f"{100 * self.level:g}%"
        extra = [c for c in CONVERGENCE_COLUMNS if c in self.rows[0]]
        se = ["se"] if self.rows[0]["se"] is not None else []
        headers = ["coefficient", "prior", "mean", "mode", "sd", *se, f"{pct} lower",
                   f"{pct} upper", "P(>0)", "sd/prior sd", *extra]  # fmt: skip
        body = [
            [r["name"], r["prior"], fmt(r["mean"], digits), fmt(r["mode"], digits),
             fmt(r["sd"], 3), *(fmt(r[c], 3) for c in se), fmt(r["lower"], digits),
             fmt(r["upper"], digits), f"{r['p_positive']:.3f}", fmt(r["sd_ratio"], 3),
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
            f"n = {d['n']}, p = {d['p']} predictors"
            f"{' + intercept' if self.factor.intercept else ', no intercept'}, residual sd = "
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
