"""Sections 7 and 8 of the report: the method (model, priors, computation) and the cautions."""

from __future__ import annotations

from bayes.report import wording as W
from bayes.report.context import Context
from bayes.report.document import Block, Bullets, Paragraph, Section
from bayes.report.formulas import MODEL, PENALTY, PRIORS


def method_section(ctx: Context) -> Section:
    """7. Method: why Bayesian, the model and priors as formulas, computation, accuracy."""
    r = ctx.result
    post = r.posterior
    families = sorted({cp.family for cp in r.priors.coefficients})
    blocks: list[Block] = [
        Paragraph(W.WHY_BAYESIAN),
        Paragraph(W.MODEL_INTRO),
        MODEL,
        Paragraph(W.priors_intro(families)),
        PRIORS,
        Paragraph(W.computation_text(post.method, post.detail)),
        Paragraph(W.PENALTY_INTRO),
        PENALTY,
        Paragraph(W.ACCURACY),
    ]
    return Section("method", "Method", tuple(blocks))


def cautions_section(ctx: Context) -> Section:
    """8. Cautions: what the numbers do not say."""
    items = list(W.CAUTIONS)
    if ctx.result.posterior.method != "exact":
        items.append(W.SAMPLED_CAUTION)
    return Section("cautions", "Cautions", (Bullets(tuple(items)),))
