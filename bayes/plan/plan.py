"""``plan``: choose the next K runs for a fit and say what they buy and how likely they settle.

The numbers come from :mod:`bayes.plan.nodes` (today's posterior given the noise sd),
:mod:`bayes.plan.criteria` (closed-form criteria), :mod:`bayes.plan.exchange` (the search) and
:mod:`bayes.plan.assurance`; the words from :mod:`bayes.plan.wording`.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace

import numpy as np
import pandas as pd

from bayes.engine.posterior import DrawsPosterior
from bayes.errors import InputError
from bayes.plan import wording
from bayes.plan.assurance import SIMULATIONS, closed_form, probability_today, simulated
from bayes.plan.candidates import candidate_rows, data_columns
from bayes.plan.criteria import gain_nats, variances
from bayes.plan.exchange import RESTARTS, SEED, search
from bayes.plan.goals import default_goals, parse_contrast, parse_goal
from bayes.plan.nodes import noise_nodes
from bayes.plan.result import PlanResult
from bayes.problem import model_rows
from bayes.threads import blas_threads

#: ``target`` given: the curve of assurance against K goes at most this far.
MAX_RUNS = 60
#: Candidates drawn in the figure at most (a random subset beyond).
PLOT_CANDIDATES = 2000


def plan(result, candidates: pd.DataFrame, runs: int | None = None, *,
         goals: Sequence[str] = (), contrasts: Sequence[str] = (), level: float = 0.95,
         criterion: str | None = None, target: float | None = None, max_runs: int = MAX_RUNS,
         sweep=None, restarts: int = RESTARTS, seed: int = SEED, sims: int = SIMULATIONS,
         source: str = "candidates") -> PlanResult:  # fmt: skip
    """Choose ``runs`` runs among ``candidates`` for the fit ``result``.

    Parameters
    ----------
    result : FitResult
    candidates : DataFrame
        One candidate per row, with the columns the fit's model is made from.
    runs : int, optional
        K, the runs to plan (at least 1); with ``target`` and no ``runs``, the smallest K whose
        assurance reaches ``target`` for every goal (at most ``max_runs``).
    goals : sequence of str
        "superplasticizer<0" and the like (default: :func:`bayes.plan.goals.default_goals`).
    contrasts : sequence of str
        Contrasts to report; the first is the c-criterion's when ``criterion`` is "c".
    level : float
        The level a goal must pass, either way.
    criterion : {"d", "c"}, optional
        Default: "c" when a contrast is given, else "d".
    target : float, optional
        The assurance aimed at: the curve runs until every goal reaches it.
    sweep : SweepResult, optional
        The saved sweep, for the default goals.
    max_runs, restarts, seed, sims : int
        Longest assurance curve; exchange starts; seed; simulations of a sampled fit.
    source : str
        What the candidates are called in messages.

    Raises
    ------
    InputError
        K < 1, a level or target outside (0, 1), a bad goal or contrast, bad candidates.

    Returns
    -------
    PlanResult

    Examples
    --------
    >>> import bayes, pandas as pd
    >>> frame = pd.DataFrame({"x": [-0.5, 0.0, 0.5, 0.2], "y": [0.9, 2.1, 2.9, 2.5]})
    >>> result = bayes.plan(bayes.fit(frame, response="y"),
    ...                     pd.DataFrame({"x": [-1.0, -0.5, 0.0, 0.5, 1.0]}), 2)
    >>> sorted(r["values"]["x"] for r in result.runs)  # a straight line: D-optimal at the ends
    [-1.0, 1.0]
    """
    if not 0.0 < level < 1.0:
        raise InputError(f"level must lie strictly between 0 and 1, got {level!r}")
    if target is not None and not 0.0 < target < 1.0:
        raise InputError(f"target must lie strictly between 0 and 1, got {target!r}")
    if runs is None and target is None:
        raise InputError("runs: give the number of runs to plan (or an assurance to reach)")
    if runs is not None and runs < 1:
        raise InputError(f"runs must be at least 1, got {runs}")
    if max_runs < 1:
        raise InputError(f"max_runs must be at least 1, got {max_runs}")
    names, terms = result.names, result.terms
    parsed = [parse_goal(g, names, terms) for g in goals] or list(
        default_goals(result, sweep, level)
    )
    reported = [(text, *parse_contrast(text, names, terms)) for text in contrasts]
    kind = criterion or ("c" if reported else "d")
    if kind not in ("d", "c"):
        raise InputError(f"criterion must be 'd' or 'c', got {criterion!r}")
    if kind == "c" and not reported:
        raise InputError("criterion 'c' needs a contrast (--contrast)")
    cand = candidate_rows(result, candidates, source=source)
    nodes = noise_nodes(result)
    with blas_threads(nodes.k):
        C = nodes.rows(cand.X)
        c = nodes.contrast(reported[0][1]) if kind == "c" else None
        post = result.posterior
        sampled = isinstance(post, DrawsPosterior)

        def assess(design, n_sims):
            Z, A = C[list(design)], model_rows(cand.X[list(design)], nodes.intercept)
            out = []
            for g in parsed:
                if sampled:
                    out.append(simulated(post.flat_draws, post.sigma, A, g.a, g.op, g.value,
                                         level, sims=n_sims))  # fmt: skip
                else:
                    out.append(closed_form(nodes, Z, nodes.contrast(g.a), nodes.offset(g.a),
                                           g.op, g.value, level))  # fmt: skip
            return out

        # The curve: each K extends the design of K - 1 (greedy, then exchanged).
        # With a target the curve goes on until every goal reaches it (at most max_runs).
        last = max(runs or 0, max_runs) if target is not None else runs
        curve_k, curve_a, designs, previous = [], [], {}, ()
        for K in range(1, last + 1):
            found = search(nodes, C, K, kind, c, restarts=1, seed=seed, start=previous)
            previous = list(found.design)
            designs[K] = found
            curve_k.append(K)
            curve_a.append(assess(found.design, max(sims // 4, 200)))
            reached = target is not None and all(a.value >= target for a in curve_a[-1])
            if reached and K >= (runs or 0):
                break
        K = runs if runs is not None else curve_k[-1]
        best = search(nodes, C, K, kind, c, restarts=restarts, seed=seed)
        if best.value < designs[K].value:  # the curve's extended design did better
            best = replace(designs[K], restarts=best.restarts + 1)
        final = assess(best.design, sims)
        coefficient_rows = _sds(result, nodes, C[list(best.design)], reported)
        gain = gain_nats(nodes, C[list(best.design)])
    goal_rows = []
    for g, a in zip(parsed, final, strict=True):
        reach = next(
            (
                k
                for k, row in zip(curve_k, curve_a, strict=True)
                if target is not None and row[parsed.index(g)].value >= target
            ),
            None,
        )
        goal_rows.append({"label": g.label, "p_today": probability_today(post, g.a, g.op, g.value),
                          "assurance": a.value, "settled_for": a.settled_for,
                          "settled_against": a.settled_against, "mcse": a.mcse,
                          "route": a.route, "ess": a.ess, "smallest_runs": reach})  # fmt: skip
    curve = {"runs": curve_k}
    for i, g in enumerate(parsed):
        curve[g.label] = {"assurance": [row[i].value for row in curve_a],
                          "mcse": [row[i].mcse for row in curve_a]}  # fmt: skip
    run_rows = []
    for order, (i, step) in enumerate(zip(best.design, best.gains, strict=True), start=1):
        values = {col: _plain(cand.frame.iloc[i][col]) for col in cand.frame.columns}
        run_rows.append({"run": order, "candidate": int(i) + 1, "values": values,
                         "gain": step, "extrapolated": bool(cand.outside[i])})  # fmt: skip
    route = final[0].route if final else ("importance weighting" if sampled else "closed form")
    units = getattr(result.priors, "response_units", None)
    return PlanResult(
        response=result.response, response_units=units, level=level,
        criterion=kind.upper(), contrast=reported[0][0] if kind == "c" else None,
        search=best.method, restarts=best.restarts, noise=nodes.route, route=route,
        columns=tuple(str(c) for c in cand.frame.columns), runs=tuple(run_rows),
        candidates=cand.count, outside=int(cand.outside.sum()),
        outside_columns=dict(cand.outside_columns), gain_nats=gain,
        coefficients=tuple(coefficient_rows), goals=tuple(goal_rows), curve=curve,
        target=target, plot=_plot(result, cand, best.design, parsed, seed),
        notes=wording.notes(nodes.route, route, int(cand.outside.sum()), sampled),
    )  # fmt: skip


def _plain(value):
    return value.item() if hasattr(value, "item") else value


def _sds(result, nodes, Z, reported) -> list[dict]:
    """Every coefficient's (and reported contrast's) sd today and expected after the runs."""
    k = nodes.k
    A = [nodes.contrast(np.eye(k)[j]) for j in range(k)] + [nodes.contrast(a) for _, a, _ in
                                                             reported]  # fmt: skip
    labels = [(n, "coefficient") for n in result.names] + [(t, "contrast") for t, _, _ in reported]
    today, after = variances(nodes, None, np.array(A)), variances(nodes, Z, np.array(A))
    return [{"name": n, "kind": kind, "sd_today": float(np.sqrt(t)), "sd_after": float(np.sqrt(a))}
            for (n, kind), t, a in zip(labels, today, after, strict=True)]  # fmt: skip


def _plot(result, cand, design, goals, seed: int) -> dict:
    """The two predictors to draw the runs against: those the goals name first, then by the
    spread of their effect over the candidates (|mean| times the candidates' sd)."""
    cols = [c for c in data_columns(result) if c in cand.frame.columns
            and pd.api.types.is_numeric_dtype(cand.frame[c])]  # fmt: skip
    if not cols:
        return {}
    names = list(result.names)
    mean = result.posterior.mean

    def weight(col: str) -> tuple:
        j = names.index(col) if col in names else None
        named = any(j is not None and g.a[j] != 0 for g in goals)
        effect = abs(mean[j]) * float(cand.frame[col].std() or 0.0) if j is not None else 0.0
        return (named, effect)

    cols.sort(key=weight, reverse=True)
    x, y = cols[0], cols[1] if len(cols) > 1 else None
    pick = [x] + ([y] if y else [])
    pts = cand.frame[pick].to_numpy(dtype=float)
    if len(pts) > PLOT_CANDIDATES:
        keep = np.random.default_rng(seed).choice(len(pts), PLOT_CANDIDATES, replace=False)
        pts = pts[np.sort(keep)]
    counts: dict[tuple, int] = {}  # runs at the same point of the drawn plane
    for i in design:
        point = tuple(float(v) for v in cand.frame.iloc[i][pick])
        counts[point] = counts.get(point, 0) + 1
    chosen = [[*point, n] for point, n in counts.items()]
    data = []
    design_names = list(result.factor.names)
    if result.data is not None and all(c in design_names for c in pick):
        data = result.data.X[:, [design_names.index(c) for c in pick]].tolist()
    return {"x": x, "y": y, "candidates": pts.tolist(), "chosen": chosen, "data": data}
