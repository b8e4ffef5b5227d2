"""Compare prior sets on one data set: evidence, Bayes factors and leave-one-out prediction.

Every set is fitted to the same design. The log marginal likelihoods give Bayes
factors and the posterior probabilities of the sets under equal prior odds, read
on the scale of Kass and Raftery (1995); the leave-one-out predictive densities
(:mod:`bayes.engine.loo`) compare the sets by how well they predict each row from
the others, which depends much less on the prior widths. For sampled sets the posterior
probabilities and log Bayes factors carry Monte Carlo standard errors, from those of the log
evidences (bridge sampling).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from bayes.compare_sets import mixture_set, sampled_loo
from bayes.compare_wording import cautions, comparison_text, readings
from bayes.data.design import Design
from bayes.engine.evidence import Evidence, bridge_sampling, log_marginal_likelihood
from bayes.engine.loo import LooResult, exact_loo
from bayes.engine.mixture_prior import has_mixture
from bayes.errors import InputError
from bayes.jsonable import jsonable, number_or_nan
from bayes.settings import DEFAULT_SAMPLER, SamplerSettings
from bayes.threads import blas_threads


@dataclass(frozen=True)
class LooSummary:
    """A prior set's leave-one-out numbers, as the comparison keeps and saves them.

    Attributes
    ----------
    elpd : float
        Expected log predictive density, ``sum_i log p(y_i | y_-i)``.
    se : float
        Its standard error (nan when there are too few rows for one).
    p_loo : float
        Effective number of parameters.
    method : str
        How it was computed, in words.
    pareto_k_max : float or None
        Largest Pareto k (PSIS-LOO only).
    bad_rows : tuple of int
        Positions (from 0) of the rows whose Pareto k exceeds ``good_k``.
    good_k : float or None
        The Pareto k above which a row's estimate is unreliable (PSIS-LOO only; None also for a
        comparison saved before it was kept).
    """

    elpd: float
    se: float
    p_loo: float
    method: str
    pareto_k_max: float | None = None
    bad_rows: tuple[int, ...] = ()
    good_k: float | None = None

    @classmethod
    def of(cls, loo: LooResult) -> LooSummary:
        """The summary of an engine result (:class:`bayes.engine.evidence.LooResult`)."""
        k_max = None if loo.pareto_k is None else float(loo.pareto_k.max())
        return cls(loo.elpd, loo.se, loo.p_loo, loo.method, k_max,
                   tuple(int(i) for i in loo.bad_rows), loo.good_k)  # fmt: skip


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
    loo : LooSummary
    flat : tuple of str
        Coefficients with a flat prior.
    jeffreys : bool
        Jeffreys prior on the noise.
    elpd_diff : float
        elpd of this set minus that of the set that predicts the left-out rows best (0 for it).
    elpd_diff_se : float or None
        Standard error of ``elpd_diff``, ``sqrt(n var(pointwise differences))`` with divisor n
        as arviz's compare (None with
        fewer than two rows).
    r_hat : float or None
        Largest R-hat of the coefficient draws (sampled sets).
    """

    path: str
    title: str | None
    method: str
    evidence: Evidence
    loo: LooSummary
    flat: tuple[str, ...]
    jeffreys: bool
    elpd_diff: float
    elpd_diff_se: float | None
    r_hat: float | None = None

    @property
    def label(self) -> str:
        return Path(self.path).name

    @classmethod
    def from_dict(cls, doc: dict) -> SetResult:
        """One set back from its object in ``compare.json`` (see :meth:`Comparison.to_dict`)."""
        good_k = doc.get("pareto_k_good")  # absent from files saved before it was kept
        loo = LooSummary(
            float(doc["elpd_loo"]), number_or_nan(doc["elpd_loo_se"]), float(doc["p_loo"]),
            doc["loo_method"], doc["pareto_k_max"],
            tuple(int(i) - 1 for i in doc["pareto_k_bad_rows"]),
            None if good_k is None else float(good_k),
        )  # fmt: skip
        evidence = Evidence(float(doc["log_marginal_likelihood"]),
                            float(doc["log_marginal_likelihood_mc_se"]),
                            doc["evidence_method"])  # fmt: skip
        return cls(
            doc["path"], doc["title"], doc["method"], evidence, loo, tuple(doc["flat"]),
            bool(doc["jeffreys_noise"]), float(doc["elpd_diff_vs_best"]), doc["elpd_diff_se"],
            doc["r_hat_max"],
        )  # fmt: skip

    def to_dict(
        self,
        probability: float | None,
        log_bayes_factor: float | None,
        probability_mc_se: float | None = None,
        log_bayes_factor_mc_se: float | None = None,
    ) -> dict:
        """Its object in ``compare.json``, given what the comparison says of it (the Monte
        Carlo standard errors beside the values they belong to)."""
        return {
            "path": self.path,
            "title": self.title,
            "method": self.method,
            "log_marginal_likelihood": self.evidence.log_ml,
            "log_marginal_likelihood_mc_se": self.evidence.mc_se,
            "evidence_method": self.evidence.method,
            "posterior_probability": probability,
            "posterior_probability_mc_se": probability_mc_se,
            "log_bayes_factor_vs_best": log_bayes_factor,
            "log_bayes_factor_vs_best_mc_se": log_bayes_factor_mc_se,
            "elpd_loo": self.loo.elpd,
            "elpd_loo_se": jsonable(self.loo.se),
            "p_loo": self.loo.p_loo,
            "loo_method": self.loo.method,
            "elpd_diff_vs_best": self.elpd_diff,
            "elpd_diff_se": jsonable(self.elpd_diff_se),
            "pareto_k_max": self.loo.pareto_k_max,
            "pareto_k_bad_rows": [i + 1 for i in self.loo.bad_rows],
            "pareto_k_good": self.loo.good_k,
            "flat": list(self.flat),
            "jeffreys_noise": self.jeffreys,
            "r_hat_max": self.r_hat,
        }


