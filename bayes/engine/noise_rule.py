"""The quadrature rule over ``u = log sigma`` that integrates the noise sd out: every mode found.

The unnormalised log density ``f(u)`` of the noise is cheap to evaluate at any ``u``, and
it can have more than one local maximum: precise data meeting confident priors that
contradict them give one mode at the small residual and one at a large noise sd where the
priors win. :func:`log_sigma_quadrature` therefore

1. climbs from the caller's start ``u0`` (the least-squares residual), as it always did;
2. scans ``f`` on a grid of step :data:`SCAN_STEP` over the span where a stationary point
   can lie (the caller gives it; see :func:`stationary_span`) and a margin around it, so
   that every local maximum is seen, and refines each by a bounded search;
3. keeps the modes whose peak is within ``exp(-TAIL)`` of the highest, covers each by a
   region where ``f`` is above ``exp(-TAIL)`` of the highest peak (overlapping regions
   merged), and puts a Gauss-Legendre rule of :data:`QUADRATURE_NODES` nodes on each;
4. checks each region's rule against its refinement (the region halved into two panels of
   the same rule): the normalising constant and the mean of ``u`` must agree to
   :data:`RULE_TOL`, otherwise the refinement is taken and checked against its own
   refinement, up to :data:`MAX_PANELS` panels per region, beyond which an
   :class:`~bayes.errors.InputError` is raised rather than a wrong number reported.

When one mode is kept and the climb from ``u0`` reached it, the rule is exactly the one
region of step 3 (as before this search existed), so one-mode numbers are unchanged.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from bayes.arrays import ReadOnlyArrays
from bayes.errors import InputError

QUADRATURE_NODES = 64
#: Log-density drop at the ends of the quadrature interval (exp(-46) ~ 1e-20): the
#: quadrature covers the region where the noise density is above exp(-TAIL) of its peak.
TAIL = 46.0
SCAN_STEP = 0.05  # grid step in log sigma of the search for modes (a 5% step in sigma)
SCAN_MARGIN = 2.0  # the scan reaches this far (log sigma) beyond the stationary span
RULE_TOL = 1e-9  # agreement a region's rule and its refinement must reach
MAX_PANELS = 64  # panels per region beyond which the rule is not trusted
_GAUSS_LEGENDRE = np.polynomial.legendre.leggauss(QUADRATURE_NODES)  # nodes, weights on [-1, 1]


@dataclass(frozen=True, eq=False)
class NoiseQuadrature(ReadOnlyArrays):
    """Gauss-Legendre quadrature in ``u = log sigma`` of the noise's unnormalised posterior.

    The nodes come in panels of :data:`QUADRATURE_NODES` (one panel when the density has
    one mode), in increasing order; see the module docstring.

    Attributes
    ----------
    nodes, weights, log_density : ndarray, shape (K,)
        ``log_density`` is ``f(u)`` at each node (``-inf`` where it cannot be evaluated).
    modes : ndarray, shape (M, 2)
        Each kept mode's ``u`` and its share of the posterior mass (the mass between the
        density's lowest points separating it from its neighbours), in increasing ``u``.
    """

    nodes: np.ndarray
    weights: np.ndarray
    log_density: np.ndarray
    modes: np.ndarray | None = None

    @property
    def log_norm(self) -> float:
        """log of the integral of exp(f) over u: the normalising constant."""
        top = float(self.log_density.max())
        return top + float(np.log(np.sum(self.weights * np.exp(self.log_density - top))))

    def mixture(self, *, trim: bool = False) -> tuple[np.ndarray, np.ndarray]:
        """Normalised weights and noise sd values of the posterior's scale mixture.

        With ``trim`` the nodes where the density is below exp(-TAIL) of its peak are
        left out: the quadrature covers only where it is above, and such a node's weight
        is of order 1e-20 or less. The peak node is always kept, so the mixture is never
        empty.

        Returns
        -------
        weights, sigma : ndarray, shape (K,)
        """
        logf = self.log_density
        top = logf.max()
        keep = logf >= top - TAIL if trim else np.ones(len(logf), dtype=bool)
        weights = self.weights[keep] * np.exp(logf[keep] - top)
        return weights / weights.sum(), np.exp(self.nodes[keep])

    def sigma_cdf(self, points: int = 20001) -> np.ndarray:
        """The posterior cdf of the noise sd on a fine grid, shape (2, G): (sigma, cdf).

        log f is smooth in u, so its interpolating polynomial at a panel's Gauss-Legendre
        nodes (barycentric form, stable at these nodes) is accurate far below the printed
        digits; the cdf is its exponential integrated by the cumulative Simpson rule.
        Reading a quantile off the grid linearly errs by about h^2 f'/8 in probability:
        with 20001 points over the ~18 posterior sds of one panel, a few times 1e-8.
        Several panels each get their own grid; the cdf is flat across a gap between regions.
        """
        panels = len(self.nodes) // QUADRATURE_NODES
        if panels == 1:
            grid, dens = _panel_density(
                self.nodes, self.log_density, self.log_density.max(), points
            )
            cdf = _cumulative(dens, grid)
            return np.vstack([np.exp(grid), cdf / cdf[-1]])
        top = self.log_density.max()
        each = max(4001, points // panels)
        grids, cdfs, offset = [], [], 0.0
        for nodes, logf in zip(
            self._panels(self.nodes), self._panels(self.log_density), strict=True
        ):
            grid, dens = _panel_density(nodes, logf, top, each)
            cdf = offset + _cumulative(dens, grid)
            grids.append(grid)
            cdfs.append(cdf)
            offset = cdf[-1]
        cdf = np.concatenate(cdfs)
        return np.vstack([np.exp(np.concatenate(grids)), cdf / cdf[-1]])

    @staticmethod
    def _panels(values: np.ndarray) -> np.ndarray:
        return values.reshape(-1, QUADRATURE_NODES)


def _panel_density(nodes, logf, top, points):
    from scipy.interpolate import BarycentricInterpolator

    grid = np.linspace(nodes[0], nodes[-1], points)
    if not np.all(np.isfinite(logf)):
        return grid, np.interp(grid, nodes, np.exp(logf - top))
    # The interpolator orders the nodes at random to compute its weights: a fixed
    # generator keeps the last bits of the cdf, and so the printed numbers, repeatable.
    interp = BarycentricInterpolator(nodes, logf - top, rng=np.random.default_rng(0))
    return grid, np.exp(interp(grid))


def _cumulative(dens, grid):
    from scipy.integrate import cumulative_simpson

    return cumulative_simpson(dens, x=grid, initial=0.0)


def stationary_span(
    rss_near: float, rss_far: float, n: float, k: int, noise
) -> tuple[float, float]:
    """The span of ``u = log sigma`` holding every stationary point of the noise density.

    With the likelihood's data weight ``n`` (rows, times a power ``alpha`` if tempered),
    an InvGamma(a, b) noise prior (a = b = 0: Jeffreys) and ``m(sigma)`` in ``[0, k]`` the
    data's effective number of coefficients, ``f'(u) = 0`` means
    ``sigma^2 = (RSS(sigma) + 2 b) / (n + 2 a - m(sigma))``, where the residual sum of
    squares at the conditional mean, ``RSS(sigma)``, grows from ``rss_near`` (least
    squares) to ``rss_far`` (the prior centre's) as sigma grows. When ``n + 2 a - k`` is not
    positive the upper end is a guess; the scan extends beyond it while ``f`` rises.
    """
    a, b = noise.shape, noise.scale
    floor = 1e-300
    lo = 0.5 * np.log(max(rss_near + 2 * b, floor) / (n + 2 * a))
    hi = 0.5 * np.log(max(rss_far + 2 * b, floor) / max(n + 2 * a - k, 0.5))
    return float(lo), float(max(lo, hi))


def _maximise(f, u0: float) -> float:
    """Maximise a smooth unimodal function of one variable starting near u0."""
    from scipy import optimize  # lazily: 0.2 s of start-up for one call per fit

    step = 0.5
    a, b = u0 - step, u0 + step
    while f(a) > f(u0):
        a -= step
        step *= 2
    step = 0.5
    while f(b) > f(u0):
        b += step
        step *= 2
    res = optimize.minimize_scalar(lambda u: -f(u), bounds=(a, b), method="bounded",
                                   options={"xatol": 1e-10})  # fmt: skip
    return float(res.x)


def _scalar(logf: Callable) -> Callable:
    def f(u: float) -> float:
        value = float(logf(u))
        # nan or -inf: cannot be evaluated, never chosen (a finite floor keeps the searches'
        # arithmetic clean)
        return value if value > -1e300 else -1e300

    return f


def _many(logf: Callable, vectorised: bool) -> Callable:
    def f(u: np.ndarray) -> np.ndarray:
        values = logf(u) if vectorised else np.array([logf(x) for x in u])
        values = np.asarray(values, dtype=float)
        return np.where(np.isnan(values), -np.inf, values)

    return f


def _scan(f, fs, u_star: float, span) -> tuple[list[float], np.ndarray, np.ndarray]:
    """Every local maximum of ``f`` on the scan (refined), with the scan grid and values."""
    from scipy import optimize

    lo = min(span[0], u_star) - SCAN_MARGIN
    hi = max(span[1], u_star) + SCAN_MARGIN
    grid = np.arange(lo, hi + SCAN_STEP / 2, SCAN_STEP)
    vals = fs(grid)
    for _ in range(60):  # beyond the span the density falls; extend while it does not
        if not (np.isfinite(vals[-1]) and vals[-1] > min(vals[-2], vals.max() - TAIL)):
            break
        more = grid[-1] + SCAN_STEP * np.arange(1, 21)
        grid, vals = np.concatenate([grid, more]), np.concatenate([vals, fs(more)])
    for _ in range(60):
        if not (np.isfinite(vals[0]) and vals[0] > min(vals[1], vals.max() - TAIL)):
            break
        more = grid[0] - SCAN_STEP * np.arange(20, 0, -1)
        grid, vals = np.concatenate([more, grid]), np.concatenate([fs(more), vals])
    peaks = [u_star]
    inner = np.flatnonzero((vals[1:-1] >= vals[:-2]) & (vals[1:-1] > vals[2:])) + 1
    for j in inner:
        if not np.isfinite(vals[j]) or abs(grid[j] - u_star) <= SCAN_STEP:
            continue
        res = optimize.minimize_scalar(lambda u: -f(u), bounds=(grid[j - 1], grid[j + 1]),
                                       method="bounded", options={"xatol": 1e-10})  # fmt: skip
        if min(abs(res.x - u) for u in peaks) > 1e-6:
            peaks.append(float(res.x))
    return sorted(peaks), grid, vals


def _region(f, u_star: float, top: float) -> tuple[float, float]:
    """An interval around the mode ``u_star`` beyond whose ends ``f`` is below ``top - TAIL``."""
    peak = f(u_star)
    h = 1e-3
    curv = -(f(u_star + h) - 2 * peak + f(u_star - h)) / h**2
    sd = 1 / np.sqrt(curv) if curv > 0 else 1.0
    lo, hi = u_star - 3 * sd, u_star + 3 * sd
    return _reach(f, lo, -2 * sd, top - TAIL), _reach(f, hi, 2 * sd, top - TAIL)


REGION_STEPS = 50  # steps of 2 sd before they grow; then at most REGION_GROWN growing steps
REGION_GROWN = 200


def _reach(f, u: float, step: float, below: float) -> float:
    """Move ``u`` by ``step`` until ``f(u) <= below``: in steps of two sds at first (as the
    rule always did), then in steps growing by half each time, and never without end: a
    density that does not fall off within about e^(1e36) of the mode is an error."""
    for i in range(REGION_STEPS + REGION_GROWN):
        if not f(u) > below:
            return u
        u += step
        if i >= REGION_STEPS:
            step *= 1.5
        if not math.isfinite(u):
            break
    raise InputError(
        "the noise sd's posterior does not fall off away from its mode, so it cannot be "
        "integrated: state the noise sd or a range for it ([noise] in the prior file), or "
        "check the priors' scales against the data's"
    )


def _panels(lo: float, hi: float, count: int) -> tuple[np.ndarray, np.ndarray]:
    """Nodes and weights of ``count`` equal Gauss-Legendre panels covering [lo, hi]."""
    x, wts = _GAUSS_LEGENDRE
    if count == 1:  # written as it always was, so one-mode numbers keep their last bits
        return (hi - lo) / 2 * x + (hi + lo) / 2, wts * (hi - lo) / 2
    edges = np.linspace(lo, hi, count + 1)
    half = np.diff(edges)[:, None] / 2
    nodes = half * x + (edges[:-1, None] + half)
    return nodes.ravel(), (half * wts).ravel()


def _moments(nodes, weights, logf, top) -> tuple[float, float]:
    mass = weights * np.exp(logf - top)
    total = float(mass.sum())
    return total, float(mass @ nodes) / total if total > 0 else 0.0


def _checked_rule(fs, scan, lo: float, hi: float, top: float):
    """The rule on [lo, hi] whose refinement agrees with it (see the module docstring).

    The rule's values come from ``fs``; the refinements are judged with ``scan``.
    """
    count = 1
    nodes, weights = _panels(lo, hi, count)
    logf = fs(nodes)
    while True:
        fine_nodes, fine_weights = _panels(lo, hi, 2 * count)
        fine_logf = scan(fine_nodes)
        mass, mean = _moments(nodes, weights, logf, top)
        fine_mass, fine_mean = _moments(fine_nodes, fine_weights, fine_logf, top)
        scale = max(fine_mass, np.finfo(float).tiny)
        if abs(mass - fine_mass) <= RULE_TOL * scale and abs(mean - fine_mean) <= RULE_TOL * (
            hi - lo
        ):
            return nodes, weights, logf
        count *= 2
        if count > MAX_PANELS:
            raise InputError(
                f"the noise sd's posterior could not be integrated to {RULE_TOL:g} over log "
                f"sigma in [{lo:.6g}, {hi:.6g}] (rule and refinement disagree at "
                f"{MAX_PANELS} panels): no exact result is given"
            )
        nodes, weights = fine_nodes, fine_weights
        logf = fs(nodes) if scan is not fs else fine_logf


def log_sigma_quadrature(
    logf: Callable,
    u0: float,
    *,
    span: tuple[float, float] | None = None,
    vectorised: bool = False,
    scan: Callable | None = None,
) -> NoiseQuadrature:
    """Gauss-Legendre panels covering where ``logf`` (of u = log sigma) is within TAIL of its peak.

    Parameters
    ----------
    logf : callable
        The unnormalised log density of u; -inf (or nan) far outside is never chosen.
    u0 : float
        Where the climb to a maximum starts (the least-squares residual's log sd).
    span : (float, float), optional
        Where every stationary point lies (:func:`stationary_span`); the scan for modes
        covers it with a margin. Default: ``u0`` alone.
    vectorised : bool
        ``logf`` takes an array of u.
    scan : callable, optional
        ``logf`` on an array of u, equal to it to rounding and cheaper: used for the scan
        and to judge refinements, never for the nodes of the rule returned.

    Raises
    ------
    InputError
        When the density cannot be evaluated at its peak, or no rule reaches RULE_TOL.
    """
    f, fs = _scalar(logf), _many(logf, vectorised)
    cheap = fs if scan is None else _many(scan, True)
    u_star = _maximise(f, u0)
    peaks, grid, vals = _scan(f, cheap, u_star, span if span is not None else (u0, u0))
    heights = np.array([f(u) for u in peaks])
    top = float(heights.max())
    if not top > -1e300:
        raise InputError(f"the noise sd's posterior density cannot be evaluated near sigma = "
                         f"{np.exp(u_star):.6g}")  # fmt: skip
    kept = [u for u, h in zip(peaks, heights, strict=True) if h >= top - TAIL]
    if kept == [u_star]:
        # The climb from u0 found the only mode that matters: the one-region rule as always.
        nodes, weights, logf_nodes = _checked_rule(fs, cheap, *_region(f, u_star, top), top)
        return NoiseQuadrature(nodes, weights, logf_nodes, np.array([[u_star, 1.0]]))
    regions: list[list[float]] = []
    for u in kept:
        lo, hi = _region(f, u, top)
        if regions and lo <= regions[-1][1]:
            regions[-1][1] = max(regions[-1][1], hi)
        else:
            regions.append([lo, hi])
    parts = [_checked_rule(fs, cheap, lo, hi, top) for lo, hi in regions]
    nodes, weights, logf_nodes = (np.concatenate([p[i] for p in parts]) for i in range(3))
    modes = _mode_masses(kept, grid, vals, nodes, weights, logf_nodes)
    return NoiseQuadrature(nodes, weights, logf_nodes, modes)


def _mode_masses(kept, grid, vals, nodes, weights, logf) -> np.ndarray:
    """Each kept mode's u and mass, split at the lowest scan point between neighbours."""
    cuts = []
    for left, right in zip(kept[:-1], kept[1:], strict=True):
        inside = (grid > left) & (grid < right)
        cuts.append(grid[inside][np.argmin(vals[inside])] if inside.any() else (left + right) / 2)
    mass = weights * np.exp(logf - logf.max())
    share = np.bincount(np.searchsorted(np.array(cuts), nodes), weights=mass, minlength=len(kept))
    return np.column_stack([kept, share / share.sum()])
