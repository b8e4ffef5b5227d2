"""The prior document an interview builds, shared by both faces (terminal and browser).

Opening resumes the file as it is (checked against the response), every candidate answer goes
through the one validator (:func:`elicit.validate.parse_priors`), every accepted one is written
atomically by the one writer (:func:`elicit.write.write_prior_file`), and the implied response
at a term's reference rows comes from :mod:`elicit.predictive`.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

from elicit.errors import PriorFileError
from elicit.predictive import NoPredictive, Predictive, predictor_means, prior_predictive
from elicit.questions import Term
from elicit.read import read_prior_file
from elicit.spec import INTERCEPT, PriorSet
from elicit.validate import parse_priors
from elicit.write import prior_doc, write_prior_file

HEADER = "Prior file written by `elicit interview`."


def open_document(out: Path, response: str, response_units: str | None = None) -> dict[str, Any]:
    """The prior document of ``out`` (read and checked against ``response``), or a new one."""
    if out.exists():
        priors = read_prior_file(out)
        if priors.response is not None and priors.response != response:
            raise PriorFileError(
                f"{out}: [study]: field 'response': the file is for "
                f"{priors.response!r}, not {response!r}"
            )
        doc = prior_doc(priors)
        doc.setdefault("study", {})["response"] = response
        return doc
    study = {"response": response}
    if response_units:
        study["response_units"] = response_units
    return {"study": study}


def last_expert(priors: PriorSet) -> str | None:
    """The last expert named in the file (the default on resume)."""
    named = [s.expert for c in priors.coefficients for s in c.statements if s.expert]
    return named[-1] if named else None


def answered(priors: PriorSet) -> set[str]:
    """The design columns the file already answers (their own entry or the block)."""
    done = {c.column for c in priors.coefficients}
    if priors.block is not None:
        done |= set(priors.block.names)
    return done


def with_answer(doc: dict[str, Any], key: str, value: Any, source: str) -> PriorSet:
    """The document with one more answer (``key`` "coefficient", "noise" or "correlation"),
    validated; raises PriorFileError naming the field when it is not acceptable."""
    new = dict(doc)
    if key == "coefficient":
        new["coefficient"] = [*doc.get("coefficient", []), value]
    else:
        new[key] = value
    return parse_priors(new, source=source)


def save(priors: PriorSet, out: Path) -> dict[str, Any]:
    """Write ``priors`` to ``out`` atomically; return the document now on disk."""
    write_prior_file(priors, out, header=HEADER)
    return prior_doc(priors)


def implied_response(
    priors: PriorSet, term: Term, frame, response: str
) -> Predictive | NoPredictive | None:
    """The response the priors imply at ``term``'s reference rows (None: no data, no rows,
    or a flat prior on the term)."""
    prior = priors.get(term.column)
    if frame is None or not term.reference or prior is None or prior.family == "flat":
        return None
    means = predictor_means(frame, response)
    y_mean = float(frame[response].mean())
    rows = [(label, {term.column: value}) for label, value in term.reference]
    return prior_predictive(priors, rows, means=means, y_mean=y_mean)


def units_prompt(term: Term, priors: PriorSet, frame) -> str | None:
    """The question for ``term``'s predictor's units, with the data's range shown
    (``"Units of nitrogen (data: 41 to 198)"``), or None when there is nothing to ask: the file
    already has them (resume), or the term is a categorical level, a derived term (an
    interaction, I(...)) or not a data column."""
    if term.level is not None or term.name in priors.units:
        return None
    if any(mark in term.name for mark in ":()*"):  # a derived term: its units follow
        return None
    if frame is None or term.name not in frame or frame[term.name].dtype.kind not in "fiu":
        return None
    low, high = float(frame[term.name].min()), float(frame[term.name].max())
    return f"Units of {term.name} (data: {low:g} to {high:g})"


def with_units(doc: dict[str, Any], name: str, unit: str, source: str) -> PriorSet:
    """The document with ``[units] name = unit``, validated."""
    return parse_priors({**doc, "units": {**doc.get("units", {}), name: unit}}, source=source)


def with_model(
    doc: dict[str, Any], formula: str | None, reference: dict[str, str], source: str
) -> PriorSet:
    """The document with the ``[model]`` the interview asked about (the formula given, the
    reference levels used), validated; the file's own [model] is kept when nothing is given."""
    model = dict(doc.get("model", {}))
    if formula is not None:
        model["formula"] = formula
    if reference:
        model["reference"] = {**model.get("reference", {}), **reference}
    return parse_priors({**doc, "model": model} if model else doc, source=source)


def conditional_rows(
    terms: Sequence[Term], frame, response: str
) -> tuple[list[str], list[tuple[str, dict[str, float]]]]:
    """The conditional-means question's coefficient names and its ``k = len(terms) + 1``
    reference rows ``(label, predictor values)``: the data means, then each term's last
    reference value (its 90% quantile) with the others at their means."""
    data_means = predictor_means(frame, response)  # level indicators too
    means = {t.column: data_means[t.column] for t in terms}
    rows = [("all predictors at their data means", dict(means))]
    for t in terms:
        label, value = t.reference[-1]
        rows.append((f"{label}, the others at their means", means | {t.column: value}))
    return [INTERCEPT, *(t.column for t in terms)], rows


def conditional_entry(
    names: Sequence[str],
    rows: Sequence[tuple[str, Mapping[str, float]]],
    ranges: Sequence[Mapping[str, Any]],
    expert: str | None = None,
    rationale: str | None = None,
) -> dict[str, Any]:
    """The ``[correlation]`` entry of stated ranges (``low``, ``high``, ``mass`` per row) at
    the reference rows, each row with the expert (and rationale) when given."""
    stated = []
    for (_, values), said in zip(rows, ranges, strict=True):
        row = {"at": dict(values), **said}
        if expert:
            row["expert"] = expert
        if rationale:
            row["rationale"] = rationale
        stated.append(row)
    return {"names": list(names), "row": stated}
