"""The report's content, assembled from a saved fit as plain objects.

``build_report(FIT_DIR)`` reads the fit folder (:func:`bayes.store.load_fit`, plus
``sweep.json`` and ``compare.json`` when ``bayes sweep --save`` / ``bayes compare --save`` left
them there) and returns a :class:`bayes.report.document.Report`: sections made of paragraphs, bullet
lists, tables (cells already rounded), figures (PNG bytes) and formulas, in the order of a
technical report. :mod:`bayes.report.render` writes it out.

Posterior numbers are rounded by their posterior sd (:func:`bayes.results.summary.fmt_by_sd`): the
sd to two significant digits, the estimate to the same decimal place.
"""

from __future__ import annotations

import json
import math
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from bayes.errors import InputError
from bayes.report.document import Block, Bullets, Figure, Paragraph, Report, Section, Table
from bayes.report.formulas import MODEL, PENALTY, PRIORS
from bayes.results.format import fmt, fmt_by_sd
from bayes.results.result import CONDITION_WARNING, FitResult

VIF_WARNING = 10.0  # variance inflation factor above which collinearity is strong (common practice)
DECISIVE_RATIO = 0.8  # posterior/prior sd ratio above which the prior, not the data, decides
PREDICTIVE_ROWS = 2000  # the predictive check draws at most this many rows (seeded choice)


@dataclass(frozen=True)
class _Context:
    """What every section builder needs, computed once."""

    result: FitResult
    response_units: str
    units: dict[str, str]
    least_squares: object | None  # bayes.engine.posterior.Posterior of the flat-prior fit, or None
    sweep: dict | None
    compare: dict | None

    @property
    def level_text(self) -> str:
        return f"{100 * self.result.level:g}%"


# --------------------------------------------------------------------------- entry points


def build_report(fit_dir: str | Path, figures: bool = True) -> Report:
    """Assemble the report of the fit saved in ``fit_dir``.

    Parameters
    ----------
    fit_dir : str or Path
        A folder written by ``bayes fit --save`` (:func:`bayes.store.save_fit`);
        ``sweep.json`` and ``compare.json`` in it add the sensitivity and comparison parts.
    figures : bool
        Draw the figures (False leaves them out: faster, for tests of the tables and text).

    Returns
    -------
    Report

    Raises
    ------
    InputError
        When the folder is not a saved fit or a saved sweep/comparison is unreadable.
    """
    from bayes.store import load_fit

    folder = Path(fit_dir)
    result = load_fit(folder)
    sweep = _read_json(folder / "sweep.json")
    if sweep is not None:
        _check_sweep(sweep, result, str(folder / "sweep.json"))
    compare = _read_json(folder / "compare.json")
    if compare is not None and compare.get("response") != result.response:
        raise InputError(
            f"{folder / 'compare.json'}: the saved comparison is for response "
            f"{compare.get('response')!r}, the fit for {result.response!r}"
        )
    return report_from_result(result, sweep, compare, figures)


def report_from_result(
    result: FitResult, sweep: dict | None = None, compare: dict | None = None, figures: bool = True
) -> Report:
    """Assemble the report of an in-memory fit (see :func:`build_report`)."""
    priors = result.priors
    ctx = _Context(
        result,
        getattr(priors, "response_units", None) or "response units",
        dict(getattr(priors, "units", {}) or {}),
        _least_squares(result),
        sweep,
        compare,
    )
    sections = [
        _study(ctx),
        _data(ctx),
        _priors(ctx),
        _posterior(ctx),
        _figures(ctx) if figures else None,
        _sensitivity(ctx),
        _comparison(ctx) if compare is not None else None,
        _method(ctx),
        _cautions(ctx),
        _appendix(ctx),
    ]
    title = getattr(priors, "title", None) or f"Bayesian linear regression of {result.response}"
    subtitle = (
        f"Posterior of the coefficients of '{result.response}' ({ctx.response_units}) given "
        f"the experts' priors and {result.factor.n} observations"
    )
    return Report(title, subtitle, tuple(s for s in sections if s is not None))


def _read_json(path: Path) -> dict | None:
    if not path.exists():
        return None
    try:
        doc = json.loads(path.read_text(encoding="utf-8"))
    except (json.JSONDecodeError, UnicodeDecodeError) as e:
        raise InputError(f"{path}: not readable JSON ({e})") from None
    if not isinstance(doc, dict):
        raise InputError(f"{path}: expected one JSON object")
    return doc


# --------------------------------------------------------------------------- shared numbers


def _least_squares(result: FitResult):
    """The flat-prior fit (least squares, Student-t marginals), or None when not identified."""
    from bayes.engine.exact import exact_posterior
    from bayes.problem import NoiseSpec, ScaledPrior

    k = result.factor.p + 1
    flat = ScaledPrior(("flat",) * k, np.zeros(k), np.zeros((0, k)), np.full(k, np.nan),
                       np.full(k, np.nan), NoiseSpec())  # fmt: skip
    try:
        return exact_posterior(result.factor, flat)
    except InputError:
        return None


_LEVEL = re.compile(r".+\[.*\]", re.S)  # a categorical level's indicator column


def _units(ctx: _Context, name: str) -> str:
    """Units of a coefficient: response units per unit of its predictor (or term)."""
    from elicit.units import split_term, term_units

    units = term_units(name, ctx.units, ctx.response_units)
    if name != "intercept" and all(_LEVEL.fullmatch(part) for part in split_term(name)):
        units += " (difference from the reference level)"
    return units


