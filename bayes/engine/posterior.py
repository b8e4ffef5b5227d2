"""The posterior of the coefficients, in natural units, as one immutable object per form.

Exact fits give a :class:`MixturePosterior`, a scale mixture of Gaussians over the
noise sd: one component when the noise is known, a Student-t in the conjugate
case, and quadrature nodes when the noise is integrated out numerically. Sampled
fits give a :class:`DrawsPosterior`, which holds the draws. Both are a
:class:`Posterior` with one interface: ``k``, ``mean``, ``cov``,
:meth:`~Posterior.marginal` (the exact one-dimensional distribution of any
contrast ``a' beta``), :meth:`~Posterior.coefficient` and
:meth:`~Posterior.sigma_quantile`.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from dataclasses import dataclass
from functools import cached_property

import numpy as np

from bayes.arrays import ReadOnlyArrays, read_only
from bayes.distributions import Distribution, Empirical, NormalMixture, StudentT
from elicit.closed_forms import invgamma_ppf

PREDICTIVE_SEED = 20260  # seed of the new-noise draws added to a sampled predictive


@dataclass(frozen=True, eq=False, kw_only=True)
class Posterior(ReadOnlyArrays, ABC):
    """Posterior of beta = (intercept, slopes) in natural units: what every form shares.

    Attributes
    ----------
    names : tuple of str, length k
        "intercept" then the design columns.
    method : {"exact", "sampled"}
    detail : str
        How it was computed, in words (shown in the output and the report).
    mode : ndarray, shape (k,)
        The reported posterior mode (see ``mode_kind``).
    mode_kind : str
        Which mode: "posterior mode" (known noise) or "joint mode of (beta, sigma^2)".
    sigma_mode : float
        Noise sd at the reported mode.
    noise_known : bool
    """

    names: tuple[str, ...]
    method: str
    detail: str
    mode: np.ndarray
    mode_kind: str
    sigma_mode: float
    noise_known: bool = False

    @property
    def k(self) -> int:
        return len(self.names)

    @property
    @abstractmethod
    def mean(self) -> np.ndarray:
        """Posterior mean vector, shape (k,)."""

    @property
    @abstractmethod
    def cov(self) -> np.ndarray:
        """Posterior covariance matrix, shape (k, k)."""

    @abstractmethod
    def marginal(self, a: np.ndarray, offset: float = 0.0, noise: bool = False) -> Distribution:
        """Distribution of ``offset + a' beta`` (plus a new noise term when ``noise``).

        Parameters
        ----------
        a : ndarray, shape (k,)
            Contrast in natural units (intercept first).
        noise : bool
            Add the observation noise: the posterior predictive of a new response.
        """

    @abstractmethod
    def sigma_quantile(self, q: float) -> float:
        """Quantile of the posterior of the noise sd (the value itself when known)."""

    def coefficient(self, j: int) -> Distribution:
        """Marginal posterior of coefficient j."""
        return self.marginal(np.eye(self.k)[j])

    def coefficients(self) -> list[Distribution]:
        """The marginal posterior of every coefficient, in order (as :meth:`coefficient`)."""
        return [self.coefficient(j) for j in range(self.k)]


@dataclass(frozen=True, eq=False)
class FactoredCovs(ReadOnlyArrays):
    """The conditional covariances ``G diag(d[c]) G' + h[c] H H'`` of K components, as factors.

    What the eigen route gives (:func:`bayes.engine.exact.eigen_components`): one shared
    ``G`` and ``H`` and a diagonal per component, O(K k + k^2) numbers where the stack has
    K k^2. Variances, quadratic forms and weighted sums are read off the factors.

    Attributes
    ----------
    G : ndarray, shape (k, r)
    d : ndarray, shape (K, r)
    H : ndarray, shape (k, f)
        The flat-prior directions (f may be 0).
    h : ndarray, shape (K,)
    """

    G: np.ndarray
    d: np.ndarray
    H: np.ndarray
    h: np.ndarray

    def stack(self) -> np.ndarray:
        """The K x k x k stack itself (read-only): one k x r by r x k product per component."""
        HH = self.H @ self.H.T
        covs = np.empty((len(self.d), self.G.shape[0], self.G.shape[0]))
        for c, d in enumerate(self.d):
            np.matmul(self.G * d, self.G.T, out=covs[c])
            if self.H.shape[1]:
                covs[c] += self.h[c] * HH
        covs.flags.writeable = False
        return covs

    def variances(self) -> np.ndarray:
        """Each component's diagonal, shape (K, k).

        Summed as :meth:`quadratic` sums (numpy's pairwise sum of each row, not BLAS, whose
        order may follow memory alignment), so a unit vector's quadratic is its column bit
        for bit.
        """
        G2, flat = self.G**2, np.sum(self.H**2, axis=1)
        return np.array(
            [np.sum(G2 * d, axis=1) + h * flat for d, h in zip(self.d, self.h, strict=True)]
        )

    def quadratic(self, a: np.ndarray) -> np.ndarray:
        """``a' cov_c a`` for each component, shape (K,)."""
        return np.sum(self.d * (self.G.T @ a) ** 2, axis=1) + self.h * np.sum((self.H.T @ a) ** 2)

    def weighted(self, w: np.ndarray) -> np.ndarray:
        """``sum_c w[c] cov_c``, shape (k, k)."""
        return (self.G * (w @ self.d)) @ self.G.T + float(w @ self.h) * (self.H @ self.H.T)

    def finite(self) -> bool:
        return all(np.all(np.isfinite(x)) for x in (self.G, self.d, self.H, self.h))


