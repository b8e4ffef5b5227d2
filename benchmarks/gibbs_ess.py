"""Gibbs sampler efficiency: effective draws per second, beside exact draws. Not a test.

    python benchmarks/gibbs_ess.py [--blas-threads 1] [--chains 4] [--draws 1000] [--warmup 1000]

For n = 1000, p = 50 and n = 200, p = 500 (INVENTED data: seeded random
numbers), Laplace priors on every slope, a flat intercept and an inverse-gamma
noise prior, it times ``bayes.engine.gibbs.sample`` and reports the smallest bulk
effective sample size over the coefficients (arviz) per second of wall time.
The reference run, in the same process on the same data, draws the same
number of independent draws from the exact Gaussian posterior of the
conjugate model with the same prior sd and the noise sd known (numpy QR of the
stacked rows and one triangular solve for all draws): the ceiling a sampler of
this model could reach. The ratio is ours / reference.
"""

from __future__ import annotations

import argparse
import time
import warnings

import numpy as np

CASES = ((1000, 50), (200, 500))


def invented_data(n: int, p: int, seed: int = 2016):
    """Correlated predictors, five real effects, unit noise (INVENTED)."""
    rng = np.random.default_rng(seed)
    latent = rng.standard_normal((n, 5))
    X = rng.standard_normal((n, p)) + 0.5 * latent[:, rng.integers(0, 5, p)]
    beta = np.zeros(p)
    beta[:5] = [1.5, -1.0, 0.75, 0.5, -0.5]
    y = 10.0 + X @ beta + rng.standard_normal(n)
    return X, y


def min_bulk_ess(draws: np.ndarray) -> float:
    """Smallest bulk ESS over the last axis of (chains, draws, k)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FutureWarning)
        import arviz

    ds = arviz.convert_to_dataset({"beta": draws})
    return float(np.min(arviz.ess(ds, method="bulk")["beta"].values))


def gibbs_run(X, y, b: float, chains: int, draws: int, warmup: int) -> dict:
    from bayes.data.factor import factor_from_arrays
    from bayes.engine import gibbs
    from bayes.problem import NoiseSpec, ScaledPrior, to_natural
    from bayes.settings import SamplerSettings

    n, p = X.shape
    factor = factor_from_arrays(X, y, [f"x{j}" for j in range(p)])
    prior = ScaledPrior(
        ("flat",) + ("laplace",) * p,
        np.zeros(p + 1),
        np.zeros((0, p + 1)),
        np.concatenate([[np.nan], b * factor.x_scale]),
        np.full(p + 1, np.nan),
        NoiseSpec(shape=5.0, scale=5.0),
    )
    start = time.perf_counter()
    out = gibbs.sample(
        factor, prior, SamplerSettings(chains=chains, draws=draws, warmup=warmup, seed=1)
    )
    seconds = time.perf_counter() - start
    ess = min_bulk_ess(to_natural(factor, out.gamma))
    route = gibbs._model(factor, prior).route
    return {"seconds": seconds, "ess": ess, "route": route}


def exact_run(X, y, prior_sd: float, sigma: float, total: int) -> dict:
    """Independent draws from the exact conjugate posterior (numpy only)."""
    n, p = X.shape
    start = time.perf_counter()
    X1 = np.column_stack([np.ones(n), X])
    root = np.zeros((p, p + 1))
    root[:, 1:] = np.eye(p) / prior_sd
    M = np.vstack([X1 / sigma, root])
    t = np.concatenate([y / sigma, np.zeros(p)])
    Q, R = np.linalg.qr(M)
    z = np.random.default_rng(1).standard_normal((p + 1, total))
    draws = np.linalg.solve(R, (Q.T @ t)[:, None] + z).T
    seconds = time.perf_counter() - start
    ess = min_bulk_ess(draws.reshape(4, -1, p + 1))
    return {"seconds": seconds, "ess": ess}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--blas-threads", type=int, default=1)
    parser.add_argument("--chains", type=int, default=4)
    parser.add_argument("--draws", type=int, default=1000)
    parser.add_argument("--warmup", type=int, default=1000)
    parser.add_argument("--b", type=float, default=0.5, help="Laplace scale (natural units)")
    args = parser.parse_args()
    from threadpoolctl import threadpool_limits

    import bayes.engine.gibbs  # noqa: F401  (load scipy's BLAS before limiting its threads)

    print(f"{'case':>16} {'route':>8} {'seconds':>8} {'min ESS':>8} {'ESS/s':>9} "
          f"{'exact ESS/s':>12} {'ratio':>8}")  # fmt: skip
    with threadpool_limits(limits=args.blas_threads, user_api="blas"):
        for n, p in CASES:
            X, y = invented_data(n, p)
            ours = gibbs_run(X, y, args.b, args.chains, args.draws, args.warmup)
            total = args.chains * args.draws
            ref = exact_run(X, y, np.sqrt(2) * args.b, 1.0, total)
            rate, ref_rate = ours["ess"] / ours["seconds"], ref["ess"] / ref["seconds"]
            print(f"{f'n={n}, p={p}':>16} {ours['route']:>8} {ours['seconds']:8.2f} "
                  f"{ours['ess']:8.0f} {rate:9.0f} {ref_rate:12.0f} "
                  f"{rate / ref_rate:8.4f}")  # fmt: skip
    print(f"{args.chains} chains x {args.draws} draws after {args.warmup} warm-up sweeps; "
          f"BLAS threads {args.blas_threads}; Laplace b = {args.b}")  # fmt: skip


if __name__ == "__main__":
    main()