def _predictor_units(ctx: _Context, name: str) -> str:
    """Units of a design column: its predictor's, a product for an interaction, '-' unknown."""
    from elicit.units import split_term

    parts = [part for part in split_term(name) if not _LEVEL.fullmatch(part)]
    if not parts:
        return "indicator (0/1)"
    if not all(part in ctx.units for part in parts):
        return "-"
    return " × ".join(ctx.units[part] for part in parts)


def _prior_dist(priors, name: str):
    """Frozen scipy distribution of a coefficient's marginal prior, or None when flat."""
    from scipy import stats

    cp = priors.get(name) if priors is not None else None
    if cp is not None:
        return cp.dist()
    block = getattr(priors, "block", None)
    if block is not None and name in block.names:
        i = block.names.index(name)
        return stats.norm(float(block.mean[i]), math.sqrt(float(block.cov[i, i])))
    return None


def _prob(p: float | None) -> str:
    if p is None:
        return "-"
    if p > 0.999:
        return ">0.999"
    if p < 0.001:
        return "<0.001"
    return f"{p:.3f}"


def _number(x: float) -> str:
    """A data or prior value as given (up to 4 significant digits)."""
    return fmt(float(x), 4)


def _x_sd(result: FitResult) -> np.ndarray:
    """Predictor standard deviations (divisor n): the factor's column scales."""
    return np.asarray(result.factor.x_scale, float)


def _y_sd(result: FitResult) -> float:
    return math.sqrt(result.factor.tss / result.factor.n)


# --------------------------------------------------------------------------- 1. the study


def _study(ctx: _Context) -> Section:
    r = ctx.result
    prov = r.provenance or {}
    versions = prov.get("versions") or {}
    not_recorded = "not recorded (fit from the Python API)"
    seed = prov.get("seed")
    rows = [
        ("title", _title(r)),
        ("response", f"{r.response} ({ctx.response_units})"),
        ("data file", prov.get("data", not_recorded)),
        ("data SHA-256", prov.get("data_sha256", not_recorded)),
        ("observations used (n)", str(r.factor.n)),
        ("predictors (p)", f"{r.factor.p} plus the intercept"),
        ("rows dropped for missing values", str(prov.get("dropped", 0))),
        ("date of the fit", prov.get("date", not_recorded)),
        ("command line", prov.get("command", not_recorded)),
        ("software", ", ".join(f"{k} {v}" for k, v in versions.items()) or not_recorded),
        ("random seed", _seed_text(seed, r.posterior.method)),
        ("computation", f"{r.posterior.method}: {r.posterior.detail}"),
        ("credible level", ctx.level_text),
    ]
    goal = (
        f"Goal: estimate how each predictor changes '{r.response}', in natural units, by "
        "combining the experts' stated ranges (the priors) with the observed data, and show how "
        "much each conclusion depends on the priors."
    )
    return Section("study", "The study", (
        Paragraph(goal),
        Table("study", "The study and where the numbers came from", ("item", "value"),
              tuple(rows)),
    ))  # fmt: skip


def _seed_text(seed, method: str) -> str:
    if method == "exact":
        return "not used (exact computation)"
    return str(seed) if seed is not None else "not recorded"


def _title(r: FitResult) -> str:
    return getattr(r.priors, "title", None) or f"Bayesian linear regression of {r.response}"


# --------------------------------------------------------------------------- 2. the data


def collinearity(factor) -> tuple[np.ndarray, np.ndarray]:
    """Correlation matrix and variance inflation factors of the predictors, from the data factor.

    With the centred, scaled design ``Xs = Q R`` the cross-product is ``R'R`` (a p x p summary,
    used here only to describe the data, never to solve) and ``VIF_j = [(R'R)^-1]_jj (R'R)_jj``,
    where ``[(R'R)^-1]_jj`` is the squared norm of row j of ``R^-1`` (triangular solve).

    Returns
    -------
    corr : ndarray, shape (p, p)
    vif : ndarray, shape (p,)
        inf for a column that the others reproduce exactly.
    """
    from scipy import linalg

    R = factor.R11
    p = factor.p
    gram = R.T @ R
    d = np.sqrt(np.diag(gram))
    corr = gram / np.outer(d, d)
    if R.shape[0] < p or np.min(np.abs(np.diag(R[:p, :p]))) <= 1e-12 * np.max(d):
        return corr, np.full(p, np.inf)
    Rinv = linalg.solve_triangular(R[:p, :p], np.eye(p))
    return corr, np.sum(Rinv**2, axis=1) * d**2


