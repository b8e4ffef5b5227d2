"""How a prior set shows itself in a notebook or a console: a short ``repr`` and a small,
escaped HTML table (``_repr_html_``). :func:`html_block` is the one table builder that the fit,
sweep and comparison displays of :mod:`bayes.results.display` share.

Only markup and words here; the numbers come from the prior objects.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from html import escape

MAX_ROWS = 30  # rows of a table shown in a notebook; the rest are counted, not shown


def html_block(title: str, headers: Sequence[str], rows: Sequence[Sequence], *,
               lines: Sequence[str] = (), notes: Sequence[str] = ()) -> str:  # fmt: skip
    """A title, a table (at most ``MAX_ROWS`` rows), lines of text and notes, all escaped."""
    head = "".join(f"<th>{escape(str(h))}</th>" for h in headers)
    body = "".join(
        "<tr>" + "".join(f"<td>{escape(str(c))}</td>" for c in row) + "</tr>"
        for row in rows[:MAX_ROWS]
    )
    more = len(rows) - MAX_ROWS
    if more > 0:
        body += f'<tr><td colspan="{len(headers)}">... {more} more rows</td></tr>'
    parts = [f"<div><strong>{escape(title)}</strong>"]
    parts += [f"<div>{escape(line)}</div>" for line in lines]
    parts.append(f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>")
    parts += [f"<div><em>Note:</em> {escape(n)}</div>" for n in notes]
    parts.append("</div>")
    return "".join(parts)


def _g(x: float | None) -> str:
    return "" if x is None or (isinstance(x, float) and math.isnan(x)) else f"{x:.4g}"


HEADERS = ("coefficient", "family", "center", "scale", "df", "units", "experts")


def _rows(priors) -> list[tuple[str, ...]]:
    """One row per coefficient prior: its parameters per one unit of predictor."""
    rows = []
    for c in priors.coefficients:
        unit = priors.units.get(c.name)
        per = f"{priors.response_units} per {unit}" if priors.response_units and unit else ""
        experts = sorted({s.expert for s in c.statements if s.expert})
        family = c.family + (f" ({c.pool} pool)" if c.pool else "")
        rows.append((c.column, family, _g(c.center) if c.family != "flat" else "",
                     _g(c.scale), _g(c.df), per, ", ".join(experts)))  # fmt: skip
    return rows


def _noise(priors) -> str:
    n, units = priors.noise, f" {priors.response_units}" if priors.response_units else ""
    if n is None:
        return "noise sd: Jeffreys prior (none stated)"
    if n.known:
        return f"noise sd: known, {_g(n.sd)}{units}"
    return (f"noise sd: inverse gamma on its square (shape {_g(n.shape)}, scale {_g(n.scale)}), "
            f"median {_g(n.median)}{units}")  # fmt: skip


def _lines(priors) -> list[str]:
    lines = []
    if priors.response:
        units = f" ({priors.response_units})" if priors.response_units else ""
        lines.append(f"response: {priors.response}{units}")
    lines.append(_noise(priors))
    if priors.block is not None:
        lines.append(f"correlated block on {', '.join(priors.block.names)}")
    lines.append("columns without an entry: flat priors")
    return lines


def _title(priors) -> str:
    title = priors.title or "Prior set"
    return f"{title} (from {priors.path})" if priors.path else title


def prior_set_text(priors) -> str:
    """A few lines: the title and source, one line per coefficient prior, the noise prior."""
    head = f"<PriorSet: {_title(priors)}; {len(priors.coefficients)} coefficient priors>"
    body = [f"  {r[0]}: {r[1]}" + (f" center {r[2]} scale {r[3]}" if r[2] else "")
            + (f" df {r[4]}" if r[4] else "") + (f" ({r[5]})" if r[5] and r[2] else "")
            for r in _rows(priors)[:MAX_ROWS]]  # fmt: skip
    more = len(priors.coefficients) - MAX_ROWS
    if more > 0:
        body.append(f"  ... {more} more")
    return "\n".join([head, *body, *(f"  {line}" for line in _lines(priors))])


def prior_set_html(priors) -> str:
    """The prior set as an escaped HTML table (at most ``MAX_ROWS`` rows)."""
    return html_block(_title(priors), HEADERS, _rows(priors), lines=_lines(priors),
                      notes=("A posterior is only as good as its priors: record who stated "
                             "each one and why.",))  # fmt: skip
