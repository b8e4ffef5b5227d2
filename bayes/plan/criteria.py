"""What a set of runs is worth, before it is made: the Bayesian design criteria in closed form.

For runs with scaled model rows ``Z`` and today's conditional posterior precision ``P_g`` at noise
node ``g`` (:mod:`bayes.plan.nodes`), the precision after the runs is
``M_g = P_g + Z'Z / sigma_g^2`` whatever their outcomes. Then (Chaloner and Verdinelli, 1995,
Statistical Science):

* D-optimality maximises ``sum_g w_g log det M_g``; half of its rise over ``log det P_g`` is the
  expected information gain about the coefficients in nats given the noise sd (the mutual
  information of coefficients and new outcomes for a known sd), averaged over the noise nodes;
* c-optimality minimises ``sum_g w_g c' M_g^-1 c``, the expected posterior variance of the
  contrast ``c' gamma`` given the noise sd, averaged over the nodes.
"""

from __future__ import annotations

import numpy as np

from bayes.plan.nodes import NoiseNodes

#: Designs evaluated at once by :func:`batch_values` (bounds the memory of enumeration).
BATCH = 512


def information(nodes: NoiseNodes, Z: np.ndarray) -> np.ndarray:
    """``M_g = P_g + Z'Z / sigma_g^2`` for every node, shape (G, k, k)."""
    Z = np.asarray(Z, dtype=float).reshape(-1, nodes.k)
    return nodes.precisions + (Z.T @ Z)[None] / (nodes.sigma**2)[:, None, None]


def logdets(M: np.ndarray) -> np.ndarray:
    """log det of each positive-definite matrix of ``M`` (..., k, k), by Cholesky."""
    L = np.linalg.cholesky(M)
    return 2.0 * np.sum(np.log(np.diagonal(L, axis1=-2, axis2=-1)), axis=-1)


def d_value(nodes: NoiseNodes, Z: np.ndarray) -> float:
    """The D-criterion ``sum_g w_g log det M_g`` of the runs ``Z`` (scaled rows)."""
    return float(nodes.weights @ logdets(information(nodes, Z)))


def gain_nats(nodes: NoiseNodes, Z: np.ndarray) -> float:
    """Expected information gain of the runs about the coefficients, nats (see the module)."""
    return 0.5 * (d_value(nodes, Z) - float(nodes.weights @ logdets(nodes.precisions)))


def c_value(nodes: NoiseNodes, Z: np.ndarray, c: np.ndarray) -> float:
    """Expected posterior variance of ``c' gamma`` after the runs (averaged over the nodes)."""
    M = information(nodes, Z)
    u = np.linalg.solve(M, np.broadcast_to(c, (len(M), len(c)))[..., None])[..., 0]
    return float(nodes.weights @ (u @ c))


def variances(nodes: NoiseNodes, Z: np.ndarray | None, A: np.ndarray) -> np.ndarray:
    """Posterior variance of each scaled contrast (row of ``A``) given sigma, averaged over the
    nodes: after the runs ``Z``, or today when ``Z`` is None. Shape (len(A),)."""
    A = np.atleast_2d(np.asarray(A, dtype=float))
    if Z is None:
        per = np.einsum("ai,gij,aj->ga", A, nodes.covs, A)
    else:
        M = information(nodes, Z)
        S = np.linalg.solve(M, np.broadcast_to(A.T, (len(M), *A.T.shape)))
        per = np.einsum("ai,gia->ga", A, S)
    return nodes.weights @ per


def conditional_variances(nodes: NoiseNodes, Z: np.ndarray, c: np.ndarray):
    """``(c' C_g c, c' M_g^-1 c)`` at each node: today's and after the runs, shape (G,) each."""
    today = np.einsum("i,gij,j->g", c, nodes.covs, c)
    M = information(nodes, Z)
    u = np.linalg.solve(M, np.broadcast_to(c, (len(M), len(c)))[..., None])[..., 0]
    return today, u @ c


def batch_values(nodes: NoiseNodes, C: np.ndarray, designs: np.ndarray, kind: str,
                 c: np.ndarray | None = None) -> np.ndarray:  # fmt: skip
    """The criterion of many designs at once, larger better (c: minus the variance).

    Parameters
    ----------
    C : ndarray, shape (N, k)
        Scaled rows of the candidates.
    designs : ndarray of int, shape (B, K)
        Candidate indices of each design.
    kind : {"d", "c"}
    """
    out = np.empty(len(designs))
    s2 = (nodes.sigma**2)[None, :, None, None]
    for start in range(0, len(designs), BATCH):
        Z = C[designs[start : start + BATCH]]  # (b, K, k)
        M = nodes.precisions[None] + np.einsum("bki,bkj->bij", Z, Z)[:, None] / s2
        if kind == "d":
            out[start : start + BATCH] = logdets(M) @ nodes.weights
        else:
            rhs = np.broadcast_to(c, (*M.shape[:2], len(c)))[..., None]
            u = np.linalg.solve(M, rhs)[..., 0]
            out[start : start + BATCH] = -((u @ c) @ nodes.weights)
    return out