def _data(ctx: _Context) -> Section:
    r = ctx.result
    f = r.factor
    names = f.names
    corr, vif = collinearity(f)
    sd = _x_sd(r)
    headers = ("predictor", "units", "mean", "sd", "minimum", "maximum", "VIF")
    X = r.data.X if r.data is not None else None
    rows = []
    for j, name in enumerate(names):
        unit = _predictor_units(ctx, name)
        lo = _number(X[:, j].min()) if X is not None else "-"
        hi = _number(X[:, j].max()) if X is not None else "-"
        rows.append((name, unit, _number(f.x_mean[j]), _number(sd[j]), lo, hi, fmt(vif[j], 3)))
    y = r.data.y if r.data is not None else None
    rows.append((
        f"{r.response} (response)", ctx.response_units, _number(f.y_mean), _number(_y_sd(r)),
        _number(y.min()) if y is not None else "-", _number(y.max()) if y is not None else "-",
        "",
    ))  # fmt: skip
    blocks: list[Block] = [
        Paragraph(
            f"{f.n} observations of '{r.response}' ({ctx.response_units}) and {f.p} "
            "predictors. Standard deviations use divisor n."
            + ("" if X is not None else " Minimum and maximum are not kept for streamed fits.")
        ),
        Table("data", "Predictors and response", headers, tuple(rows)),
    ]
    if f.p > 1:
        corr_rows = tuple((a, *(f"{corr[i, k]:.2f}" for k in range(f.p))) for i, a in
                          enumerate(names))  # fmt: skip
        blocks.append(
            Table(
                "correlations",
                "Correlations between the predictors",
                ("predictor", *names),
                corr_rows,
            )  # fmt: skip
        )
    cond = r.diagnostics.get("condition_number")
    cond_value = float(cond) if cond is not None else math.inf
    strong = [names[j] for j in range(f.p) if vif[j] > VIF_WARNING]
    text = (
        f"Condition number of the centred, scaled design: {fmt(cond_value, 3)} "
        f"(above {CONDITION_WARNING:g} signals strong collinearity); largest variance inflation "
        f"factor: {fmt(float(np.max(vif)) if f.p else 1.0, 3)} (above {VIF_WARNING:g} is strong; "
        "common practice)."
    )
    blocks.append(Paragraph(text))
    if strong or cond_value > CONDITION_WARNING:
        ratios = {row["name"]: row.get("sd_ratio") for row in r.rows}
        decisive = [n for n in (strong or names) if (ratios.get(n) or 0) > DECISIVE_RATIO]
        note = (
            "Note: the predictors "
            + ", ".join(strong or names)
            + " are strongly collinear, so the data cannot separate their effects well and the "
            "priors weigh heavily on these coefficients."
        )
        if decisive:
            note += (
                " For " + ", ".join(decisive) + " the posterior sd is more than "
                f"{DECISIVE_RATIO:g} times the prior sd: the priors, not the data, decide "
                + ("it." if len(decisive) == 1 else "them.")
            )
        blocks.append(Paragraph(note))
    else:
        blocks.append(
            Paragraph("No strong collinearity: the data separate the predictors' effects.")
        )
    return Section("data", "The data", tuple(blocks))


# --------------------------------------------------------------------------- 3. the priors


def _statement_range(s, unit: str, response_units: str) -> str:
    if s.low is not None and s.high is not None:
        per = f"{_number(s.per)} {unit}" if s.per != 1 else unit
        return f"{_number(s.low)} to {_number(s.high)} {response_units} per {per}"
    if s.quantiles:
        qs = ", ".join(f"{100 * q:g}%: {_number(v)}" for q, v in s.quantiles)
        return f"quantiles {qs} (per {_number(s.per)} {unit})"
    return "parameters given directly"


def _priors(ctx: _Context) -> Section:
    r = ctx.result
    priors = r.priors
    penalties = {p["name"]: p for p in r.penalties}
    block = getattr(priors, "block", None)
    headers = ("coefficient", "units", "family", "centre", "scale", "prior sd", "stated range",
               "mass", "stated by", "rationale", "pooled", "equivalent penalty")  # fmt: skip
    rows = []
    for name in r.names:
        cp = priors.get(name) if priors is not None else None
        unit = _predictor_units(ctx, name)
        unit = f"unit of {name}" if unit == "-" else unit
        if cp is None or cp.family == "flat":
            in_block = block is not None and name in block.names
            family = "normal (correlated block)" if in_block else "flat"
            dist = _prior_dist(priors, name)
            centre = _number(dist.mean()) if dist is not None else "-"
            sd = _number(dist.std()) if dist is not None else "inf"
            statements = cp.statements if cp is not None else ()
            rows.append((name, _units(ctx, name), family, centre, "-", sd,
                         tuple(_statement_range(s, unit, ctx.response_units)
                               for s in statements) or "-",
                         "-", "-", "-", "no", "none"))  # fmt: skip
            continue
        family = cp.family if cp.family != "student_t" else f"student_t (df {cp.df:g})"
        statements = cp.statements
        ranges = tuple(_statement_range(s, unit, ctx.response_units) for s in statements)
        masses = tuple(f"{100 * s.mass:g}%" if s.mass is not None else "-" for s in statements)
        experts = tuple(s.expert or "not named" for s in statements)
        reasons = tuple(s.rationale or "-" for s in statements)
        pooled = f"yes ({cp.pool} pool of {len(statements)})" if cp.pool else "no"
        pen = penalties.get(name)
        penalty = f"{pen['penalty']}, lambda = {fmt(pen['lambda'], 3)}" if pen else "none"
        rows.append((name, _units(ctx, name), family, _number(cp.center), _number(cp.scale),
                     _number(cp.sd), ranges or "-", masses or "-", experts or "-",
                     reasons or "-", pooled, penalty))  # fmt: skip
    blocks: list[Block] = [
        Paragraph(
            "One row per coefficient, in natural units (response units per unit of the "
            "predictor). 'Stated range' is what each expert said, for the change of the predictor "
            "they chose; 'mass' is the probability they gave to it. Coefficients with no entry "
            "in the prior file have a flat prior."
        ),
        Table("priors", "Priors on the coefficients", headers, tuple(rows)),
    ]
    if block is not None:
        derived = "derived from the statements below" if block.rows else "given directly"
        blocks.append(Paragraph(
            "Correlated (conditional-means) prior on " + ", ".join(block.names) + ": a "
            f"multivariate normal {derived}; the table shows its marginal means and sds."
        ))  # fmt: skip
        if block.rows:
            rows = tuple(
                (", ".join(f"{k} = {_number(v)}" for k, v in row.at),
                 f"{_number(row.low)} to {_number(row.high)} {ctx.response_units}",
                 f"{100 * row.mass:g}%", row.expert or "not named", row.rationale or "-")
                for row in block.rows
            )  # fmt: skip
            blocks.append(Table("reference_rows", "Stated expected response at reference rows",
                                ("at", f"stated range of the expected {r.response}", "mass",
                                 "stated by", "rationale"), rows))  # fmt: skip
    blocks.append(Paragraph(_noise_prior_text(priors, ctx.response_units)))
    if r.penalties:
        basis = r.penalties[0]["noise_basis"]
        sigma = r.penalties[0]["noise_sd"]
        blocks.append(Paragraph(
            "Equivalent penalty: with the noise sd fixed at "
            f"{fmt(sigma, 3)} {ctx.response_units} ({basis}), the posterior mode solves a "
            "penalised least-squares problem: ridge lambda = sigma^2 / tau^2 for a normal prior "
            "with sd tau, lasso lambda = sigma^2 / b for a Laplace prior with scale b (see the "
            "method section), centred on the prior centres."
        ))  # fmt: skip
    return Section("priors", "The priors", tuple(blocks))


