"""The sampler at large p: Gibbs effective draws per second against a MALA baseline. Not a test.

    python benchmarks/gibbs.py [--repeats 1] [--cases all|tall|wide|gaussian]

INVENTED data (seeded random numbers: correlated predictors, five real effects, unit noise,
``benchmarks/gibbs_ess.invented_data``), Laplace priors (b = 0.5 natural units) on every
slope, a flat intercept and an inverse-gamma noise prior. For n = 10^5, p = 200 and
n = 500, p = 2000 it times ``bayes.engine.gibbs.sample`` and, in turn in the same process on
the same posterior, a BASELINE written here: preconditioned MALA in numpy (all chains advanced
together as one array, gradients from the same k x k data triangle the sampler uses). The
baseline is tuned honestly: its step size is adapted during warm-up towards an acceptance
rate of 0.574 (Roberts and Rosenthal, 1998), and it is preconditioned by the covariance of the
Gaussian approximation of the posterior (the data's precision at the least-squares noise sd
plus each Laplace prior's variance 2 b^2 as a Gaussian prior precision; log sigma with its own
variance 1 / (2 n)), and starts from draws of that approximation. Both sides are timed
including warm-up. The figure is the smallest bulk effective sample size (arviz) over the
natural-unit coefficients and sigma, per second of wall time.

The third row is the Gaussian-prior unknown-noise case at n = 10^5, p = 200:
``bayes.engine.sampled.sampled_posterior`` (what ``--method sample`` runs) against iid draws
of the exact posterior (``exact_posterior`` and ``bayes.results.draws.posterior_draws``).

One BLAS thread on both sides (threadpoolctl).
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
from gibbs_ess import invented_data, min_bulk_ess  # noqa: E402
from run import paired  # noqa: E402

B = 0.5  # Laplace scale, natural units
NOISE = (5.0, 5.0)  # inverse-gamma shape and scale of sigma^2
TARGET_ACCEPT = 0.574


def laplace_problem(n: int, p: int):
    from bayes.data.factor import factor_from_arrays
    from bayes.problem import NoiseSpec, ScaledPrior

    X, y = invented_data(n, p)
    factor = factor_from_arrays(X, y, [f"x{j}" for j in range(p)])
    prior = ScaledPrior(
        ("flat",) + ("laplace",) * p,
        np.zeros(p + 1),
        np.zeros((0, p + 1)),
        np.concatenate([[np.nan], B * factor.x_scale]),
        np.full(p + 1, np.nan),
        NoiseSpec(shape=NOISE[0], scale=NOISE[1]),
    )
    return factor, prior


def min_ess(factor, gamma: np.ndarray, sigma: np.ndarray) -> float:
    """Smallest bulk ESS over the natural-unit coefficients and sigma."""
    from bayes.problem import to_natural

    both = np.concatenate([to_natural(factor, gamma), sigma[..., None]], axis=-1)
    return min_bulk_ess(both)


# --------------------------------------------------------------------------------------------
# BASELINE: preconditioned MALA on x = (gamma, log sigma), numpy only.
# --------------------------------------------------------------------------------------------


def mala_baseline(factor, prior, chains: int, draws: int, warmup: int, seed: int = 1):
    """BASELINE sampler. Returns gamma (chains, draws, k), sigma (chains, draws), acceptance."""
    from bayes.engine.likelihood import data_rows

    A, b = data_rows(factor)  # ||b - A gamma||^2 = RSS(gamma): the data triangle
    n, k = factor.n, factor.k
    a0, b0 = prior.noise.shape, prior.noise.scale
    lap = np.array([f == "laplace" for f in prior.family])
    c, scale = prior.mean[lap], prior.scale[lap]

    def logp_grad(x):  # x (k + 1, chains)
        g, u = x[:k], x[k]
        s2 = np.exp(2 * u)
        r = b[:, None] - A @ g
        rss = np.sum(r * r, axis=0)
        d = g[lap] - c[:, None]
        lp = -n * u - (rss + 2 * b0) / (2 * s2) - 2 * a0 * u - np.sum(np.abs(d) / scale[:, None], 0)
        grad = np.empty_like(x)
        grad[:k] = (A.T @ r) / s2
        grad[:k][lap] -= np.sign(d) / scale[:, None]
        grad[k] = -n + (rss + 2 * b0) / s2 - 2 * a0
        return lp, grad

    # Gaussian approximation: Laplace priors replaced by normals of the same variance 2 b^2.
    prec_prior = np.zeros(k)
    prec_prior[lap] = 1.0 / (2 * scale**2)
    g0 = np.linalg.lstsq(np.vstack([A, np.diag(np.sqrt(prec_prior))]),
                         np.concatenate([b, np.sqrt(prec_prior) * c_full(prior, lap, k)]),
                         rcond=None)[0]  # fmt: skip
    for _ in range(3):  # the noise level at the approximate mode
        s2 = (np.sum((b - A @ g0) ** 2) + 2 * b0) / (n + 2 * a0)
        prec = A.T @ A / s2 + np.diag(prec_prior)
        g0 = np.linalg.solve(prec, A.T @ b / s2 + prec_prior * c_full(prior, lap, k))
    cov = np.zeros((k + 1, k + 1))
    cov[:k, :k] = np.linalg.inv(prec)
    cov[k, k] = 1.0 / (2 * n)
    L = np.linalg.cholesky(cov)
    Linv = np.linalg.inv(L)
    mode = np.concatenate([g0, [0.5 * np.log(s2)]])

    rng = np.random.default_rng(seed)
    x = mode[:, None] + L @ rng.standard_normal((k + 1, chains))
    lp, grad = logp_grad(x)
    h = 1.65 * (k + 1) ** (-1 / 6)
    out_g = np.empty((chains, draws, k))
    out_s = np.empty((chains, draws))
    accepted = 0
    for it in range(warmup + draws):
        z = rng.standard_normal((k + 1, chains))
        drift = x + 0.5 * h**2 * (L @ (L.T @ grad))
        y = drift + h * (L @ z)
        lp_y, grad_y = logp_grad(y)
        back = Linv @ (x - y) - 0.5 * h**2 * (L.T @ grad_y)  # L^-1 (x - y - h^2/2 Sigma grad_y)
        log_q_ratio = -np.sum(back**2, 0) / (2 * h**2) + np.sum(z**2, 0) / 2
        accept = np.log(rng.random(chains)) < lp_y - lp + log_q_ratio
        x[:, accept], lp[accept], grad[:, accept] = y[:, accept], lp_y[accept], grad_y[:, accept]
        if it < warmup:  # Robbins-Monro on log h towards the target acceptance
            h *= np.exp((accept.mean() - TARGET_ACCEPT) / (it + 10) ** 0.6)
        else:
            accepted += accept.sum()
            out_g[:, it - warmup] = x[:k].T
            out_s[:, it - warmup] = np.exp(x[k])
    return out_g, out_s, accepted / (chains * draws)


def c_full(prior, lap, k):
    out = np.zeros(k)
    out[lap] = prior.mean[lap]
    return out


# --------------------------------------------------------------------------------------------


def laplace_row(n: int, p: int, gibbs_settings, mala_settings, repeats: int) -> dict:
    from bayes.engine import gibbs

    factor, prior = laplace_problem(n, p)
    got: dict = {}

    def ours():
        got["gibbs"] = gibbs.sample(factor, prior, gibbs_settings)

    def ref():
        got["mala"] = mala_baseline(factor, prior, *mala_settings)

    t_ours, t_ref = paired(ours, ref, repeats)
    g = got["gibbs"]
    mg, ms, acc = got["mala"]
    ess_ours, ess_ref = min_ess(factor, g.gamma, g.sigma), min_ess(factor, mg, ms)
    return {
        "case": f"Laplace, n={n:,}, p={p}",
        "route": gibbs._model(factor, prior).route,
        "ours_s": t_ours, "ours_ess": ess_ours, "ref_s": t_ref, "ref_ess": ess_ref,
        "note": f"MALA acceptance {acc:.2f}; Gibbs {gibbs_settings.describe()}; MALA "
        f"{mala_settings[0]} chains x {mala_settings[1]} after {mala_settings[2]}",
    }  # fmt: skip


def gaussian_row(n: int, p: int, settings, repeats: int) -> dict:
    from bayes.data.factor import factor_from_arrays
    from bayes.engine.exact import exact_posterior
    from bayes.engine.sampled import sampled_posterior
    from bayes.problem import NoiseSpec, ScaledPrior
    from bayes.results.draws import posterior_draws

    X, y = invented_data(n, p)
    factor = factor_from_arrays(X, y, [f"x{j}" for j in range(p)])
    root = np.zeros((p, p + 1))
    root[:, 1:] = np.diag(1.0 / (np.sqrt(2) * B * factor.x_scale))
    prior = ScaledPrior(("flat",) + ("normal",) * p, np.zeros(p + 1), root,
                        np.full(p + 1, np.nan), np.full(p + 1, np.nan),
                        NoiseSpec(shape=NOISE[0], scale=NOISE[1]))  # fmt: skip
    got: dict = {}
    total = settings.chains * settings.draws

    def ours():
        got["ours"] = sampled_posterior(factor, prior, settings)[0]

    def ref():
        beta, sigma = posterior_draws(exact_posterior(factor, prior), total, seed=1)
        got["ref"] = (beta, sigma)

    t_ours, t_ref = paired(ours, ref, repeats)
    post = got["ours"]
    both = np.concatenate([post.draws, post.sigma_draws[..., None]], axis=-1)
    beta, sigma = got["ref"]
    ref_both = np.column_stack([beta, sigma]).reshape(settings.chains, settings.draws, -1)
    return {
        "case": f"Gaussian, unknown noise, n={n:,}, p={p}", "route": post.detail[:40],
        "ours_s": t_ours, "ours_ess": min_bulk_ess(both), "ref_s": t_ref,
        "ref_ess": min_bulk_ess(ref_both), "note": "reference: iid draws of the exact posterior",
    }  # fmt: skip


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=1)
    parser.add_argument("--cases", default="all", choices=("all", "tall", "wide", "gaussian"))
    args = parser.parse_args()
    from threadpoolctl import threadpool_limits

    import bayes.engine.gibbs  # noqa: F401  (load scipy's BLAS before limiting its threads)
    from bayes.settings import SamplerSettings

    rows = []
    with threadpool_limits(limits=1, user_api="blas"):
        if args.cases in ("all", "tall"):
            rows.append(laplace_row(100_000, 200, SamplerSettings(4, 1000, 500, 1),
                                    (4, 4000, 2000), args.repeats))  # fmt: skip
        if args.cases in ("all", "wide"):
            rows.append(laplace_row(500, 2000, SamplerSettings(2, 400, 200, 1),
                                    (2, 2000, 1000), args.repeats))  # fmt: skip
        if args.cases in ("all", "gaussian"):
            rows.append(gaussian_row(100_000, 200, SamplerSettings(4, 1000, 500, 1),
                                     args.repeats))  # fmt: skip
    print(f"{'case':<38} {'ours s':>8} {'ESS':>7} {'ESS/s':>8} {'ref s':>8} {'ESS':>7} "
          f"{'ESS/s':>8} {'ratio':>7}")  # fmt: skip
    for r in rows:
        a, b = r["ours_ess"] / r["ours_s"], r["ref_ess"] / r["ref_s"]
        print(f"{r['case']:<38} {r['ours_s']:8.2f} {r['ours_ess']:7.0f} {a:8.1f} "
              f"{r['ref_s']:8.2f} {r['ref_ess']:7.0f} {b:8.1f} {a / b:7.2f}")  # fmt: skip
        print(f"    {r['route']}; {r['note']}")
    import os

    print(f"one BLAS thread; load average at the end {os.getloadavg()}")


if __name__ == "__main__":
    main()
