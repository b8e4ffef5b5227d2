"""The component labels of mixture priors in the Gibbs sampler (:mod:`bayes.engine.gibbs`).

A mixed coordinate (:class:`bayes.engine.mixture_prior.MixedCoordinate`) enters each sweep as
one diagonal normal row, like a Laplace or Student-t coordinate's mixing row: given its label
``z = k`` a normal component gives the row ``(gamma_j - c_k) / s_k``; a Laplace component
``(gamma_j - c_k) / tau`` with its own mixing variance ``tau^2`` (drawn as the sampler draws a
Laplace coordinate's). Given ``gamma_j`` the label is categorical,
``P(z = k | gamma_j) ∝ w_k f_k(gamma_j)`` (the mixing variance integrated out), and the
mixing variance is drawn given the label: together a draw from their joint conditional.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from bayes.engine.mixture_prior import MixedCoordinate


@dataclass(frozen=True, eq=False)
class PriorState:
    """The prior-conditional state of a sweep: one diagonal normal row per mixing coordinate.

    Attributes
    ----------
    prec : ndarray
        The rows' precisions (Laplace, Student-t: the mixing precisions; a mixture: its chosen
        component's).
    loc : ndarray
        The rows' centres (a mixture: its chosen component's centre).
    """

    prec: np.ndarray
    loc: np.ndarray


def draw_label(rng: np.random.Generator, log_p: np.ndarray) -> int:
    """A draw from the categorical distribution with unnormalised log probabilities ``log_p``."""
    p = np.exp(log_p - log_p.max())
    return min(int(np.searchsorted(np.cumsum(p), rng.random() * p.sum(), side="right")), len(p) - 1)


def mixed_rows(
    mixed: tuple[MixedCoordinate, ...],
    rng: np.random.Generator,
    gamma: np.ndarray | None,
    laplace_precision: Callable,
) -> tuple[np.ndarray, np.ndarray]:
    """Precisions and centres of the mixed coordinates' rows.

    Given ``gamma`` the labels are drawn from their conditional; with ``gamma`` None from their
    prior weights, and a Laplace component's mixing variance from its prior (dispersed starts).
    ``laplace_precision(rng, b, d)`` draws ``1 / tau^2`` given the offset ``d`` from the centre.
    """
    prec, loc = np.empty(len(mixed)), np.empty(len(mixed))
    for i, m in enumerate(mixed):
        if gamma is None:
            k = draw_label(rng, m.log_weights)
        else:
            k = draw_label(rng, m.log_component_density(gamma[m.index]))
        b = m.scale[k]
        loc[i] = m.center[k]
        if not m.laplace[k]:
            prec[i] = 1.0 / b**2
        elif gamma is None:
            prec[i] = 1.0 / rng.exponential(2 * b**2)
        else:
            prec[i] = laplace_precision(rng, np.array([b]), np.array([gamma[m.index] - loc[i]]))[0]
    return prec, loc


def mixed_prior_draws(
    mixed: tuple[MixedCoordinate, ...], rng: np.random.Generator, out: np.ndarray
) -> None:
    """Fill the mixed coordinates' columns of ``out`` (draws, p + 1) with prior draws."""
    draws = out.shape[0]
    for m in mixed:
        w = np.exp(m.log_weights)
        label = rng.choice(len(w), size=draws, p=w / w.sum())
        z = np.where(m.laplace[label], rng.laplace(size=draws), rng.standard_normal(draws))
        out[:, m.index] = m.center[label] + m.scale[label] * z