def _noise_prior_text(priors, units: str) -> str:
    noise = getattr(priors, "noise", None)
    if noise is None:
        return ("Noise sd: no prior stated; the Jeffreys prior p(sigma^2) proportional to "
                "1/sigma^2 is used.")  # fmt: skip
    if noise.known:
        return f"Noise sd: taken as known, sigma = {_number(noise.sd)} {units}."
    text = (
        f"Noise sd: inverse-gamma prior on sigma^2 (shape {_number(noise.shape)}, scale "
        f"{_number(noise.scale)} {units}^2)"
    )
    if noise.low is not None:
        text += (
            f", from the stated range {_number(noise.low)} to {_number(noise.high)} {units} "
            f"holding the sd with probability {100 * noise.mass:g}%"
        )
    return text + "."


# --------------------------------------------------------------------------- 4. the posterior


def _posterior(ctx: _Context) -> Section:
    r = ctx.result
    lvl = ctx.level_text
    extra = [c for c in ("r_hat", "ess_bulk", "ess_tail") if c in r.rows[0]]
    extra_names = {"r_hat": "R-hat", "ess_bulk": "ESS (bulk)", "ess_tail": "ESS (tail)"}
    headers = ("coefficient", "units", "mean", "mode", "sd", f"{lvl} lower", f"{lvl} upper",
               "P(>0)", "sd / prior sd", *(extra_names[c] for c in extra))  # fmt: skip
    rows = []
    for row in r.rows:
        sd = row["sd"]
        cells = [row["name"], _units(ctx, row["name"])]
        cells += [fmt_by_sd(row[k], sd) for k in ("mean", "mode")]
        cells += [fmt_by_sd(sd, sd)]
        cells += [fmt_by_sd(row[k], sd) for k in ("lower", "upper")]
        cells += [_prob(row["p_positive"]), fmt(row["sd_ratio"], 2)]
        for c in extra:
            value = row.get(c)
            cells.append("-" if value is None else (f"{value:.3f}" if c == "r_hat" else
                                                    f"{value:.0f}"))  # fmt: skip
        rows.append(tuple(cells))
    d = r.diagnostics
    post = r.posterior
    q = (1 - r.level) / 2
    noise = (
        f"the noise sd was taken as known ({fmt(post.sigma_quantile(0.5), 3)} {ctx.response_units})"
        if post.noise_known
        else f"noise sd {fmt(post.sigma_quantile(0.5), 3)} {ctx.response_units} (posterior "
        f"median; {lvl} interval {fmt(post.sigma_quantile(q), 3)} to "
        f"{fmt(post.sigma_quantile(1 - q), 3)})"
    )
    blocks: list[Block] = [
        Table(
            "posterior", f"Posterior of the coefficients ({post.detail})", headers, tuple(rows)
        ),  # fmt: skip
        Paragraph(
            f"Each {lvl} interval is an equal-tailed credible interval: given the model, the "
            f"priors and these data, the coefficient lies inside it with probability "
            f"{r.level:g}, with {100 * q:g}% on each side. P(>0) is the posterior probability "
            "that the effect is positive. 'sd / prior sd' near 1 means the data changed the "
            "prior little; near 0, the data dominate. Numbers are rounded to the precision "
            "their posterior sd supports (sd to two significant digits); fit.json in the fit "
            "folder keeps full precision."
        ),
        Paragraph(
            f"Fit at the posterior mean: residual sd {fmt(d.get('residual_sd'), 3)} "
            f"{ctx.response_units}, R^2 = {d['r_squared']:.3f}; {noise}. The 'mode' column is "
            f"the {post.mode_kind}."
        ),
    ]
    if extra:
        blocks.append(Paragraph(
            "R-hat near 1 (below 1.01) says the chains agree; the effective sample sizes (ESS) "
            "say how many independent draws the chains are worth (a few hundred or more give "
            "stable intervals)."
        ))  # fmt: skip
    notes = [n for n in r.notes if not n.startswith("no prior file")]
    if notes:
        blocks.append(Bullets(tuple(notes)))
    return Section("posterior", "The posterior", tuple(blocks))


