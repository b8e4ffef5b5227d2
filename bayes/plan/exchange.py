"""The search for the best K runs among the candidates (repeats allowed).

Fedorov's exchange (Fedorov, 1972, Theory of Optimal Experiments), in the form that visits the
runs in turn (Cook and Nachtsheim, 1980, Technometrics): each run is taken out and the candidate
that adds most in its place put in, until a whole pass changes nothing. Every step is a rank-one
update of ``M_g^-1`` at each noise node (Sherman and Morrison), and of the candidates' quadratic
forms ``x' M_g^-1 x`` (and ``c' M_g^-1 x`` for c-optimality): a step costs O(N k G), not a
refactorisation per candidate. Restarted from a greedy start and from random ones
(``numpy.random.SeedSequence``); a candidate set with few enough designs is enumerated instead.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from itertools import combinations_with_replacement, islice

import numpy as np

from bayes.plan.criteria import batch_values, information
from bayes.plan.nodes import NoiseNodes

#: Enumerate every multiset of K candidates when there are at most this many.
ENUMERATE_LIMIT = 20_000
#: Passes of the exchange before it stops regardless (a pass that changes nothing stops it).
MAX_PASSES = 50
RESTARTS = 8
SEED = 20261214


def designs_count(n: int, k: int) -> int:
    """Multisets of ``k`` runs from ``n`` candidates: C(n + k - 1, k)."""
    return math.comb(n + k - 1, k)


class _State:
    """``M_g^-1`` of a design and the candidates' forms under it, updated one run at a time."""

    def __init__(self, nodes: NoiseNodes, C: np.ndarray, kind: str, c, design) -> None:
        self.w, self.s2, self.C, self.kind = nodes.weights, nodes.sigma**2, C, kind
        self.c = np.zeros(C.shape[1]) if c is None else np.asarray(c, dtype=float)
        self.design = list(design)
        M = information(nodes, C[self.design]) if self.design else nodes.precisions.copy()
        self.Minv = np.linalg.inv(M)
        self.Q = np.einsum("ni,gij,nj->ng", C, self.Minv, C, optimize=True)
        self.r = np.einsum("ni,gij,j->ng", C, self.Minv, self.c, optimize=True)
        self.v = np.einsum("i,gij,j->g", self.c, self.Minv, self.c)

    def _update(self, i: int, sign: float) -> None:
        x = self.C[i]
        b = self.Minv @ x  # (G, k)
        den = self.s2 + sign * self.Q[i]
        cb = b @ self.c
        self.Minv = self.Minv - sign * b[:, :, None] * b[:, None, :] / den[:, None, None]
        Cb = self.C @ b.T  # (N, G)
        self.Q = self.Q - sign * Cb**2 / den
        self.r = self.r - sign * Cb * (cb / den)
        self.v = self.v - sign * cb**2 / den

    def add(self, i: int) -> None:
        self.put(len(self.design), i)

    def put(self, j: int, i: int) -> None:
        """Add candidate ``i`` as the j-th run."""
        self._update(i, 1.0)
        self.design.insert(j, i)

    def remove(self, j: int) -> int:
        """Take out the j-th run of the design; returns its candidate."""
        i = self.design.pop(j)
        self._update(i, -1.0)
        return i

    def scores(self) -> np.ndarray:
        """The criterion's rise from adding each candidate, shape (N,): for D, ``sum_g w_g
        log(1 + x'M^-1 x / s2)``; for c, the fall in ``sum_g w_g c'M^-1 c``."""
        if self.kind == "d":
            return np.log1p(self.Q / self.s2) @ self.w
        return (self.r**2 / (self.s2 + self.Q)) @ self.w


@dataclass(frozen=True)
class Search:
    """The best design found.

    Attributes
    ----------
    design : tuple of int
        Candidate indices, in order of value (each the best addition to those before it).
    gains : tuple of float
        Each run's rise in the criterion, in that order (D: nats; c: fall in variance).
    value : float
        The criterion (D: ``sum_g w_g log det M_g``; c: minus the expected variance).
    method : {"exchange", "enumeration"}
    restarts : int
    values : tuple of float
        The value each restart reached (exchange).
    """

    design: tuple[int, ...]
    gains: tuple[float, ...]
    value: float
    method: str
    restarts: int = 0
    values: tuple[float, ...] = ()