@dataclass(frozen=True, eq=False, kw_only=True)
class MixturePosterior(Posterior):
    """An exact posterior: a scale mixture of Gaussians over the noise sd.

    Attributes
    ----------
    weights : ndarray, shape (K,)
        Mixture weights over noise values.
    sigma : ndarray, shape (K,)
        Noise sd at each component; for a Student-t posterior the t scale s.
    means : ndarray, shape (K, k)
    stack : ndarray, shape (K, k, k), optional
        Conditional posterior covariance at each component, as given; for a Student-t
        posterior ``stack[0]`` is the t scale matrix. Read it as :attr:`covs`.
    factored : FactoredCovs, optional
        The same covariances as factors, given by the eigen route: variances, contrasts
        and the mixture covariance are read off them, and without ``stack`` :attr:`covs`
        forms the stack only when asked for (K k^2 doubles).
    df : float
        Degrees of freedom of a Student-t posterior (inf otherwise).
    sigma_cdf : ndarray, shape (2, G), optional
        The noise sd's posterior cdf on a fine grid (sigma, cdf) when the noise was
        integrated out by quadrature.
    noise_modes : tuple of (float, float)
        Each mode of the noise sd's posterior, ``(sigma, mass)``, when the noise was
        integrated out by quadrature (empty otherwise, and for fits saved before modes
        were recorded). Two with noticeable mass mean a prior-data conflict.
    tail_df : float
        When the noise was integrated out by quadrature: the noise sd's posterior falls
        like ``sigma^-(tail_df + 1)`` at large sigma (worked out from the model, see
        :func:`bayes.engine.exact.noise_tail`; inf when not recorded).
    growth : ndarray, shape (k, k), optional
        With ``tail_df``: the coefficients' covariance given sigma is
        ``sigma^2 growth + O(1)`` as sigma grows (nonzero only along flat-prior
        directions). A contrast ``a' beta`` with ``a' growth a > 0`` has infinite
        variance when ``tail_df <= 2``, however finite the quadrature's truncated sum.
    """

    weights: np.ndarray
    sigma: np.ndarray
    means: np.ndarray
    stack: np.ndarray | None = None
    factored: FactoredCovs | None = None
    df: float = np.inf
    sigma_cdf: np.ndarray | None = None
    noise_modes: tuple[tuple[float, float], ...] = ()
    tail_df: float = np.inf
    growth: np.ndarray | None = None

    def __post_init__(self) -> None:
        super().__post_init__()
        if self.stack is None and self.factored is None:
            raise ValueError("give the covariances: stack, factored or both")

    @cached_property
    def covs(self) -> np.ndarray:
        """Conditional covariances, shape (K, k, k); formed from :attr:`factored` on first use."""
        return self.stack if self.stack is not None else read_only(self.factored.stack())

    def variances(self) -> np.ndarray:
        """Each component's conditional variances (the diagonals of :attr:`covs`), (K, k)."""
        if self.factored is not None:
            return self.factored.variances()
        return np.diagonal(self.covs, axis1=1, axis2=2)

    def marginal(self, a: np.ndarray, offset: float = 0.0, noise: bool = False) -> Distribution:
        a = np.asarray(a, dtype=float)
        locs = offset + self.means @ a
        if self.factored is not None:
            var = self.factored.quadratic(a)
        else:
            var = np.einsum("i,kij,j->k", a, self.covs, a)
        if noise:
            var = var + self.sigma**2
        scales = np.sqrt(np.maximum(var, 0.0))
        if np.isfinite(self.df):
            return StudentT(float(locs[0]), float(scales[0]), self.df)
        if self.tail_df <= 2 and (noise or self._grows(a[None])[0, 0]):
            return InfiniteVarianceMixture(self.weights, locs, scales)
        return NormalMixture(self.weights, locs, scales)

    def coefficients(self) -> list[Distribution]:
        """Every coefficient's marginal at once, equal to :meth:`marginal` of the unit vectors.

        With finite moments ``means @ e_j`` and ``e_j' covs e_j`` are exactly the j-th column
        and diagonal (every other term is an exact zero), so they are read off instead of
        contracted k times, which costs O(K k^3) for a wide model.
        """
        finite = self.factored.finite() if self.stack is None else np.all(np.isfinite(self.stack))
        if not (np.all(np.isfinite(self.means)) and finite):
            return super().coefficients()
        locs = 0.0 + self.means.T  # (k, K), as ``offset + means @ a``
        variances = self.variances()
        scales = np.sqrt(np.maximum(variances.T, 0.0))
        if np.isfinite(self.df):
            return [
                StudentT(float(m[0]), float(s[0]), self.df)
                for m, s in zip(locs, scales, strict=True)
            ]
        grows = np.zeros(self.k, dtype=bool)
        if self.tail_df <= 2 and self.growth is not None:
            dev = self.means - self.mean
            ref = np.abs(self.weights @ variances + self.weights @ dev**2)
            grow = np.abs(np.diag(self.growth)) * float(self.weights @ self.sigma**2)
            grows = grow > 1e-12 * ref
        return [
            (InfiniteVarianceMixture if g else NormalMixture)(self.weights, m, s)
            for m, s, g in zip(locs, scales, grows, strict=True)
        ]

    def _mixture_cov(self) -> np.ndarray:
        """The covariance of the mixture itself (over the quadrature's nodes)."""
        dev = self.means - self.mean  # about the mean: no cancellation
        if self.factored is not None:
            within = self.factored.weighted(self.weights)
        else:
            within = np.einsum("k,kij->ij", self.weights, self.covs)
        return within + np.einsum("k,ki,kj->ij", self.weights, dev, dev)

    def _grows(self, A: np.ndarray) -> np.ndarray:
        """Whether the covariance of contrasts ``A[i]' beta`` and ``A[j]' beta`` grows with sigma.

        ``A growth A'`` times the mixture's ``E[sigma^2]``, against the mixture's own
        covariance: a genuine growth is of its order, rounding in the natural transform
        some 1e-30 of it.

        Returns
        -------
        ndarray of bool, shape (len(A), len(A))
        """
        if self.growth is None:
            return np.zeros((len(A), len(A)), dtype=bool)
        grow = np.abs(A @ self.growth @ A.T) * float(self.weights @ self.sigma**2)
        ref = np.abs(np.diag(A @ self._mixture_cov() @ A.T))
        return grow > 1e-12 * np.sqrt(np.outer(ref, ref))

    @property
    def mean(self) -> np.ndarray:
        return self.weights @ self.means

    @property
    def cov(self) -> np.ndarray:
        if np.isfinite(self.df):
            return self.covs[0] * self.df / (self.df - 2) if self.df > 2 else self.covs[0] * np.inf
        cov = self._mixture_cov()
        if self.tail_df <= 2 and self.growth is not None:
            cov = np.where(self._grows(np.eye(self.k)), np.copysign(np.inf, self.growth), cov)
        return cov

    def sigma_quantile(self, q: float) -> float:
        if self.noise_known:
            return float(self.sigma[0])
        if np.isfinite(self.df):
            # sigma^2 ~ InvGamma(df/2, df s^2/2): the conjugate case
            s2 = invgamma_ppf(q, self.df / 2, scale=self.df * self.sigma[0] ** 2 / 2)
            return float(np.sqrt(s2))
        if self.sigma_cdf is not None:
            return float(np.interp(q, self.sigma_cdf[1], self.sigma_cdf[0]))
        # Only the quadrature weights: a mid-point reading, good to about the node spacing.
        order = np.argsort(self.sigma)
        cum = np.cumsum(self.weights[order])
        return float(np.interp(q, cum - self.weights[order] / 2, self.sigma[order]))