# --------------------------------------------------------------------------- 5. the figures


def _figures(ctx: _Context) -> Section:
    from bayes.report import figures as F

    r = ctx.result
    lvl = ctx.level_text
    blocks: list[Block] = []
    panels = [_density_panel(ctx, j) for j in range(1, len(r.names))]
    if panels:
        blocks.append(Figure("densities", (
            "Prior (dashed) and posterior (solid) density of each coefficient, with the "
            "experts' stated ranges converted to one unit of the predictor (bars under the "
            "axis) and the flat-prior least-squares estimate (dotted line). The intercept is "
            "not shown."
        ), F.density_figure(panels)))  # fmt: skip
        blocks.append(Figure("forest", (
            f"{lvl} prior, posterior and least-squares intervals side by side on a standardized "
            "axis: the change of the response, in response sds, for a change of one sd of the "
            "predictor. Arrows mark prior intervals cut at the edge."
        ), F.forest_figure(_forest_rows(ctx), r.level)))  # fmt: skip
    sweep_png = _sweep_png(ctx)
    if sweep_png is not None:
        blocks.append(Figure("sweep", (
            "Width sweep: posterior mean and interval of each coefficient as the prior scales "
            "are multiplied by a factor (1 = as stated, dashed line); the stated prior interval "
            "at the left, the flat-prior limit at the right; dotted lines mark where a "
            "conclusion flips."
        ), sweep_png))  # fmt: skip
    else:
        blocks.append(Paragraph(
            "The width-sweep chart needs a saved sweep (bayes sweep ... --save FIT_DIR); none "
            "was saved with this fit."
        ))  # fmt: skip
    blocks += _residual_blocks(ctx)
    return Section("figures", "Figures", tuple(blocks))


def _stated_ranges(cp) -> tuple[tuple[str, float, float], ...]:
    out = []
    for s in getattr(cp, "statements", ()) if cp is not None else ():
        if s.low is not None and s.high is not None:
            out.append((s.expert or "", s.low / s.per, s.high / s.per))
        elif s.quantiles:
            values = [v / s.per for _, v in s.quantiles]
            out.append((s.expert or "", min(values), max(values)))
    return tuple(out)


def _density_panel(ctx: _Context, j: int):
    from bayes.report.figures import DensityPanel

    r = ctx.result
    name = r.names[j]
    post = r.posterior.coefficient(j)
    prior = _prior_dist(r.priors, name)
    cp = r.priors.get(name) if r.priors is not None else None
    stated = _stated_ranges(cp)
    ls = float(ctx.least_squares.mean[j]) if ctx.least_squares is not None else None
    lo, hi = post.ppf(0.0005), post.ppf(0.9995)
    ends = [lo, hi] + [v for _, a, b in stated for v in (a, b)] + ([ls] if ls is not None else [])
    if prior is not None:
        ends += list(prior.ppf([0.01, 0.99]))
    a, b = min(ends), max(ends)
    pad = 0.05 * (b - a)
    x = np.linspace(a - pad, b + pad, 400)
    return DensityPanel(
        name, _units(ctx, name), x, post.pdf(x), prior.pdf(x) if prior is not None else None,
        stated, ls,
    )  # fmt: skip


def _forest_rows(ctx: _Context):
    from bayes.report.figures import ForestRow, Interval

    r = ctx.result
    level = r.level
    q = (1 - level) / 2
    scale = _x_sd(r) / _y_sd(r)
    rows = []
    for j in range(1, len(r.names)):
        s = scale[j - 1]
        row = r.rows[j]
        post = Interval(row["mean"] * s, row["lower"] * s, row["upper"] * s)
        dist = _prior_dist(r.priors, r.names[j])
        prior = None
        if dist is not None:
            lo, hi = dist.ppf([q, 1 - q])
            prior = Interval(float(dist.median()) * s, float(lo) * s, float(hi) * s)
        ls = None
        if ctx.least_squares is not None:
            m = ctx.least_squares.coefficient(j)
            lo, hi = m.interval(level)
            ls = Interval(m.mean * s, lo * s, hi * s)
        rows.append(ForestRow(r.names[j], prior, post, ls))
    return rows


