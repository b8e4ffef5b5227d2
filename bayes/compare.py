"""Compare prior sets on one data set: evidence, Bayes factors and leave-one-out prediction.

Every set is fitted to the same design. The log marginal likelihoods give Bayes
factors and the posterior probabilities of the sets under equal prior odds, read
on the scale of Kass and Raftery (1995); the leave-one-out predictive densities
(:mod:`bayes.engine.loo`) compare the sets by how well they predict each row from
the others, which depends much less on the prior widths.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from bayes.data.design import Design
from bayes.engine.evidence import Evidence, bridge_sampling, log_marginal_likelihood
from bayes.engine.loo import LooResult, exact_loo, psis_loo
from bayes.errors import InputError
from bayes.results.format import fmt, format_table
from bayes.settings import DEFAULT_SAMPLER, SamplerSettings

# Kass and Raftery (1995), section 3.2: evidence against the other set, on 2 ln B.
KASS_RAFTERY = ((2.0, "not worth more than a bare mention"), (6.0, "positive"),
                (10.0, "strong"), (math.inf, "very strong"))  # fmt: skip


@dataclass(frozen=True)
class SetResult:
    """One prior set's evidence and leave-one-out result.

    Attributes
    ----------
    path : str
        The prior file as given.
    title : str or None
    method : {"exact", "sampled"}
    evidence : Evidence
    loo : LooResult
    flat : tuple of str
        Coefficients with a flat prior.
    jeffreys : bool
        Jeffreys prior on the noise.
    r_hat : float or None
        Largest R-hat of the coefficient draws (sampled sets).
    """

    path: str
    title: str | None
    method: str
    evidence: Evidence
    loo: LooResult
    flat: tuple[str, ...]
    jeffreys: bool
    r_hat: float | None = None

    @property
    def label(self) -> str:
        return Path(self.path).name


@dataclass(frozen=True)
class Comparison:
    """The comparison of several prior sets on one design; summarises itself."""

    response: str
    n: int
    sets: tuple[SetResult, ...]
    provenance: dict

    @property
    def log_ml(self) -> np.ndarray:
        return np.array([s.evidence.log_ml for s in self.sets])

    @property
    def comparable(self) -> bool:
        """Whether the sets share their improper parts (then Bayes factors are meaningful)."""
        first = self.sets[0]
        return all(s.flat == first.flat and s.jeffreys == first.jeffreys for s in self.sets)

    @property
    def probabilities(self) -> np.ndarray | None:
        """Posterior probabilities of the sets under equal prior odds (None if not comparable)."""
        if not self.comparable:
            return None
        z = self.log_ml - self.log_ml.max()
        return np.exp(z) / np.sum(np.exp(z))

    @property
    def best(self) -> int:
        return int(np.argmax(self.log_ml))

    @property
    def best_loo(self) -> int:
        return int(np.argmax([s.loo.elpd for s in self.sets]))

    def readings(self) -> list[str]:
        """The best set against each other one, on the Kass and Raftery (1995) scale."""
        if not self.comparable:
            return []
        b = self.sets[self.best]
        out = []
        for s in self.sets:
            if s is b:
                continue
            two_ln_b = 2 * (b.evidence.log_ml - s.evidence.log_ml)
            err = 2 * math.hypot(b.evidence.mc_se, s.evidence.mc_se)
            pm = f" +- {fmt(err, 2)} (Monte Carlo sd)" if err > 0 else ""
            out.append(
                f"{b.label} against {s.label}: 2 ln B = {fmt(two_ln_b, 3)}{pm}, Bayes factor "
                f"{fmt(math.exp(min(two_ln_b / 2, 700)), 3)}: {kass_raftery(two_ln_b)} "
                "(Kass and Raftery, 1995)"
            )
        return out

    def cautions(self) -> list[str]:
        """What the numbers do not say."""
        out = [
            "A Bayes factor depends on the prior widths: widening a prior the data do not need "
            "lowers its set's evidence even when the fit hardly changes. Read it beside the "
            "width sweep (bayes sweep) and the leave-one-out comparison, which depends much "
            "less on the widths."
        ]
        first = self.sets[0]
        improper = [*first.flat, *(["the noise sd (Jeffreys prior)"] if first.jeffreys else [])]
        if self.comparable and improper:
            density = "flat priors have density 1 per natural unit of their coefficient" + (
                ", the Jeffreys prior 1/sigma^2" if first.jeffreys else ""
            )
            out.append(
                f"Improper parts shared by all sets ({', '.join(improper)}): {density}, so every "
                "log marginal likelihood here carries the same arbitrary constant: only "
                "differences between the sets are meaningful."
            )
        if not self.comparable:
            diff = [
                f"{s.label}: flat on {', '.join(s.flat) or 'nothing'}"
                + ("; Jeffreys noise prior" if s.jeffreys else "")
                for s in self.sets
            ]
            out.append(
                "NOT COMPARABLE by the evidence: the sets differ in their improper parts ("
                + "; ".join(diff)
                + "), so a Bayes factor between them depends on the arbitrary scale of a flat "
                "prior and none is given. Compare them by leave-one-out, or give every set "
                "the same flat parts."
            )
        for s in self.sets:
            if not s.evidence.exact:
                out.append(
                    f"{s.label}: the log marginal likelihood is {s.evidence.method}, Monte "
                    f"Carlo sd {fmt(s.evidence.mc_se, 2)}."
                )
            if s.r_hat is not None and s.r_hat > 1.01:
                out.append(
                    f"{s.label}: the chains have not mixed (largest R-hat {s.r_hat:.3f} > 1.01): "
                    "run more draws before trusting its numbers."
                )
            bad = s.loo.bad_rows
            if len(bad):
                out.append(
                    f"{s.label}: PSIS-LOO is unreliable for {len(bad)} row(s) (Pareto k above "
                    f"{s.loo.good_k:.2f}; data rows {', '.join(str(i + 1) for i in bad[:10])}): "
                    "those rows sway the fit strongly."
                )
        return out

    def loo_lines(self) -> list[str]:
        b = self.sets[self.best_loo]
        out = [f"Leave-one-out: {b.label} predicts the left-out rows best."]
        for s in self.sets:
            if s is b:
                continue
            d = s.loo.pointwise - b.loo.pointwise
            se = math.sqrt(len(d)) * float(np.std(d, ddof=1)) if len(d) > 1 else math.nan
            out.append(f"  {s.label}: elpd difference {fmt(float(d.sum()), 3)} (se {fmt(se, 2)})")
        return out

    def to_dict(self) -> dict:
        """One JSON-ready object (``bayes compare --format json``, ``compare.json``)."""
        probs = self.probabilities
        best = self.sets[self.best_loo]
        sets = []
        for i, s in enumerate(self.sets):
            d = s.loo.pointwise - best.loo.pointwise
            se_d = math.sqrt(len(d)) * float(np.std(d, ddof=1)) if len(d) > 1 else None
            sets.append(
                {
                    "path": s.path,
                    "title": s.title,
                    "method": s.method,
                    "log_marginal_likelihood": s.evidence.log_ml,
                    "log_marginal_likelihood_mc_se": s.evidence.mc_se,
                    "evidence_method": s.evidence.method,
                    "posterior_probability": None if probs is None else float(probs[i]),
                    "log_bayes_factor_vs_best": (
                        float(s.evidence.log_ml - self.log_ml.max()) if self.comparable else None
                    ),
                    "elpd_loo": s.loo.elpd,
                    "elpd_loo_se": _finite(s.loo.se),
                    "p_loo": s.loo.p_loo,
                    "loo_method": s.loo.method,
                    "elpd_diff_vs_best": float(d.sum()),
                    "elpd_diff_se": _finite(se_d),
                    "pareto_k_max": None if s.loo.pareto_k is None else float(s.loo.pareto_k.max()),
                    "pareto_k_bad_rows": [int(i) + 1 for i in s.loo.bad_rows],
                    "flat": list(s.flat),
                    "jeffreys_noise": s.jeffreys,
                    "r_hat_max": s.r_hat,
                }
            )
        lml = self.log_ml
        return {
            "response": self.response,
            "n": self.n,
            "comparable": self.comparable,
            "sets": sets,
            "log_bayes_factors": (lml[:, None] - lml[None, :]).tolist()
            if self.comparable
            else None,
            "best_by_evidence": self.sets[self.best].path if self.comparable else None,
            "best_by_loo": best.path,
            "readings": self.readings(),
            "cautions": self.cautions(),
            "provenance": self.provenance,
        }

    def text(self) -> str:
        """The terminal form."""
        probs = self.probabilities
        top = self.log_ml.max()
        headers = ["prior set", "log evidence", "MC sd", "2 ln B vs best", "P(set | data)",
                   "elpd_loo", "se", "p_loo"]  # fmt: skip
        body = []
        for i, s in enumerate(self.sets):
            body.append([
                s.label, fmt(s.evidence.log_ml, 7),
                "exact" if s.evidence.exact else fmt(s.evidence.mc_se, 2),
                fmt(2 * (top - s.evidence.log_ml), 4) if self.comparable else "-",
                f"{probs[i]:.3f}" if probs is not None else "-",
                fmt(s.loo.elpd, 6), fmt(s.loo.se, 3), fmt(s.loo.p_loo, 3),
            ])  # fmt: skip
        lines = [
            f"Prior sets compared on '{self.response}' (n = {self.n}; the same model and data "
            "for each set; posterior probabilities under equal prior odds).",
            "",
            format_table(headers, body),
            "",
        ]
        readings = self.readings()
        if readings:
            lines.append("Evidence, on the scale of Kass and Raftery (1995):")
            lines += [f"  {r}" for r in readings]
        lines += self.loo_lines()
        lines += [f"Note: {c}" for c in self.cautions()]
        return "\n".join(lines)


def _finite(x):
    return None if x is None or not math.isfinite(x) else float(x)


def kass_raftery(two_ln_b: float) -> str:
    """The plain-language strength of evidence for ``2 ln B`` >= 0 (Kass and Raftery, 1995)."""
    for bound, words in KASS_RAFTERY:
        if two_ln_b < bound:
            return words
    return KASS_RAFTERY[-1][1]


def compare_priors(
    design: Design,
    prior_sets: Sequence,
    *,
    method: str = "auto",
    sampler: SamplerSettings = DEFAULT_SAMPLER,
    progress: Callable[[int, int], None] | None = None,
    provenance: dict | None = None,
) -> Comparison:
    """Fit each prior set to ``design`` and compare them.

    Parameters
    ----------
    design : Design
    prior_sets : sequence of elicit.spec.PriorSet
        At least two; each must have a ``path`` (its label).
    method : {"auto", "exact", "sample"}
        "auto": exact evidence and LOO for flat/normal priors, bridge sampling and
        PSIS-LOO on Gibbs draws otherwise; "sample" samples every set.
    sampler : SamplerSettings
        Chains, draws, warm-up and seed (sampled sets only).

    Returns
    -------
    Comparison
    """
    from bayes.data.factor import factor_from_arrays
    from bayes.engine.exact import exact_posterior
    from bayes.engine.scaled import scaled_prior
    from bayes.problem import to_natural

    if len(prior_sets) < 2:
        raise InputError(
            "give at least two prior files to compare (--priors a.toml --priors b.toml)"
        )
    factor = factor_from_arrays(design.X, design.y, design.names)
    names = ("intercept", *design.names)
    results = []
    for ps in prior_sets:
        if design.terms is not None:
            design.terms.check_priors(ps)
        scaled = scaled_prior(factor, ps)
        flat = tuple(c for c, f in zip(names, scaled.family, strict=True) if f == "flat")
        label = ps.path or "priors"
        if method == "exact" and not scaled.gaussian_only:
            raise InputError(f"{label}: priors that are not Gaussian need --method sample or auto")
        if method != "sample" and scaled.gaussian_only:
            post = exact_posterior(factor, scaled)
            ev = log_marginal_likelihood(factor, scaled)
            loo = exact_loo(post, design.X, design.y, ps)
            results.append(
                SetResult(label, ps.title, "exact", ev, loo, flat, scaled.noise.jeffreys)
            )
            continue
        import arviz as az

        from bayes.engine.gibbs import sample

        d = sample(factor, scaled, sampler, progress=progress)
        ev = bridge_sampling(factor, scaled, d.gamma, d.sigma, sampler.seed)
        beta = to_natural(factor, d.gamma)
        loo = psis_loo(beta, d.sigma, design.X, design.y)
        r_hat = (
            float(np.max(az.rhat(az.convert_to_dataset(beta)).to_array()))
            if sampler.chains > 1
            else None
        )
        results.append(
            SetResult(label, ps.title, "sampled", ev, loo, flat, scaled.noise.jeffreys, r_hat)
        )
    return Comparison(design.response, design.n, tuple(results), provenance or {})
