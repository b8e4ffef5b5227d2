"""Prior-data conflict checks and power-scaling sensitivity.

Prior-data conflict (Box, 1980; Evans and Moshonov, 2006): where do the data
fall under the prior predictive distribution? Following Evans and Moshonov the
check uses only the part of the data that informs the coefficients (the
minimal sufficient statistic), not the residuals, which carry no information
about the coefficient priors. In the eigen directions of
:class:`bayes.engine.widths.WidthPath` that statistic is ``z`` with, under the prior
predictive at noise sd sigma, independent ``z_i ~ N(s_i t_i, sigma^2 + s_i^2)``,
so the prior predictive density orders the data by

    d^2 = sum_i (z_i - s_i t_i)^2 / (sigma^2 + s_i^2)  ~  chi-square(rank),

and the tail probability is ``P(chi2 >= d^2)``. Per coefficient with an
independent normal prior ``N(m0, tau^2)``, the statistic is the estimate from
the data and the other priors, ``N(m_-, v_-)`` (its precision is the posterior
precision of the coefficient minus the prior's), with prior predictive
``N(m0, tau^2 + v_-)``: the two-sided tail probability of ``m_-``. With an
unknown noise sd, sigma is integrated over its distribution given the residuals
and the noise prior alone (the residuals do not depend on the coefficients'
priors), so the check never uses the prior it is checking.

Power-scaling sensitivity (Kallioinen, Paananen, Buerkner and Vehtari, 2024,
Statistics and Computing 34:57): raise the prior (or the likelihood) to a power
``alpha`` near 1 and measure how far each coefficient's posterior moves. The
distance is the cumulative Jensen-Shannon distance between the base and the
power-scaled marginal CDFs; the sensitivity is its finite-difference gradient
with respect to ``log2(alpha)`` at ``alpha = 0.99`` and ``1.01``, averaged; values
of 0.05 and above are flagged, the cut-off the paper publishes. Sensitive to
both: prior-data conflict; to the prior only: a weak likelihood. For the
Gaussian engine the power-scaled posteriors are exact (a normal prior to the
power alpha is the normal with alpha times the precision; the likelihood to the
power alpha is the Gaussian likelihood at sigma / sqrt(alpha) times
sigma^(n (1 - alpha))); for sampled fits they come from importance weights on
the draws. Only the coefficient priors are scaled; the noise prior stays as
stated.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special, stats

from bayes.engine.widths import CoefficientMixtures, WidthPath
from bayes.sensitivity import wording

CONFLICT_TAIL = 0.05  # tail probability below which a conflict is flagged (common practice)
POWER_ALPHAS = (0.99, 1.01)  # Kallioinen et al. (2024): the finite-difference powers
SENSITIVITY_CUTOFF = 0.05  # Kallioinen et al. (2024): the published cut-off
# The CJS distance is normalised by its upper bound, an integral over the range the
# posterior occupies; for exact posteriors that range is taken as the one a sample
# of REFERENCE_DRAWS draws spans on average (between the 1/S and 1 - 1/S quantiles),
# the sample size the paper's examples use (4 chains of 1000 draws).
REFERENCE_DRAWS = 4000
_GRID = 513  # Simpson points over each reference range (relative error ~1e-8)
_NOISE_NODES = 96  # Gauss-Legendre nodes over the noise distribution given the residuals


# --------------------------------------------------------------------- prior-data conflict


def _noise_nodes(path: WidthPath) -> tuple[np.ndarray, np.ndarray] | None:
    """Noise sd values and weights from the residuals and the noise prior alone."""
    noise = path.prior.noise
    if noise.known:
        return np.array([noise.sd]), np.ones(1)
    shape = noise.shape + (path.n - path.k_flat - path.rank) / 2
    scale = noise.scale + path.resid2 / 2
    if not (shape > 0 and scale > 0):
        return None
    # Gauss-Legendre in log sigma^2 over all but 1e-15 of each tail, where the density
    # is smooth (on the probability scale the quantile function has log singularities).
    dist = stats.invgamma(shape, scale=scale)
    lo, hi = np.log(dist.ppf(1e-15)), np.log(dist.isf(1e-15))
    x, w = np.polynomial.legendre.leggauss(_NOISE_NODES)
    v = lo + (hi - lo) * (x + 1) / 2
    w = w * dist.pdf(np.exp(v)) * np.exp(v)
    return np.exp(v / 2), w / w.sum()


def prior_data_conflict(path: WidthPath, priors) -> dict:
    """Prior-data conflict checks, jointly and per coefficient.

    Parameters
    ----------
    path : WidthPath
        The Gaussian-prior problem at the stated priors (factor 1).
    priors : elicit.spec.PriorSet
        The same priors, natural units (normal and flat families).

    Returns
    -------
    dict
        ``joint``: tail probability, degrees of freedom, flag and sentence;
        ``coefficients``: per coefficient with an independent normal prior the
        same (others get ``None`` and a reason).
    """
    nodes = _noise_nodes(path)
    q = path.rank
    out = {"method": wording.CONFLICT_METHOD, "threshold": CONFLICT_TAIL}
    if nodes is None or q == 0:
        out["joint"] = {"tail_probability": None, "flag": False, "dimensions": q,
                        "sentence": wording.no_conflict_check(q)}  # fmt: skip
        out["coefficients"] = []
        return out
    sigma, weights = nodes
    tail = float(
        sum(
            w * stats.chi2.sf(path.sufficient(s, 1.0), q)
            for s, w in zip(sigma, weights, strict=True)
        )
    )
    flag = tail < CONFLICT_TAIL
    out["joint"] = {"tail_probability": tail, "flag": flag, "dimensions": q,
                    "sentence": wording.joint_conflict(tail, q, flag)}  # fmt: skip
    means, var = path.conditional(sigma, 1.0)
    rows = []
    for j, name in enumerate(path.names):
        cp = priors.get(name)
        if cp is None or cp.family != "normal":
            continue
        tau2 = cp.scale**2
        prec = 1.0 / var[:, j] - 1.0 / tau2
        row = {"name": name, "tail_probability": None, "flag": False}
        if np.any(prec <= 1e-9 / var[:, j]):
            row["sentence"] = wording.coefficient_conflict(name, None, False)
            rows.append(row)
            continue
        m_minus = (means[:, j] / var[:, j] - cp.center / tau2) / prec
        z = np.abs(m_minus - cp.center) / np.sqrt(tau2 + 1.0 / prec)
        t = float(weights @ (2 * special.ndtr(-z)))
        row["tail_probability"] = t
        row["flag"] = t < CONFLICT_TAIL
        row["data_estimate"] = float(weights @ m_minus)
        row["sentence"] = wording.coefficient_conflict(name, t, row["flag"])
        rows.append(row)
    out["coefficients"] = rows
    return out


# --------------------------------------------------------------------- power-scaling


def cjs_distance(P: np.ndarray, Q: np.ndarray, dx: np.ndarray) -> np.ndarray:
    """Normalised, symmetrised cumulative Jensen-Shannon distance between CDFs.

    ``CJS(P||Q) = int P log2(2P / (P + Q)) + (Q - P) / (2 ln 2) dx`` (Nguyen and
    Vreeken, 2015), written ``int P (r - log1p(r)) dx / ln 2`` with
    ``r = (Q - P) / (2P)`` to avoid cancellation; the distance is
    ``sqrt((CJS(P||Q) + CJS(Q||P)) / int (P + Q) dx)``, in [0, 1].

    Parameters
    ----------
    P, Q : ndarray, shape (..., m)
        CDF values, constant on intervals of width ``dx`` (or quadrature values
        with quadrature weights ``dx``).
    dx : ndarray, shape (..., m)

    Returns
    -------
    ndarray, shape (...)
    """

    def one_way(a, b):
        with np.errstate(divide="ignore", invalid="ignore"):
            r = (b - a) / (2 * a)
            term = np.where(a > 0, a * (r - np.log1p(r)), b / 2)  # a -> 0: the limit b / 2
        return np.sum(term * dx, axis=-1) / math.log(2)

    div = one_way(P, Q) + one_way(Q, P)
    bound = np.sum((P + Q) * dx, axis=-1)
    return np.sqrt(np.maximum(div, 0.0) / bound)


def _simpson_grid(base: CoefficientMixtures) -> tuple[np.ndarray, np.ndarray]:
    """Integration points and Simpson weights over each coefficient's reference range."""
    lo = base.quantile(1.0 / REFERENCE_DRAWS)
    hi = base.quantile(1.0 - 1.0 / REFERENCE_DRAWS)
    u = np.linspace(0.0, 1.0, _GRID)
    w = np.ones(_GRID)
    w[1:-1:2], w[2:-1:2] = 4.0, 2.0
    h = (hi - lo)[:, None] / (_GRID - 1)
    return lo[:, None] + (hi - lo)[:, None] * u, h * w / 3.0