def _residual_blocks(ctx: _Context) -> list[Block]:
    from bayes.report import figures as F
    from bayes.results.predict import design_intervals

    r = ctx.result
    if r.data is None:
        return [Paragraph(
            "Residual and predictive-check figures need the data rows, which a streamed fit "
            "does not keep."
        )]  # fmt: skip
    X, y = r.data.X, r.data.y
    beta = r.posterior.mean
    fitted = beta[0] + X @ beta[1:]
    sigma = r.posterior.sigma_quantile(0.5)
    units = ctx.response_units
    blocks: list[Block] = [Figure("residuals", (
        "Residuals against fitted values at the posterior mean, with lines at ±2 noise sds "
        f"({fmt(sigma, 3)} {units}, posterior median). A pattern (curve, funnel) would say the "
        "linear model with constant noise does not describe the data."
    ), F.residual_figure(fitted, y - fitted, sigma, units))]  # fmt: skip
    rows = np.arange(len(y))
    note = ""
    if len(rows) > PREDICTIVE_ROWS:
        rows = np.sort(np.random.default_rng(0).choice(rows, PREDICTIVE_ROWS, replace=False))
        note = f" (a random {PREDICTIVE_ROWS} of the {len(y)} rows)"
    table = design_intervals(r.posterior, X[rows], r.level)
    obs = y[rows]
    lo, hi = table["pred_lower"].to_numpy(), table["pred_upper"].to_numpy()
    outside = int(np.sum((obs < lo) | (obs > hi)))
    lvl = ctx.level_text
    blocks.append(Figure("predictive", (
        f"Posterior predictive check{note}: each observed response against the {lvl} "
        f"predictive interval for a new observation at the same predictor values. {outside} of "
        f"{len(rows)} observations fall outside their intervals; about "
        f"{100 * (1 - r.level):g}% would if the model holds (the check reuses the data that "
        "fitted the model, so it is lenient)."
    ), F.predictive_figure(obs, table["mean"].to_numpy(), lo, hi, r.level, units)))  # fmt: skip
    return blocks


def _sweep_png(ctx: _Context) -> bytes | None:
    """The width-sweep chart of the saved sweep (None when no sweep was saved)."""
    if ctx.sweep is None:
        return None
    from bayes.report.figures import png_bytes
    from bayes.report.sweep_chart import plot_sweep

    return png_bytes(plot_sweep(ctx.sweep))


# --------------------------------------------------------------------------- 6. sensitivity


def _check_sweep(sweep: dict, result: FitResult, path: str) -> None:
    """Stop when the saved sweep belongs to another model than the saved fit."""
    names = [c.get("name") for c in sweep.get("coefficients", [])]
    if sweep.get("response") != result.response or names != list(result.names):
        raise InputError(
            f"{path}: the saved sweep is for another model (response {sweep.get('response')!r}, "
            f"coefficients {', '.join(map(str, names))}); run bayes sweep ... --save again"
        )


def _sensitivity(ctx: _Context) -> Section:
    sweep = ctx.sweep
    title = "Sensitivity to the priors"
    if sweep is None:
        return Section("sensitivity", title, (Paragraph(
            "No sensitivity sweep was saved with this fit, so this report cannot say how much "
            "the conclusions depend on the prior widths. Run bayes sweep DATA --priors FILE "
            "--save FIT_DIR and make the report again."
        ),))  # fmt: skip
    r = ctx.result
    sd = {row["name"]: row["sd"] for row in r.rows}
    factors = [f for f in sweep["factors"] if f is not None]
    level = sweep.get("conclusion_level", 0.95)
    blocks: list[Block] = [
        Paragraph(
            f"The sweep multiplied the scale of {sweep.get('selection', 'the priors')} by "
            f"{len(factors)} factors from {_number(min(factors))} to {_number(max(factors))} "
            f"(1 = as stated) and added the flat-prior limit ({sweep.get('detail', '')}). A "
            f"conclusion holds when its posterior probability is at least {level:g}."
        ),
        Bullets(tuple(sweep.get("headline") or ("The sweep drew no conclusions.",))),
    ]
    rows = []
    for c in sweep["coefficients"]:
        for k in c.get("conclusions", []):
            rows.append((k["statement"], _prob(k["at_stated"]), k["status"],
                         _factor(k.get("narrower_flip")), _factor(k.get("wider_flip")),
                         _prob(k.get("flat_probability"))))  # fmt: skip
    if rows:
        blocks.append(Table("conclusions", "Conclusions along the width sweep",
                            ("conclusion", "P at stated priors", "status",
                             "flips when narrower by factor", "flips when wider by factor",
                             "P with flat priors"), tuple(rows)))  # fmt: skip
    influence = tuple(
        (c["name"], fmt(c.get("variance_ratio"), 2), fmt(c.get("prior_share"), 2))
        for c in sweep["coefficients"] if c.get("variance_ratio") is not None
    )  # fmt: skip
    if influence:
        blocks.append(Table("influence", "How much the data dominate the priors (at the stated "
                            "priors)", ("coefficient", "posterior / prior variance",
                                        "prior's share of the posterior precision"),
                            influence))  # fmt: skip
    conflict = sweep.get("conflict") or {}
    if conflict:
        joint = conflict.get("joint", {}).get("sentence", "")
        blocks.append(Paragraph(
            f"{joint} Method: {conflict.get('method', '')}; a coefficient is flagged when its "
            f"tail probability is below {conflict.get('threshold', 0.05):g}."
        ))  # fmt: skip
        crow = tuple(
            (x["name"], fmt(x.get("tail_probability"), 2), "yes" if x.get("flag") else "no")
            for x in conflict.get("coefficients", [])
        )
        if crow:
            blocks.append(
                Table(
                    "conflict",
                    "Prior-data conflict per coefficient",
                    ("coefficient", "tail probability", "conflict"),
                    crow,
                )
            )
    power = sweep.get("power_scaling") or {}
    if power:
        blocks.append(Paragraph(
            f"Power-scaling sensitivity: {power.get('measure', '')}, from "
            f"{power.get('method', '')}; a value at or above {power.get('threshold', 0.05):g} "
            "flags sensitivity. Sensitive to both prior and likelihood suggests prior-data "
            "conflict; to the prior only, a weak likelihood (the prior decides)."
        ))  # fmt: skip
        prow = tuple(
            (x["name"], f"{x['prior']:.3f}", f"{x['likelihood']:.3f}", x.get("diagnosis") or "none")
            for x in power.get("coefficients", [])
        )
        blocks.append(
            Table(
                "power_scaling",
                "Power-scaling sensitivity",
                ("coefficient", "prior", "likelihood", "diagnosis"),
                prow,
            )
        )
    swap = sweep.get("family_swap")
    if swap:
        fams = swap["families"]
        lvl = f"{100 * sweep.get('level', r.level):g}%"
        srow = []
        for c in swap["coefficients"]:
            s = sd.get(c["name"])
            srow.append((c["name"], _units(ctx, c["name"]), *(
                f"{fmt_by_sd(c[f]['mean'], s)} ({fmt_by_sd(c[f]['lower'], s)} to "
                f"{fmt_by_sd(c[f]['upper'], s)})" for f in fams)))  # fmt: skip
        how = "; ".join(f"{f}: {m}" for f, m in swap.get("method", {}).items())
        blocks.append(Paragraph(
            "Family swap: the same stated ranges read as each family; posterior mean and, in "
            f"parentheses, the {lvl} interval. Computed by {how}."
        ))  # fmt: skip
        blocks.append(Table("family_swap", "Family swap", ("coefficient", "units", *fams),
                            tuple(srow)))  # fmt: skip
    if sweep.get("notes"):
        blocks.append(Bullets(tuple(sweep["notes"])))
    return Section("sensitivity", title, tuple(blocks))