@dataclass(frozen=True)
class Comparison:
    """The comparison of several prior sets on one design (numbers; the words are made by
    :mod:`bayes.compare_wording`).

    Examples
    --------
    >>> import bayes, elicit, pandas as pd
    >>> frame = pd.DataFrame({"x": [0.0, 1.0, 2.0, 3.0], "y": [0.1, 0.9, 2.2, 2.8]})
    >>> sets = [elicit.parse_priors({"coefficient": [{"name": "x", "center": c, "scale": 2.0}]},
    ...                             source=f"{c}.toml") for c in (0.0, 1.0)]
    >>> comparison = bayes.compare_priors(bayes.fit(frame, response="y").data, sets)
    >>> round(float(comparison.probabilities.sum()), 12)  # equal prior odds, two sets
    1.0
    """

    response: str
    n: int
    sets: tuple[SetResult, ...]
    provenance: dict
    notes: tuple[str, ...] = ()  # the design's (Design.output_notes)

    @classmethod
    def from_dict(cls, doc: dict) -> Comparison:
        """The comparison back from its JSON object (``compare.json``), as :meth:`to_dict`
        wrote it; the derived fields (probabilities, readings, cautions) are derived again."""
        sets = tuple(SetResult.from_dict(s) for s in doc["sets"])
        if len(sets) < 2:
            raise ValueError(f"a comparison needs at least two sets, got {len(sets)}")
        notes = tuple(str(n) for n in doc.get("notes", ()))  # absent in older files
        return cls(doc["response"], int(doc["n"]), sets, dict(doc["provenance"]), notes)

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
    def probability_mc_se(self) -> np.ndarray | None:
        """Monte Carlo standard errors of :attr:`probabilities`, from those of the log
        evidences (independent between sets) by the delta method: with ``p_i`` the softmax
        of the log evidences ``l``, ``dp_i / dl_j = p_i (delta_ij - p_j)``, so
        ``var p_i = sum_j p_i^2 (delta_ij - p_j)^2 se_j^2``. 0 when every set is exact."""
        probs = self.probabilities
        if probs is None:
            return None
        se = np.array([s.evidence.mc_se for s in self.sets])
        jac = probs[:, None] * (np.eye(len(probs)) - probs[None, :])
        return np.sqrt((jac**2) @ se**2)

    @property
    def log_bayes_factor_mc_se(self) -> np.ndarray | None:
        """Monte Carlo standard errors of :attr:`log_bayes_factors_vs_best`: the root sum of
        squares of the two sets' (0 for the best set itself)."""
        if not self.comparable:
            return None
        se = np.array([s.evidence.mc_se for s in self.sets])
        out = np.hypot(se, se[self.best])
        out[self.best] = 0.0
        return out

    @property
    def log_bayes_factors_vs_best(self) -> np.ndarray | None:
        """``ln B`` of each set against the set with the most evidence (None if not comparable)."""
        if not self.comparable:
            return None
        return self.log_ml - self.log_ml.max()

    @property
    def best(self) -> int:
        return int(np.argmax(self.log_ml))

    @property
    def best_loo(self) -> int:
        return int(np.argmax([s.loo.elpd for s in self.sets]))

    def __repr__(self) -> str:
        from bayes.results.display import comparison_repr

        return comparison_repr(self)

    def _repr_html_(self) -> str:
        from bayes.results.display import comparison_html

        return comparison_html(self)

    def to_dict(self) -> dict:
        """One JSON-ready object (``bayes compare --format json``, ``compare.json``)."""
        probs, log_b = self.probabilities, self.log_bayes_factors_vs_best
        probs_se, log_b_se = self.probability_mc_se, self.log_bayes_factor_mc_se

        def item(a, i):
            return None if a is None else float(a[i])

        sets = [
            s.to_dict(item(probs, i), item(log_b, i), item(probs_se, i), item(log_b_se, i))
            for i, s in enumerate(self.sets)
        ]
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
            "best_by_loo": self.sets[self.best_loo].path,
            "readings": readings(self),
            "cautions": cautions(self),
            "provenance": self.provenance,
            "notes": list(self.notes),
        }

    def text(self) -> str:
        """The terminal form."""
        return comparison_text(self)


