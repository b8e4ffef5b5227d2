"""The reporting-guideline checklist (the report's appendix): each item and where it is covered."""

from __future__ import annotations

from bayes.report.document import Paragraph, Section, Table

# Kruschke (2021), "Bayesian analysis reporting guidelines", Nature Human Behaviour 5, 1282-1291,
# Table 1. The preamble and steps 1A-2D were checked against a copy of the published table; the
# three items of step 3 against a published walk-through of the guidelines; steps 4-6 (decisions,
# sensitivity analysis, reproducibility) and their items are from memory.
# One item a line: item | what the guideline asks for | where this report covers it; an indented
# line continues the one above.
_ITEMS = """
Preamble A | Why Bayesian | method
Preamble B | Goals of the analysis | study
1A | Data variables: the predicted and predictor variables | study, data
1B | Likelihood function and parameters | method
1C | Prior distribution, explained and justified | priors
1D | Formal specification of likelihood and prior | method; priors.toml in the fit folder
1E | Prior predictive check | sensitivity (prior-data conflict: where the data fall under the
    prior predictive distribution)
2A | Software, with versions | study
2B | MCMC chain convergence (e.g. R-hat) for every parameter | posterior (sampled fits only; not
    applicable to exact computation)
2C | MCMC chain resolution (effective sample size) | posterior (sampled fits only)
2D | If not MCMC: the method and its accuracy | method (exact computation, NIST StRD accuracy)
3A | Posterior predictive check | figures (predictive check, residuals)
3B | Posterior summary: central tendency and credible interval, its kind stated | posterior,
    figures
3C | Bayes factors and posterior model probabilities, if used | comparison of prior sets (when
    saved); otherwise not used
4A | Decisions: thresholds or a region of practical equivalence, justified | sensitivity
    (thresholds given to the sweep and where conclusions flip)
4B | Decision rule or utilities | not used: cautions (decisions follow codes and professional
    review)
5A | Sensitivity analysis: broad priors, results unchanged by other reasonable priors
    | sensitivity (flat-prior limit, family swap), figures (width sweep)
5B | Sensitivity analysis: informed priors, results under differently informed priors
    | sensitivity (width sweep, flip points, prior-data conflict, power scaling)
5C | Sensitivity of Bayes factors to the priors, if used | comparison of prior sets (when saved;
    its cautions)
6A | Reproducibility: the computer code | study (command line, software versions)
6B | Reproducibility: the data | study (data file and SHA-256); data.csv in the fit folder
6C | Reproducibility: the posterior | fit folder (fit.json, posterior.npz)
"""


def _table(text: str) -> tuple[tuple[str, ...], ...]:
    """The rows of a '|'-separated text table whose indented lines continue the line above."""
    lines: list[str] = []
    for line in text.strip().splitlines():
        if line.startswith(" "):
            lines[-1] += " " + line.strip()
        else:
            lines.append(line)
    return tuple(tuple(cell.strip() for cell in line.split(" | ")) for line in lines)


BARG_ITEMS = _table(_ITEMS)
GUIDELINE_INTRO = (
    "Each item of the Bayesian analysis reporting guidelines (Kruschke, 2021, Nature "
    "Human Behaviour) and the section of this report that covers it."
)


def guideline_section() -> Section:
    """Appendix: the reporting-guideline checklist (not numbered)."""
    return Section("barg", "Appendix: reporting guideline checklist", (
        Paragraph(GUIDELINE_INTRO),
        Table("guideline", "Guideline items and where this report covers them",
              ("item", "guideline asks for", "covered in"), BARG_ITEMS),
    ), numbered=False)  # fmt: skip