def _factor(f: float | None) -> str:
    if f is None:
        return "-"
    return _number(1 / f) if f < 1 else _number(f)


# --------------------------------------------------------------------------- comparison


def _comparison(ctx: _Context) -> Section:
    doc = ctx.compare or {}
    rows = []
    for x in doc.get("sets", []):
        lml, mc = x.get("log_marginal_likelihood"), x.get("log_marginal_likelihood_mc_se")
        log_b = x.get("log_bayes_factor_vs_best")
        elpd, elpd_se = x.get("elpd_loo"), x.get("elpd_loo_se")
        diff, diff_se = x.get("elpd_diff_vs_best"), x.get("elpd_diff_se")
        rows.append((
            Path(str(x.get("path", "-"))).name,
            x.get("title") or "-",
            _plus_minus(lml, mc if mc else None),
            "-" if log_b is None else f"{-2 * log_b + 0.0:.2f}",
            _prob(x.get("posterior_probability")),
            _plus_minus(elpd, elpd_se),
            _plus_minus(diff, diff_se),
            fmt(x.get("pareto_k_max"), 2),
        ))  # fmt: skip
    blocks: list[Block] = [
        Paragraph(
            f"Prior sets compared on the same {doc.get('n', ctx.result.factor.n)} observations: "
            "by the evidence (log marginal likelihood; 2 ln B of the best set against each and the "
            "posterior probability of each set under equal prior odds) and by leave-one-out "
            "prediction (expected log predictive density, elpd, with its standard error)."
        ),
        Table(
            "comparison",
            "Comparison of prior sets",
            (
                "prior file",
                "title",
                "log marginal likelihood",
                "2 ln B, best set against this",
                "P(set | data)",
                "elpd (LOO)",
                "elpd difference vs best",
                "largest Pareto k",
            ),
            tuple(rows),
        ),  # fmt: skip
    ]
    if doc.get("readings"):
        blocks.append(Bullets(tuple(doc["readings"])))
    if doc.get("cautions"):
        blocks.append(Paragraph("What these numbers do not say:"))
        blocks.append(Bullets(tuple(doc["cautions"])))
    return Section("comparison", "Comparison of prior sets", tuple(blocks))


def _plus_minus(x: float | None, se: float | None) -> str:
    """A value with its standard error, the value rounded by the error."""
    if x is None:
        return "-"
    if se is None or not se > 0:
        return f"{x:.2f}"
    return f"{fmt_by_sd(x, se)} ± {fmt(se, 2)}"


# --------------------------------------------------------------------------- 7. method


