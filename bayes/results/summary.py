"""The coefficient table and fit diagnostics, computed once from a posterior."""

from __future__ import annotations

import math

import numpy as np
from scipy import linalg

from bayes.distributions import intervals
from bayes.engine.likelihood import data_rows
from bayes.engine.posterior import Posterior
from bayes.problem import DataFactor, natural_transform


def prior_text(cp) -> str:
    """Short description of a coefficient prior, natural units."""
    if cp is None or cp.family == "flat":
        return "flat"
    if cp.family == "student_t":
        return f"student_t(df={cp.df:g}, {cp.center:.4g}, {cp.scale:.4g})"
    return f"{cp.family}({cp.center:.4g}, {cp.scale:.4g})"


def prior_sd(cp) -> float:
    """Prior standard deviation in natural units (inf for flat)."""
    return math.inf if cp is None or cp.family == "flat" else float(cp.sd)


def fitted_rss(factor: DataFactor, beta: np.ndarray) -> float:
    """Residual sum of squares of the natural-unit coefficients ``beta`` on the data factor."""
    p = factor.p
    slopes = np.asarray(beta)[factor.slopes]
    r = factor.R[:, :p] @ (slopes * factor.x_scale) - factor.R[:, p]
    if not factor.intercept:
        return float(r @ r)
    alpha = beta[0] - factor.y_mean + float(np.dot(factor.x_mean, slopes))
    return float(factor.n * alpha**2 + r @ r)


def condition_number(factor: DataFactor) -> float:
    """2-norm condition number of the centred, scaled design (inf when rank deficient)."""
    s = factor.design_singular_values
    if len(s) < factor.p or s[-1] <= s[0] * 1e-15:
        return math.inf
    return float(s[0] / s[-1])


def priors_by_column(priors) -> dict:
    """Each design column's coefficient prior, as ``priors.get(column)`` (the first of a
    column's priors), looked up once for all columns instead of a search per column."""
    found: dict = {}
    for cp in getattr(priors, "coefficients", ()) if priors is not None else ():
        found.setdefault(cp.column, cp)
    return found


def every_prior_flat(priors, names) -> bool:
    """True when no coefficient of ``names`` has a proper prior (no prior file, or only flat)."""
    if priors is None:
        return True
    if getattr(priors, "block", None) is not None:
        return False
    found = priors_by_column(priors)
    return all((cp := found.get(n)) is None or cp.family == "flat" for n in names)


def least_squares_se(factor: DataFactor) -> np.ndarray | None:
    """The classical least-squares standard errors, natural units, intercept first.

    ``s sqrt(diag((X'X)^-1))`` with ``s^2 = RSS / (n - k)`` and X the design with its
    intercept column (what ``statsmodels`` OLS reports as ``bse``), from the data factor by
    QR; None when ``n <= k``. With flat priors and the Jeffreys noise prior the posterior sd
    is ``se * sqrt(df / (df - 2))``, ``df = n - k``.
    """
    D, d = data_rows(factor)
    dof = factor.n - D.shape[1]
    if dof <= 0:
        return None
    Q, R = np.linalg.qr(D)
    resid = D @ linalg.solve_triangular(R, Q.T @ d) - d
    spread = natural_transform(factor) @ linalg.solve_triangular(R, np.eye(R.shape[0]))
    return np.sqrt(float(resid @ resid) / dof) * np.sqrt(np.sum(spread**2, axis=1))


def coefficient_rows(
    posterior: Posterior, priors, level: float, se: np.ndarray | None = None
) -> list[dict]:
    """One row per coefficient: mean, mode, sd, interval, P(> 0), sd ratio, classical se.

    ``se`` (:func:`least_squares_se`, for flat-prior fits) fills the ``se`` field; it is
    None otherwise.
    """
    rows = []
    marginals = posterior.coefficients()
    ends = intervals(marginals, level)
    found = priors_by_column(priors)
    for j, (name, m, (lower, upper)) in enumerate(
        zip(posterior.names, marginals, ends, strict=True)
    ):
        cp = found.get(name)
        sd = m.sd
        psd = prior_sd(cp)
        rows.append(
            {
                "name": name,
                "prior": prior_text(cp),
                "mean": m.mean,
                "mode": float(posterior.mode[j]),
                "sd": sd,
                "lower": lower,
                "upper": upper,
                "p_positive": m.sf(0.0),
                "sd_ratio": sd / psd if math.isfinite(psd) else None,
                "se": None if se is None else float(se[j]),
            }
        )
    return rows


def penalty_rows(priors, noise_sd: float, noise_basis: str, median_sd: float) -> list[dict]:
    """Equivalent ridge (sigma^2/tau^2) and lasso (sigma^2/b) penalties, natural units.

    ``lambda`` is at ``noise_sd``, the noise sd of the reported mode: the mode is then the
    penalised least-squares solution, ridge minimising ``||y - X beta||^2 + lambda
    (beta_j - c_j)^2`` and lasso ``||y - X beta||^2 / 2 + lambda |beta_j - c_j|`` over each
    penalised coefficient ``j`` (prior centre ``c_j``). ``lambda_at_median_noise_sd`` is
    the same penalty at ``median_noise_sd``, the posterior median of the noise sd.
    """
    rows = []
    if priors is None:
        return rows
    for cp in priors.coefficients:
        if cp.family == "normal":
            kind, lam, lam_median = "ridge", noise_sd**2 / cp.scale**2, median_sd**2 / cp.scale**2
        elif cp.family == "laplace":
            kind, lam, lam_median = "lasso", noise_sd**2 / cp.scale, median_sd**2 / cp.scale
        else:
            continue
        rows.append(
            {"name": cp.column, "penalty": kind, "lambda": lam, "noise_sd": noise_sd,
             "noise_basis": noise_basis, "median_noise_sd": median_sd,
             "lambda_at_median_noise_sd": lam_median}
        )  # fmt: skip
    return rows


def diagnostics(factor: DataFactor, posterior: Posterior) -> dict:
    """n, p, rss and residual sd at the posterior mean, R^2, condition number, noise sd."""
    k = factor.k
    rss = fitted_rss(factor, posterior.mean)
    dof = factor.n - k
    return {
        "n": factor.n,
        "p": factor.p,
        "rss": rss,
        "residual_sd": math.sqrt(rss / dof) if dof > 0 else None,
        "r_squared": 1.0 - rss / factor.tss,
        "condition_number": condition_number(factor),
        "noise_sd_median": posterior.sigma_quantile(0.5),
    }
