"""Whether a Gibbs sampler's chains cross where they must: between the noise sd's modes, and
between the components of a mixture prior.

The Gibbs sampler moves the noise sd given the coefficients and the coefficients given the
noise sd. Where precise data meet confident priors that contradict them, ``p(log sigma | y)``
has two modes (a small noise level where the data win, a large one where the priors do) with a
valley between them that such conditional moves rarely cross: each chain stays in the mode it
reaches first, and its R-hat and effective sample sizes look healthy. The exact engine finds
every mode of the noise posterior for Gaussian priors (:mod:`bayes.engine.noise_rule`), so a
sampled fit runs it (:func:`reference_noise_modes`) on its own priors when they are Gaussian,
and otherwise on a Gaussian stand-in of them (each coordinate normal with the prior's own
centre and variance): where two modes of noticeable mass appear, the draws are sorted into
the modes' basins (:func:`basin_visits`) and judged.

Likewise with a mixture prior of well-separated components the chains may not switch a
coefficient's component label. Given the coefficient the label is categorical
(:mod:`bayes.engine.labels`), so its conditional probabilities are computed from the
coefficient draws (:func:`label_switching`): the R-hat of the indicators of the most
probable component and how often that component changes between successive draws.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from bayes.errors import InputError
from bayes.problem import DataFactor, ScaledPrior

NOISE_MODE_MASS = 0.01  # posterior mass from which a mode of the noise sd is noticeable
MIN_CROSSINGS = 10  # fewer moves between modes (or labels) cannot estimate their shares
SHARE_MCSE = 4.0  # an exact mode's share in the draws off by more MCSEs than this: a miss


@dataclasses.dataclass(frozen=True)
class NoiseModes:
    """The noise posterior's modes a sampled fit is judged against.

    Attributes
    ----------
    modes : tuple of (float, float)
        ``(sigma, mass)`` of each mode of noticeable mass, in increasing sigma.
    cuts : tuple of float
        The noise sd between neighbouring modes at which their basins meet (the density's
        lowest point between them), one fewer than ``modes``.
    exact : bool
        True when the masses are the sampled posterior's own (Gaussian priors); False for a
        Gaussian stand-in of non-Gaussian priors (masses indicative only).
    """

    modes: tuple[tuple[float, float], ...]
    cuts: tuple[float, ...]
    exact: bool


def gaussian_stand_in(prior: ScaledPrior, mixed: tuple = ()) -> ScaledPrior | None:
    """``prior`` with each Laplace, Student-t (df > 2) and mixed coordinate a normal of the
    same centre and variance (a Student-t with df <= 2 has none: left flat); None when no
    coordinate is then normal (one noise mode: nothing to judge)."""
    family, mean = list(prior.family), np.array(prior.mean)
    rows = [np.asarray(prior.root_precision, dtype=float).reshape(-1, len(family))]

    def normal(j: int, centre: float, variance: float) -> None:
        family[j], mean[j] = "normal", centre
        row = np.zeros((1, len(family)))
        row[0, j] = 1.0 / math.sqrt(variance)
        rows.append(row)

    for j, f in enumerate(prior.family):
        if f == "laplace":
            normal(j, mean[j], 2.0 * prior.scale[j] ** 2)
        elif f == "student_t" and prior.df[j] > 2:
            normal(j, mean[j], prior.scale[j] ** 2 * prior.df[j] / (prior.df[j] - 2))
        elif f == "student_t":
            family[j] = "flat"
    for m in mixed:
        w = np.exp(m.log_weights - np.max(m.log_weights))
        w = w / w.sum()
        var = np.where(m.laplace, 2.0, 1.0) * m.scale**2
        centre = float(w @ m.center)
        normal(m.index, centre, float(w @ (var + (m.center - centre) ** 2)))
    if "normal" not in family:
        return None
    W = np.vstack(rows)
    for j, f in enumerate(family):
        if f == "flat":
            W[:, j] = 0.0
    return dataclasses.replace(
        prior, family=tuple(family), mean=mean, root_precision=W,
        scale=np.full(len(family), np.nan), df=np.full(len(family), np.nan),
    )  # fmt: skip


def reference_noise_modes(
    factor: DataFactor, prior: ScaledPrior, mixed: tuple = ()
) -> NoiseModes | None:
    """The noticeable modes of the noise posterior under ``prior`` (or its Gaussian stand-in).

    None when the noise sd is known, when one mode carries the mass, or when the stand-in's
    noise posterior cannot be integrated (then there is nothing reliable to judge by).
    """
    from bayes.engine.quadrature import noise_quadrature

    if prior.noise.known:
        return None
    exact = prior.gaussian_only and not mixed
    stand_in = prior if exact else gaussian_stand_in(prior, mixed)
    if stand_in is None or all(f == "flat" for f in stand_in.family):
        return None
    try:
        quad = noise_quadrature(factor, stand_in)
    except (InputError, ValueError, np.linalg.LinAlgError):  # no reference: nothing to judge by
        return None
    modes = quad.modes if quad.modes is not None else np.zeros((0, 2))
    big = [(float(u), float(m)) for u, m in modes if m > NOISE_MODE_MASS]
    if len(big) < 2:
        return None
    cuts = []
    for (left, _), (right, _) in zip(big[:-1], big[1:], strict=True):
        inside = (quad.nodes > left) & (quad.nodes < right)
        if inside.any():  # one region: the density's lowest node between the two peaks
            cuts.append(float(quad.nodes[inside][np.argmin(quad.log_density[inside])]))
        else:  # separate regions: the gap between them, where the density is negligible
            below = quad.nodes[quad.nodes <= left].max()
            above = quad.nodes[quad.nodes >= right].min()
            gap = (quad.nodes > below) & (quad.nodes < above)
            cuts.append((below + above) / 2 if not gap.any() else float(np.mean(quad.nodes[gap])))
    return NoiseModes(
        tuple((math.exp(u), m) for u, m in big), tuple(math.exp(c) for c in cuts), exact
    )


@dataclasses.dataclass(frozen=True)
class BasinVisits:
    """How the draws of the noise sd share themselves between the modes' basins.

    Attributes
    ----------
    share : ndarray, shape (M,)
        Fraction of all draws in each mode's basin.
    mcse : ndarray, shape (M,)
        Monte Carlo standard error of each share (arviz, the basin indicator's mean); inf
        when the chains never left one basin while another carries mass.
    crossings : int
        Moves from one basin to another between successive draws, over all chains.
    missed : bool
        True when the draws do not reflect the modes: fewer than :data:`MIN_CROSSINGS`
        crossings, or (exact masses) a share more than :data:`SHARE_MCSE` MCSEs from its mass.
    """

    share: np.ndarray
    mcse: np.ndarray
    crossings: int
    missed: bool


def basin_visits(sigma_draws: np.ndarray, reference: NoiseModes) -> BasinVisits:
    """Sort the noise draws (chains, draws) into the basins of ``reference``'s modes."""
    from bayes.engine.diagnostics import indicator_mcse

    sigma = np.asarray(sigma_draws, dtype=float)
    basin = np.searchsorted(np.array(reference.cuts), sigma)  # (chains, draws)
    crossings = int(np.sum(basin[:, 1:] != basin[:, :-1]))
    count = len(reference.modes)
    share = np.array([np.mean(basin == i) for i in range(count)])
    mcse = np.array([indicator_mcse(basin == i) for i in range(count)])
    mass = np.array([m for _, m in reference.modes])
    missed = crossings < MIN_CROSSINGS
    if reference.exact:
        missed |= bool(np.any(np.abs(share - mass) > SHARE_MCSE * mcse))
    return BasinVisits(share, mcse, crossings, bool(missed))


@dataclasses.dataclass(frozen=True)
class LabelSwitching:
    """How the chains move between a mixture prior's components, per mixed coefficient.

    Attributes
    ----------
    columns : tuple of str
    switch_rate : ndarray
        Fraction of successive draws whose most probable component changes.
    r_hat : ndarray
        Split R-hat (arviz) of the label indicators (the most probable component given the
        coefficient is component k), the worst over the components (nan when constant).
    stuck : ndarray of bool
        The chains disagree (R-hat above :data:`bayes.engine.diagnostics.R_HAT_MAX`), or
        the component probabilities vary across draws (several components in play) while
        fewer than :data:`MIN_CROSSINGS` switches happen.
    """

    columns: tuple[str, ...]
    switch_rate: np.ndarray
    r_hat: np.ndarray
    stuck: np.ndarray


def label_switching(gamma: np.ndarray, mixed: tuple) -> LabelSwitching:
    """Judge the label moves of each mixed coordinate from the scaled draws (chains, draws, k)."""
    from bayes.engine.diagnostics import R_HAT_MAX, chains_r_hat

    rates, hats, stuck = [], [], []
    for m in mixed:
        terms = m.log_component_density(gamma[..., m.index])  # (chains, draws, K)
        prob = np.exp(terms - terms.max(axis=-1, keepdims=True))
        prob /= prob.sum(axis=-1, keepdims=True)
        best = np.argmax(prob, axis=-1)
        switches = int(np.sum(best[:, 1:] != best[:, :-1]))
        rates.append(switches / max(best[:, 1:].size, 1))
        in_play = np.mean(prob, axis=(0, 1))
        varied = int(np.sum(in_play > NOISE_MODE_MASS)) > 1
        hat = [chains_r_hat(best == k) for k in range(prob.shape[-1])]
        r = max((h for h in hat if not math.isnan(h)), default=math.nan)
        hats.append(r)
        stuck.append(bool(r > R_HAT_MAX) or (varied and switches < MIN_CROSSINGS))
    return LabelSwitching(
        tuple(m.column for m in mixed), np.array(rates), np.array(hats), np.array(stuck)
    )


def crossing_fields(factor: DataFactor, prior: ScaledPrior, gamma, mixed: tuple = ()) -> dict:
    """The :class:`bayes.engine.posterior.DrawsPosterior` fields that record what the chains
    are judged against: the noise modes (and basins) and, with mixture priors, the labels'
    moves (``gamma``: the scaled draws, chains x draws x k)."""
    out: dict = {}
    ref = reference_noise_modes(factor, prior, mixed)
    if ref is not None:
        out.update(noise_modes=ref.modes, noise_cuts=ref.cuts, noise_modes_exact=ref.exact)
    if mixed:
        lab = label_switching(np.asarray(gamma), mixed)
        out["label_switching"] = tuple(
            (c, float(r), float(h), bool(s))
            for c, r, h, s in zip(lab.columns, lab.switch_rate, lab.r_hat, lab.stuck, strict=True)
        )
    return out


def crossing_diagnostics(post) -> dict:
    """The diagnostics fields of a sampled posterior's crossing checks (none when it has
    nothing to judge): ``noise_modes_not_crossed`` with ``noise_mode_check``, and
    ``labels_not_switched`` (the stuck columns) with ``label_switching``."""
    out: dict = {}
    if post.noise_modes:
        ref = NoiseModes(post.noise_modes, post.noise_cuts, post.noise_modes_exact)
        v = basin_visits(post.sigma_draws, ref)
        out["noise_modes_not_crossed"] = v.missed
        out["noise_mode_check"] = {
            "exact_masses": ref.exact, "crossings": v.crossings,
            "sigma": [s for s, _ in ref.modes], "mass": [m for _, m in ref.modes],
            "share_of_draws": v.share.tolist(), "mcse_share": v.mcse.tolist(),
        }  # fmt: skip
    if post.label_switching:
        out["labels_not_switched"] = [c for c, _, _, stuck in post.label_switching if stuck]
        out["label_switching"] = [
            {"column": c, "switch_rate": r, "r_hat": h, "stuck": stuck}
            for c, r, h, stuck in post.label_switching
        ]
    return out


def crossing_arrays(post) -> dict:
    """The crossing fields of a sampled posterior as arrays for its fit folder's npz."""
    out: dict = {}
    if post.noise_modes:
        out["noise_modes"] = np.array(post.noise_modes, dtype=float).reshape(-1, 2)
        out["noise_cuts"] = np.array(post.noise_cuts, dtype=float)
        out["noise_modes_exact"] = np.array(float(post.noise_modes_exact))
    if post.label_switching:
        index = [post.names.index(r[0]) for r in post.label_switching]  # numbers only in npz
        out["label_index"] = np.array(index, dtype=np.int64)
        out["label_switching"] = np.array([r[1:] for r in post.label_switching], dtype=float)
    return out


def crossing_fields_of(z) -> dict:
    """:func:`crossing_arrays` read back (a fit folder saved before they existed: none)."""
    out: dict = {}
    if "noise_modes" in z and "noise_cuts" in z:
        modes = np.asarray(z["noise_modes"], dtype=float).reshape(-1, 2)
        cuts = np.asarray(z["noise_cuts"], dtype=float).reshape(-1)
        if len(cuts) == len(modes) - 1 and np.all(np.isfinite(modes)):
            out["noise_modes"] = tuple((float(s), float(m)) for s, m in modes)
            out["noise_cuts"] = tuple(float(c) for c in cuts)
            out["noise_modes_exact"] = (
                bool(z["noise_modes_exact"]) if "noise_modes_exact" in z else False
            )
    if "label_index" in z and "label_switching" in z:
        rows = np.asarray(z["label_switching"], dtype=float).reshape(-1, 3)
        index = np.asarray(z["label_index"]).reshape(-1).astype(int)
        names = [str(c) for c in z["names"]]
        if len(index) == len(rows) and np.all((index >= 0) & (index < len(names))):
            columns = [names[i] for i in index]
            out["label_switching"] = tuple(
                (c, float(r), float(h), bool(s)) for c, (r, h, s) in zip(columns, rows, strict=True)
            )
    return out