def _method(ctx: _Context) -> Section:
    r = ctx.result
    post = r.posterior
    families = sorted({cp.family for cp in getattr(r.priors, "coefficients", ())})
    if post.method == "exact":
        computation = (
            f"Computation: exact ({post.detail}). The data enter through the triangular (QR) "
            "factor of the centred, scaled design; the priors are stacked under it as "
            "pseudo-observations and the stack is solved by QR, never through the normal "
            "equations. Coefficients are reported back in natural units."
        )
    else:
        computation = (
            f"Computation: sampling ({post.detail}), seeded, several chains; convergence "
            "checked with R-hat and the effective sample size (table in the posterior section)."
        )
    blocks: list[Block] = [
        Paragraph(
            "Why Bayesian: the study has few observations, and experts know more about the "
            "effects than the data alone show; the Bayesian model combines both and says how "
            "probable each effect size is."
        ),
        Paragraph(
            "The model (linear regression with normal, independent, constant-variance errors):"
        ),
        MODEL,
        Paragraph(
            "The priors (independent unless a correlated block is stated; the families "
            f"used in this fit: {', '.join(families) or 'flat only'}):"
        ),
        PRIORS,
        Paragraph(computation),
        Paragraph(
            "Ridge and lasso equivalence: with the noise sd sigma fixed, the posterior mode is "
            "a penalised least-squares estimate (Hoerl and Kennard, 1970, for ridge; Tibshirani, "
            "1996, for the lasso), centred on the prior centres:"
        ),
        PENALTY,
        Paragraph(
            "Accuracy: with flat priors the posterior mean is the least-squares estimate and the "
            "marginals are Student-t with n - p - 1 degrees of freedom. The engine's test suite "
            "checks that limit against the NIST StRD certified values for the Longley and "
            "Pontius data sets, requiring a log relative error of at least 9 (nine correct "
            "significant digits) for every coefficient, standard error and the residual sum of "
            "squares; about 13 to 15 digits are measured."
        ),
    ]
    return Section("method", "Method", tuple(blocks))


# --------------------------------------------------------------------------- 8. cautions


def _cautions(ctx: _Context) -> Section:
    r = ctx.result
    items = [
        "The priors encode the experts' judgement. Other experts could state other ranges; the "
        "sensitivity section shows how far the conclusions rest on these.",
        "The model is linear in the predictors and assumes independent errors of constant "
        "variance; the residual and predictive-check figures are there to judge that. Effects "
        "outside the range of the data (section 2) are extrapolations.",
        "The coefficients describe how the response moved with each predictor in these data; "
        "without a designed experiment they are not proof of cause.",
        "Results used for design or safety decisions must follow the local codes and standards "
        "and be reviewed by a licensed professional.",
    ]
    if r.posterior.method != "exact":
        items.append("Sampled results carry Monte Carlo error; see R-hat and ESS.")
    return Section("cautions", "Cautions", (Bullets(tuple(items)),))


# --------------------------------------------------------------------------- appendix

# Kruschke (2021), "Bayesian analysis reporting guidelines", Nature Human Behaviour 5, 1282-1291,
# Table 1. The preamble and steps 1A-2D were checked against a copy of the published table; the
# three items of step 3 against a published walk-through of the guidelines; steps 4-6 (decisions,
# sensitivity analysis, reproducibility) and their items are from memory.
BARG_ITEMS = (
    ("Preamble A", "Why Bayesian", "method"),
    ("Preamble B", "Goals of the analysis", "study"),
    ("1A", "Data variables: the predicted and predictor variables", "study, data"),
    ("1B", "Likelihood function and parameters", "method"),
    ("1C", "Prior distribution, explained and justified", "priors"),
    ("1D", "Formal specification of likelihood and prior", "method; priors.toml in the fit folder"),
    (
        "1E",
        "Prior predictive check",
        "sensitivity (prior-data conflict: where the data fall "
        "under the prior predictive distribution)",
    ),
    ("2A", "Software, with versions", "study"),
    (
        "2B",
        "MCMC chain convergence (e.g. R-hat) for every parameter",
        "posterior (sampled fits only; not applicable to exact computation)",
    ),
    ("2C", "MCMC chain resolution (effective sample size)", "posterior (sampled fits only)"),
    (
        "2D",
        "If not MCMC: the method and its accuracy",
        "method (exact computation, NIST StRD accuracy)",
    ),
    ("3A", "Posterior predictive check", "figures (predictive check, residuals)"),
    (
        "3B",
        "Posterior summary: central tendency and credible interval, its kind stated",
        "posterior, figures",
    ),
    (
        "3C",
        "Bayes factors and posterior model probabilities, if used",
        "comparison of prior sets (when saved); otherwise not used",
    ),
    (
        "4A",
        "Decisions: thresholds or a region of practical equivalence, justified",
        "sensitivity (thresholds given to the sweep and where conclusions flip)",
    ),
    (
        "4B",
        "Decision rule or utilities",
        "not used: cautions (decisions follow codes and professional review)",
    ),
    (
        "5A",
        "Sensitivity analysis: broad priors, results unchanged by other reasonable priors",
        "sensitivity (flat-prior limit, family swap), figures (width sweep)",
    ),
    (
        "5B",
        "Sensitivity analysis: informed priors, results under differently informed priors",
        "sensitivity (width sweep, flip points, prior-data conflict, power scaling)",
    ),
    (
        "5C",
        "Sensitivity of Bayes factors to the priors, if used",
        "comparison of prior sets (when saved; its cautions)",
    ),
    ("6A", "Reproducibility: the computer code", "study (command line, software versions)"),
    (
        "6B",
        "Reproducibility: the data",
        "study (data file and SHA-256); data.csv in the fit folder",
    ),
    ("6C", "Reproducibility: the posterior", "fit folder (fit.json, posterior.npz)"),
)


def _appendix(ctx: _Context) -> Section:
    rows = tuple(BARG_ITEMS)
    return Section("barg", "Appendix: reporting guideline checklist", (
        Paragraph(
            "Each item of the Bayesian analysis reporting guidelines (Kruschke, 2021, Nature "
            "Human Behaviour) and the section of this report that covers it."
        ),
        Table("guideline", "Guideline items and where this report covers them",
              ("item", "guideline asks for", "covered in"), rows),
    ), numbered=False)  # fmt: skip