def _against_best(fits: list[tuple]) -> tuple[SetResult, ...]:
    """The sets, each with its elpd difference to the set that predicts best.

    ``fits`` holds, per set, the arguments of :class:`SetResult` with the engine's
    :class:`bayes.engine.evidence.LooResult` in place of the summary and without the
    differences.
    """
    best = max((fit[4] for fit in fits), key=lambda loo: loo.elpd)
    out = []
    for path, title, method, ev, loo, flat, jeffreys, r_hat in fits:
        d = loo.pointwise - best.pointwise
        # ddof = 0 as arviz 0.2x az.compare's dse: sqrt(n * var(diff)).
        se = math.sqrt(len(d) * float(np.var(d))) if len(d) > 1 else None
        out.append(SetResult(path, title, method, ev, LooSummary.of(loo), flat, jeffreys,
                             float(d.sum()), se, r_hat))  # fmt: skip
    return tuple(out)


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
    progress : callable(done, total), optional
        Called as the sampler advances (sampled sets only).
    provenance : dict, optional
        Recorded with the comparison (``compare.json``).

    Returns
    -------
    Comparison

    Examples
    --------
    >>> import bayes, elicit, pandas as pd
    >>> frame = pd.DataFrame({"x": [0.0, 1.0, 2.0, 3.0], "y": [0.1, 0.9, 2.2, 2.8]})
    >>> sets = [elicit.parse_priors({"coefficient": [{"name": "x", "center": c, "scale": 0.1}]},
    ...                             source=f"{c}.toml") for c in (1.0, -5.0)]
    >>> comparison = bayes.compare_priors(bayes.fit(frame, response="y").data, sets)
    >>> bool(comparison.probabilities[0] > 0.99)  # the data put the slope near 0.94, not -5
    True
    """
    from bayes.data.factor import factor_from_arrays
    from bayes.engine.exact import exact_posterior
    from bayes.engine.scaled import scaled_prior

    if len(prior_sets) < 2:
        raise InputError(
            f"prior_sets must hold at least two prior files to compare, got {len(prior_sets)}"
        )
    factor = factor_from_arrays(design.X, design.y, design.names, intercept=design.intercept)
    with blas_threads(factor.k):  # small problems run on one BLAS thread
        names = factor.coefficient_names
        fits = []  # the arguments of each SetResult, the engine's LooResult for its summary
        for ps in prior_sets:
            if design.terms is not None:
                design.terms.check_priors(ps)
            label = ps.path or "priors"
            if has_mixture(ps):
                fits.append(mixture_set(factor, design, ps, label, method, sampler, progress))
                continue
            scaled = scaled_prior(factor, ps)
            flat = tuple(c for c, f in zip(names, scaled.family, strict=True) if f == "flat")
            if method == "exact" and not scaled.gaussian_only:
                raise InputError(
                    f"{label}: priors that are not Gaussian need method 'sample' or 'auto', "
                    f"got method {method!r}"
                )
            if method != "sample" and scaled.gaussian_only:
                post = exact_posterior(factor, scaled)
                ev = log_marginal_likelihood(factor, scaled)
                loo = exact_loo(post, design.X, design.y, ps)
                fits.append((label, ps.title, "exact", ev, loo, flat, scaled.noise.jeffreys, None))
                continue
            from bayes.engine.gibbs import sample

            d = sample(factor, scaled, sampler, progress=progress)
            ev = bridge_sampling(factor, scaled, d.gamma, d.sigma, sampler.seed)
            loo, r_hat = sampled_loo(factor, design, d, sampler)
            fits.append((label, ps.title, "sampled", ev, loo, flat, scaled.noise.jeffreys, r_hat))
        return Comparison(design.response, design.n, _against_best(fits), provenance or {},
                          design.output_notes)  # fmt: skip