def _unsigned(P, Q, P_sf, Q_sf, dx) -> np.ndarray:
    # The CJS distance of CDFs changes when the variable changes sign; the larger of the
    # two (beta and -beta, i.e. CDFs and survival functions) is used, so that the measure
    # does not depend on the direction of the coefficient (from memory of the paper).
    return np.maximum(cjs_distance(P, Q, dx), cjs_distance(P_sf, Q_sf, dx))


def _rows(names, prior: np.ndarray, likelihood: np.ndarray, method: str) -> dict:
    c = SENSITIVITY_CUTOFF
    rows = []
    for name, p, lik in zip(names, prior, likelihood, strict=True):
        p, lik = float(p), float(lik)
        if p >= c and lik >= c:
            diagnosis = wording.DIAGNOSIS_CONFLICT
        elif p >= c:
            diagnosis = wording.DIAGNOSIS_WEAK_LIKELIHOOD
        else:
            diagnosis = None
        rows.append({"name": name, "prior": p, "likelihood": lik, "diagnosis": diagnosis,
                     "flag": diagnosis is not None,
                     "sentence": wording.power_scaling(name, p, lik, diagnosis)})  # fmt: skip
    return {
        "method": method,
        "measure": wording.POWER_MEASURE,
        "alphas": list(POWER_ALPHAS),
        "threshold": c,
        "coefficients": rows,
    }


