"""A mixture prior (:mod:`elicit.pool_mixture`) behind scipy.stats' distribution interface.

Apart from :mod:`elicit.pool_mixture` so that reading a prior file does not import
scipy.stats (about 0.6 s of start-up): only :meth:`elicit.spec.CoefficientPrior.dist` builds one.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from scipy import optimize, stats

from elicit.pool_mixture import MIXTURE, Component, moments


class MixtureDistribution(stats.rv_continuous):
    """A mixture prior behind scipy.stats' interface (``pdf``, ``cdf``, ``ppf``, ``rvs``, ...).

    Quantiles are the root of the mixture cdf, bracketed by the components' own quantiles;
    draws pick a component by its weight, then draw from it.
    """

    def __init__(self, parts: Sequence[Component]):
        super().__init__(name=MIXTURE)
        self.parts = tuple(parts)
        self._w = np.array([c.weight for c in self.parts])
        self._d = [c.dist() for c in self.parts]

    def _updated_ctor_param(self):  # scipy copies a distribution through its constructor
        return {"parts": self.parts}

    def __reduce__(self):
        return (MixtureDistribution, (self.parts,))

    def _pdf(self, x):
        return sum(w * d.pdf(x) for w, d in zip(self._w, self._d, strict=True))

    def _cdf(self, x):
        return sum(w * d.cdf(x) for w, d in zip(self._w, self._d, strict=True))

    def _sf(self, x):
        return sum(w * d.sf(x) for w, d in zip(self._w, self._d, strict=True))

    def _ppf(self, q):
        q = np.asarray(q, dtype=float)
        out = np.empty(q.shape)
        for i, p in np.ndenumerate(q):
            each = [float(d.ppf(p)) for d in self._d]
            lo, hi = min(each), max(each)
            if lo == hi:
                out[i] = lo
                continue
            out[i] = optimize.brentq(
                lambda x, p=p: float(self._cdf(x)) - p, lo, hi, xtol=1e-13 * max(1.0, abs(hi))
            )
        return out

    def _rvs(self, size=None, random_state=None):
        rng = random_state
        label = rng.choice(len(self.parts), size=size, p=self._w)
        out = np.empty(np.shape(label))
        for k, c in enumerate(self.parts):
            at = label == k
            n = int(np.sum(at))
            if c.family == "normal":
                out[at] = rng.normal(c.center, c.scale, n)
            else:
                out[at] = rng.laplace(c.center, c.scale, n)
        return out

    def _stats(self):
        mean, sd = moments(self.parts)
        return mean, sd**2, None, None
