"""The model's formulas, as plain text (Markdown) and as MathML (HTML, no script needed).

These constants are the only markup the HTML template inserts unescaped; they hold no user input.
"""

from __future__ import annotations

from bayes.report.document import Formula


def _math(body: str) -> str:
    """A displayed formula; ``<mspace width='1em'/>`` separates the lines of a long one, set as
    rows of a left-aligned table so that it never runs past a printed page."""
    lines = body.split("<mspace width='1em'/>")
    if len(lines) > 1 and len(body) > 800:  # the model fits on one line, the others do not
        rows = "".join(f"<mtr><mtd>{line}</mtd></mtr>" for line in lines)
        body = f'<mtable columnalign="left">{rows}</mtable>'
    return f'<math display="block">{body}</math>'


MODEL_TEX = (
    r"$y_i = \beta_0 + \sum_{j=1}^{p} \beta_j x_{ij} + \varepsilon_i,\quad "
    r"\varepsilon_i \sim \mathrm{N}(0, \sigma^2)\ \mathrm{independent}$"
)
PRIORS_TEX = (
    r"$\beta_j \sim \mathrm{N}(m_j, \tau_j^2)\ \mathrm{or}\ \mathrm{Laplace}(m_j, b_j)\ "
    r"\mathrm{or}\ t_\nu(m_j, s_j)\ \mathrm{or\ flat};\quad \sigma^2 \sim "
    r"\mathrm{InvGamma}(a, c)\ \mathrm{or}\ p(\sigma^2) \propto 1/\sigma^2$"
)
PENALTY_TEX = (
    r"$\hat\beta = \mathrm{argmin}_\beta\ \frac{1}{2}\sum_i (y_i - x_i^\prime\beta)^2 + "
    r"\frac{1}{2}\sum_{\mathrm{normal}} \lambda_j (\beta_j - m_j)^2 + "
    r"\sum_{\mathrm{Laplace}} \lambda_j |\beta_j - m_j|,\quad "
    r"\lambda_j = \sigma^2/\tau_j^2\ \mathrm{(ridge)},\ \lambda_j = \sigma^2/b_j\ "
    r"\mathrm{(lasso)}$"
)
MODEL = Formula(
    "y_i = beta_0 + sum_{j=1..p} beta_j x_ij + e_i,   e_i ~ Normal(0, sigma^2) independent, "
    "i = 1..n",
    _math(
        "<msub><mi>y</mi><mi>i</mi></msub><mo>=</mo><msub><mi>&#x3B2;</mi><mn>0</mn></msub>"
        "<mo>+</mo><munderover><mo>&#x2211;</mo><mrow><mi>j</mi><mo>=</mo><mn>1</mn></mrow>"
        "<mi>p</mi></munderover><msub><mi>&#x3B2;</mi><mi>j</mi></msub>"
        "<msub><mi>x</mi><mrow><mi>i</mi><mi>j</mi></mrow></msub><mo>+</mo>"
        "<msub><mi>&#x3B5;</mi><mi>i</mi></msub><mo>,</mo><mspace width='1em'/>"
        "<msub><mi>&#x3B5;</mi><mi>i</mi></msub><mo>&#x223C;</mo><mi mathvariant='normal'>N</mi>"
        "<mo>(</mo><mn>0</mn><mo>,</mo><msup><mi>&#x3C3;</mi><mn>2</mn></msup><mo>)</mo>"
        "<mtext>&#xA0;independent</mtext>"
    ),
    MODEL_TEX,
)
PRIORS = Formula(
    "beta_j ~ Normal(m_j, tau_j^2)  or  Laplace(m_j, b_j)  or  Student-t_nu(m_j, s_j)  or flat; "
    "sigma known, or sigma^2 ~ InvGamma(a, c), or p(sigma^2) proportional to 1/sigma^2",
    _math(
        "<msub><mi>&#x3B2;</mi><mi>j</mi></msub><mo>&#x223C;</mo>"
        "<mi mathvariant='normal'>N</mi><mo>(</mo><msub><mi>m</mi><mi>j</mi></msub><mo>,</mo>"
        "<msubsup><mi>&#x3C4;</mi><mi>j</mi><mn>2</mn></msubsup><mo>)</mo>"
        "<mtext>&#xA0;or&#xA0;</mtext><mi>Laplace</mi><mo>(</mo><msub><mi>m</mi><mi>j</mi></msub>"
        "<mo>,</mo><msub><mi>b</mi><mi>j</mi></msub><mo>)</mo><mtext>&#xA0;or&#xA0;</mtext>"
        "<msub><mi>t</mi><mi>&#x3BD;</mi></msub><mo>(</mo><msub><mi>m</mi><mi>j</mi></msub>"
        "<mo>,</mo><msub><mi>s</mi><mi>j</mi></msub><mo>)</mo><mtext>&#xA0;or flat;</mtext>"
        "<mspace width='1em'/><msup><mi>&#x3C3;</mi><mn>2</mn></msup><mo>&#x223C;</mo>"
        "<mi>InvGamma</mi><mo>(</mo><mi>a</mi><mo>,</mo><mi>c</mi><mo>)</mo>"
        "<mtext>&#xA0;or&#xA0;</mtext><mi>p</mi><mo>(</mo><msup><mi>&#x3C3;</mi><mn>2</mn></msup>"
        "<mo>)</mo><mo>&#x221D;</mo><mn>1</mn><mo>/</mo><msup><mi>&#x3C3;</mi><mn>2</mn></msup>"
    ),
    PRIORS_TEX,
)
PENALTY = Formula(
    "mode given sigma = argmin over beta of  (1/2) sum_i (y_i - x_i'beta)^2 "
    "+ (1/2) sum_{normal j} lambda_j (beta_j - m_j)^2 + sum_{Laplace j} lambda_j |beta_j - m_j|,"
    "   lambda_j = sigma^2 / tau_j^2 (ridge),  lambda_j = sigma^2 / b_j (lasso)",
    _math(
        "<mover><mi>&#x3B2;</mi><mo>^</mo></mover><mo>=</mo><munder><mi>argmin</mi>"
        "<mi>&#x3B2;</mi></munder><mfrac><mn>1</mn><mn>2</mn></mfrac><munder><mo>&#x2211;</mo>"
        "<mi>i</mi></munder><msup><mrow><mo>(</mo><msub><mi>y</mi><mi>i</mi></msub><mo>&#x2212;</mo>"
        "<msubsup><mi>x</mi><mi>i</mi><mo>&#x2032;</mo></msubsup><mi>&#x3B2;</mi><mo>)</mo></mrow>"
        "<mn>2</mn></msup><mo>+</mo><mfrac><mn>1</mn><mn>2</mn></mfrac><munder><mo>&#x2211;</mo>"
        "<mtext>normal</mtext></munder><msub><mi>&#x3BB;</mi><mi>j</mi></msub>"
        "<msup><mrow><mo>(</mo><msub><mi>&#x3B2;</mi><mi>j</mi></msub><mo>&#x2212;</mo>"
        "<msub><mi>m</mi><mi>j</mi></msub><mo>)</mo></mrow><mn>2</mn></msup><mo>+</mo>"
        "<munder><mo>&#x2211;</mo><mtext>Laplace</mtext></munder><msub><mi>&#x3BB;</mi><mi>j</mi>"
        "</msub><mrow><mo>|</mo><msub><mi>&#x3B2;</mi><mi>j</mi></msub><mo>&#x2212;</mo>"
        "<msub><mi>m</mi><mi>j</mi></msub><mo>|</mo></mrow><mo>,</mo><mspace width='1em'/>"
        "<msub><mi>&#x3BB;</mi><mi>j</mi></msub><mo>=</mo><msup><mi>&#x3C3;</mi><mn>2</mn></msup>"
        "<mo>/</mo><msubsup><mi>&#x3C4;</mi><mi>j</mi><mn>2</mn></msubsup><mtext>&#xA0;(ridge),"
        "&#xA0;</mtext><msub><mi>&#x3BB;</mi><mi>j</mi></msub><mo>=</mo>"
        "<msup><mi>&#x3C3;</mi><mn>2</mn></msup><mo>/</mo><msub><mi>b</mi><mi>j</mi></msub>"
        "<mtext>&#xA0;(lasso)</mtext>"
    ),
    PENALTY_TEX,
)
