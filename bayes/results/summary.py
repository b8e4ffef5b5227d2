"""The coefficient table and fit diagnostics, computed once from a posterior."""

from __future__ import annotations

import math

import numpy as np

from bayes.engine.posterior import Posterior
from bayes.problem import DataFactor


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
    s = np.linalg.svd(factor.R[:, : factor.p], compute_uv=False)
    if len(s) < factor.p or s[-1] <= s[0] * 1e-15:
        return math.inf
    return float(s[0] / s[-1])


def coefficient_rows(posterior: Posterior, priors, level: float) -> list[dict]:
    """One row per coefficient: mean, mode, sd, interval, P(> 0), sd ratio."""
    rows = []
    for j, name in enumerate(posterior.names):
        cp = priors.get(name) if priors is not None else None
        m = posterior.coefficient(j)
        lower, upper = m.interval(level)
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
            }
        )
    return rows


def penalty_rows(priors, noise_sd: float, noise_basis: str) -> list[dict]:
    """Equivalent ridge (sigma^2/tau^2) and lasso (sigma^2/b) penalties, natural units."""
    rows = []
    if priors is None:
        return rows
    for cp in priors.coefficients:
        if cp.family == "normal":
            kind, lam = "ridge", noise_sd**2 / cp.scale**2
        elif cp.family == "laplace":
            kind, lam = "lasso", noise_sd**2 / cp.scale
        else:
            continue
        rows.append(
            {"name": cp.column, "penalty": kind, "lambda": lam, "noise_sd": noise_sd,
             "noise_basis": noise_basis}
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
