"""The noise statement's record: its expert and rationale, and several experts' noise pooled.

A ``[noise]`` table may name who said it and why (``expert``, ``rationale``). A pooled noise
prior, as ``elicit pool`` writes it, holds the pooled ``shape`` and ``scale`` with ``pool =
"linear" | "log"`` and the experts' own noise statements as ``[[noise.statement]]`` tables (the
keys of a ``[noise]`` table, without ``pool`` and ``statement``); its values are taken as
written.

Pooling the experts' inverse-gamma priors on the variance ``sigma^2``:

- **log**: the normalised weighted geometric mean of the densities is itself inverse gamma,
  exactly: shape ``sum_i w_i (a_i + 1) - 1`` and scale ``sum_i w_i b_i`` (weights sum to one).
- **linear**: the weighted mixture, matched back to an inverse gamma by its 5% and 95%
  quantiles of the sd (read as a stated 90% range, :func:`elicit.convert.noise_from_range`).

Known sds pool only when they are all equal (a mixture of known values is not a known value).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import replace
from typing import Any

import numpy as np

from elicit import convert
from elicit.errors import InputError
from elicit.fields import FieldReader
from elicit.pool import DEFAULT_METHOD, METHODS
from elicit.spec import NoisePrior

NOISE_RECORD_KEYS = frozenset({"expert", "rationale", "pool", "statement"})
_PAIR = (0.05, 0.95)


def noise_record(source: str, table: Any, parse_noise: Callable[..., NoisePrior]) -> NoisePrior:
    """The ``[noise]`` prior read by ``parse_noise`` (the validator's), with its record.

    ``parse_noise(source, table, where=...)`` reads the numbers; this adds ``expert``,
    ``rationale`` and, for a pooled prior, ``pool`` and the ``[[noise.statement]]`` tables.
    """
    noise = parse_noise(source, table)
    r = FieldReader(source, "[noise]", table, None)
    extra: dict[str, Any] = {"expert": r.text("expert"), "rationale": r.text("rationale")}
    if r.has("pool") or r.has("statement"):
        method = r.text("pool")
        if method not in METHODS:
            raise r.error("pool", f"must be one of {', '.join(METHODS)}, got {method!r}")
        tables = r.table.get("statement")
        if not isinstance(tables, list) or not tables:
            raise r.error("statement", "a pooled noise prior needs [[noise.statement]] tables")
        statements = []
        for i, t in enumerate(tables, 1):
            where = f"[noise] statement {i}"
            inner = FieldReader(source, where, t, None)
            for key in ("pool", "statement"):
                if inner.has(key):
                    raise inner.error(key, "a noise statement is not itself pooled")
            statements.append(noise_record(source, t, lambda s, t, w=where: parse_noise(s, t, w)))
        extra.update(pool=method, statements=tuple(statements))
    return replace(noise, **extra)


def noise_record_doc(noise: NoisePrior, numbers: Callable[[NoisePrior], dict]) -> dict:
    """The ``[noise]`` table: ``numbers(noise)`` (the writer's) and the record keys."""
    out = numbers(noise)
    if noise.pool is not None:
        out["pool"] = noise.pool
        out["statement"] = [noise_record_doc(s, numbers) for s in noise.statements]
    for key in ("expert", "rationale"):
        if getattr(noise, key) is not None:
            out[key] = getattr(noise, key)
    return out


def _variance(n: NoisePrior):
    from scipy import stats

    return stats.invgamma(n.shape, scale=n.scale)


def pool_noise(
    statements: Sequence[NoisePrior],
    *,
    method: str = DEFAULT_METHOD,
    weights: Mapping[str, float] | None = None,
) -> NoisePrior:
    """Several experts' noise priors pooled into one (see the module text).

    ``weights`` maps an expert's name to a weight (default 1). One statement is kept as is.

    Raises
    ------
    InputError
        Known and stated sds mixed, or known sds that differ.
    """
    if len(statements) == 1:
        return statements[0]
    weights = weights or {}
    w = np.array([weights.get(s.expert or "", 1.0) for s in statements], dtype=float)
    w = w / w.sum()
    known = {s.sd for s in statements if s.known}
    if known:
        if len(known) > 1 or not all(s.known for s in statements):
            raise InputError(
                "cannot pool noise statements that give a known sd with others that differ: "
                "give each expert's noise as a range"
            )
        return NoisePrior(known.pop(), None, None, None, None, None,
                          statements=tuple(statements), pool=method)  # fmt: skip
    if method == "log":
        shape = float(w @ np.array([s.shape + 1.0 for s in statements])) - 1.0
        scale = float(w @ np.array([s.scale for s in statements]))
        if not shape > 0:
            raise InputError(f"the log pool of the noise statements has shape {shape:g} <= 0")
    elif method == "linear":
        dists = [_variance(s) for s in statements]
        ends = []
        for p in _PAIR:
            each = [float(d.ppf(p)) for d in dists]
            ends.append(math.sqrt(_root(lambda v, p=p: _mix_cdf(dists, w, v) - p, each)))
        shape, scale = convert.noise_from_range(ends[0], ends[1], _PAIR[1] - _PAIR[0])
    else:
        raise InputError(f"unknown pool method {method!r} (expected 'linear' or 'log')")
    return NoisePrior(None, None, None, None, shape, scale,
                      statements=tuple(statements), pool=method)  # fmt: skip


def _mix_cdf(dists, w: np.ndarray, v: float) -> float:
    return float(sum(wi * d.cdf(v) for wi, d in zip(w, dists, strict=True)))


def _root(f, each: list[float]) -> float:
    from scipy import optimize

    lo, hi = min(each), max(each)
    if lo == hi:
        return lo
    return optimize.brentq(f, lo, hi, xtol=1e-14 * hi, rtol=1e-12)