class InfiniteVarianceMixture(NormalMixture):
    """The quadrature's normal mixture of a contrast whose exact variance is infinite.

    Its cdf, quantiles and density are those of the mixture (the mass beyond the nodes is
    below exp(-46) of the peak's); its sd, which the truncated sum would make finite, is
    inf (see :attr:`MixturePosterior.growth`).
    """

    @property
    def sd(self) -> float:
        return np.inf


@dataclass(frozen=True, eq=False, kw_only=True)
class DrawsPosterior(Posterior):
    """A sampled posterior: the draws of the coefficients and of the noise sd.

    Attributes
    ----------
    draws : ndarray, shape (chains, draws, k)
        Natural units.
    sigma_draws : ndarray, shape (chains, draws)
        Noise sd draws (constant when the noise sd is known).
    noise_modes : tuple of (float, float)
        ``(sigma, mass)`` of each noticeable mode of the noise sd's posterior found by the
        exact mode search on the priors, or on a Gaussian stand-in of them
        (:func:`bayes.engine.crossings.reference_noise_modes`); empty when there is one.
    noise_cuts : tuple of float
        The noise sd at which neighbouring modes' basins meet.
    noise_modes_exact : bool
        The masses are this posterior's own (Gaussian priors), not a stand-in's.
    label_switching : tuple of (str, float, float, bool)
        Per coefficient with a mixture prior: its label switching rate, the R-hat of its
        label indicators and whether the chains look stuck
        (:func:`bayes.engine.crossings.label_switching`).
    """

    draws: np.ndarray
    sigma_draws: np.ndarray
    noise_modes: tuple[tuple[float, float], ...] = ()
    noise_cuts: tuple[float, ...] = ()
    noise_modes_exact: bool = False
    label_switching: tuple[tuple[str, float, float, bool], ...] = ()

    @property
    def flat_draws(self) -> np.ndarray:
        """Draws with chains stacked, shape (chains * draws, k)."""
        return self.draws.reshape(-1, self.k)

    @property
    def sigma(self) -> np.ndarray:
        """Noise sd of each draw with chains stacked, shape (chains * draws,).

        Paired with :attr:`flat_draws`, as ``sigma`` of a :class:`MixturePosterior` is
        with its components; every value is the known sd when the noise is known.
        """
        return self.sigma_draws.reshape(-1)

    def marginal(self, a: np.ndarray, offset: float = 0.0, noise: bool = False) -> Distribution:
        a = np.asarray(a, dtype=float)
        values = offset + self.flat_draws @ a
        if noise:
            rng = np.random.default_rng(PREDICTIVE_SEED)
            values = values + self.sigma * rng.standard_normal(values.size)
        return Empirical(values)

    @property
    def mean(self) -> np.ndarray:
        return self.flat_draws.mean(axis=0)

    @property
    def cov(self) -> np.ndarray:
        return np.atleast_2d(np.cov(self.flat_draws, rowvar=False))  # (k, k), also for k = 1

    def sigma_quantile(self, q: float) -> float:
        if self.noise_known:
            return float(self.sigma[0])
        return float(np.quantile(self.sigma_draws, q))