def exchange(nodes: NoiseNodes, C: np.ndarray, start, kind: str = "d", c=None) -> list[int]:
    """Improve the design ``start`` (candidate indices) by exchanges until a pass changes
    nothing; returns the final design."""
    state = _State(nodes, C, kind, c, start)
    for _ in range(MAX_PASSES):
        changed = False
        for j in range(len(state.design)):
            i = state.design[j]
            state.remove(j)
            scores = state.scores()
            best = int(np.argmax(scores))
            tol = 1e-10 * max(1.0, abs(float(scores[i])))
            pick = best if scores[best] > scores[i] + tol else i
            state.put(j, pick)
            changed |= pick != i
        if not changed:
            break
        state = _State(nodes, C, kind, c, state.design)  # clear the updates' rounding
    return state.design


def greedy(nodes: NoiseNodes, C: np.ndarray, runs: int, kind: str = "d", c=None,
           base=()) -> list[int]:  # fmt: skip
    """``base`` and then, one at a time, the candidate that adds most, up to ``runs`` runs."""
    state = _State(nodes, C, kind, c, base)
    while len(state.design) < runs:
        state.add(int(np.argmax(state.scores())))
    return state.design


def ordered(nodes: NoiseNodes, C: np.ndarray, design, kind: str = "d", c=None):
    """The runs of ``design`` in order of value: each the best addition to those before it
    among those left; with each one's rise in the criterion (D: nats, half the log det's)."""
    state = _State(nodes, C, kind, c, ())
    left, order, gains = list(design), [], []
    while left:
        scores = state.scores()
        pick = max(left, key=lambda i: scores[i])
        gains.append(float(scores[pick]) * (0.5 if kind == "d" else 1.0))
        state.add(pick)
        left.remove(pick)
        order.append(pick)
    return tuple(order), tuple(gains)


def value(nodes: NoiseNodes, C: np.ndarray, design, kind: str = "d", c=None) -> float:
    """The criterion of one design (see :class:`Search`)."""
    return float(batch_values(nodes, C, np.asarray([list(design)]), kind, c)[0])


def enumerate_best(nodes: NoiseNodes, C: np.ndarray, runs: int, kind: str = "d",
                   c=None) -> tuple[tuple[int, ...], float]:  # fmt: skip
    """The best design by trying every multiset of ``runs`` candidates (ties: the first)."""
    best, best_value = None, -np.inf
    combos = combinations_with_replacement(range(len(C)), runs)
    while True:
        chunk = np.array(list(islice(combos, 4096)), dtype=int).reshape(-1, runs)
        if not len(chunk):
            break
        vals = batch_values(nodes, C, chunk, kind, c)
        i = int(np.argmax(vals))
        if vals[i] > best_value:
            best, best_value = tuple(int(v) for v in chunk[i]), float(vals[i])
    return best, best_value


def search(nodes: NoiseNodes, C: np.ndarray, runs: int, kind: str = "d", c=None, *,
           restarts: int = RESTARTS, seed: int = SEED, start=None,
           enumerate_limit: int = ENUMERATE_LIMIT) -> Search:  # fmt: skip
    """The best ``runs`` runs among the candidates ``C`` (scaled rows).

    Enumeration when there are at most ``enumerate_limit`` designs; otherwise the exchange from
    a greedy start (after ``start``, a smaller design to extend, when given) and from
    ``restarts - 1`` random ones, the best kept.
    """
    if designs_count(len(C), runs) <= enumerate_limit:
        design, best = enumerate_best(nodes, C, runs, kind, c)
        order, gains = ordered(nodes, C, design, kind, c)
        return Search(order, gains, best, "enumeration")
    rng = np.random.default_rng(np.random.SeedSequence(seed))
    starts = [greedy(nodes, C, runs, kind, c, base=start or ())]
    starts += [list(rng.integers(0, len(C), runs)) for _ in range(max(restarts, 1) - 1)]
    found = [exchange(nodes, C, s, kind, c) for s in starts]
    values = [value(nodes, C, d, kind, c) for d in found]
    best = int(np.argmax(values))
    order, gains = ordered(nodes, C, found[best], kind, c)
    return Search(order, gains, values[best], "exchange", len(starts), tuple(values))