def flat_prior_rows(power: dict, informative: set[str]) -> dict:
    """``power`` with each coefficient whose prior is flat (not in ``informative``) marked
    ``flat_prior`` and told in words that its own prior decides nothing: power-scaling a flat
    prior leaves it flat, so what its prior sensitivity measures is the other coefficients'
    priors acting through correlation. The numbers and the diagnosis are unchanged."""
    if not power:
        return power
    rows = []
    for row in power["coefficients"]:
        flat = row["name"] not in informative
        sentence = (wording.power_scaling_flat(row["name"], row["prior"], row["likelihood"],
                                               row["prior"] >= SENSITIVITY_CUTOFF)
                    if flat else row["sentence"])  # fmt: skip
        rows.append({**row, "flat_prior": flat, "sentence": sentence})
    return {**power, "coefficients": rows}


def power_scaling_exact(path: WidthPath) -> dict:
    """Power-scaling sensitivity of every coefficient, from exact power-scaled posteriors.

    Parameters
    ----------
    path : WidthPath
        The Gaussian-prior problem at the stated priors.

    Returns
    -------
    dict
        ``coefficients``: per coefficient ``prior`` and ``likelihood`` sensitivity,
        ``diagnosis`` and a sentence; plus the method, alphas and threshold.
    """
    base = CoefficientMixtures.from_path(path, 1.0)
    x, dx = _simpson_grid(base)
    P, P_sf = base.tails(x)
    out = {}
    for component in ("prior", "likelihood"):
        total = np.zeros(len(path.names))
        for a in POWER_ALPHAS:
            mix = (CoefficientMixtures.from_path(path, a) if component == "prior"
                   else CoefficientMixtures.from_path(path, 1.0, a))  # fmt: skip
            Q, Q_sf = mix.tails(x)
            total += _unsigned(P, Q, P_sf, Q_sf, dx) / abs(math.log2(a))
        out[component] = total / len(POWER_ALPHAS)
    return _rows(path.names, out["prior"], out["likelihood"], wording.POWER_METHOD_EXACT)


def power_scaling_draws(
    names, draws: np.ndarray, log_prior: np.ndarray, log_lik: np.ndarray
) -> dict:
    """Power-scaling sensitivity from posterior draws by importance weighting.

    Parameters
    ----------
    names : sequence of str, length k
    draws : ndarray, shape (S, k)
        Posterior draws of the coefficients (natural units).
    log_prior, log_lik : ndarray, shape (S,)
        Log prior density of the coefficient priors and log likelihood at each draw
        (additive constants do not matter). The power-scaled posterior has weights
        ``exp((alpha - 1) * log_prior)`` (or ``log_lik``), normalised; with alpha this
        close to 1 plain importance weights are stable.

    Returns
    -------
    dict
        As :func:`power_scaling_exact`.
    """
    S = draws.shape[0]
    order = np.argsort(draws, axis=0)
    xs = np.take_along_axis(draws, order, axis=0)
    dx = np.diff(xs, axis=0).T  # (k, S - 1): the ECDFs are constant between draws
    P = np.broadcast_to(np.arange(1, S) / S, dx.shape)
    out = {}
    for component, lp in (("prior", log_prior), ("likelihood", log_lik)):
        total = np.zeros(draws.shape[1])
        for a in POWER_ALPHAS:
            lw = (a - 1.0) * (lp - np.max(lp))
            w = np.exp(lw - np.max(lw))
            w /= w.sum()
            Q = np.cumsum(w[order], axis=0)[:-1].T
            total += _unsigned(P, Q, 1.0 - P, 1.0 - Q, dx) / abs(math.log2(a))
        out[component] = total / len(POWER_ALPHAS)
    return _rows(names, out["prior"], out["likelihood"], wording.POWER_METHOD_DRAWS)
