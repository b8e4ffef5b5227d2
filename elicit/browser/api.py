"""The JSON answers of the browser interview: one :class:`Session` per server.

Requests (all JSON; the server checks the token and the Host first, :mod:`.server`):

- ``GET /api/state``: the study, the data's row-label and not-used lines, the terms with what
  the file already holds (and, for a predictor whose units it lacks, the units question), the
  expert.
- With ``--conditional`` the terms are one item, ``"conditional"``: its reference rows
  (:func:`elicit.answers.conditional_rows`) and, posted, a range at each (``rows``), written as
  the terminal writes the ``[correlation]`` block (:func:`elicit.answers.conditional_entry`).
- ``POST /api/preview``: a statement (with the predictor's units where asked) -> the fitted
  prior's picture and words, or the validator's messages by field. Nothing is written.
- ``POST /api/accept``: the same, then, when valid, written at once to the prior file, units,
  answer and ``[model]`` in one atomic write.
- ``POST /api/others``: for a term already answered, the other experts' statements (the prior
  files given with ``--others``) and the linear pool of all of them.
- ``GET /api/summary``: every prior with its picture, the file's path and ``elicit show`` text.

A statement goes through the one validator and the one writer (:mod:`elicit.answers`), so an
invalid one is never saved and the file is the one the terminal interview writes and resumes.
"""

from __future__ import annotations

import threading
import warnings
from collections.abc import Mapping
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

from elicit import answers, show
from elicit.browser import form, views, wording
from elicit.errors import ElicitationWarning, PriorFileError
from elicit.feedback import block_feedback, coefficient_feedback, feedback, noise_feedback
from elicit.questions import Term
from elicit.spec import PriorSet
from elicit.validate import parse_priors


class ApiError(Exception):
    """A request the session refuses: HTTP status and one line."""

    def __init__(self, status: int, message: str):
        super().__init__(message)
        self.status = status


@dataclass(frozen=True)
class Study:
    """What the interview is about: the prior file, the data, the terms, the other experts."""

    out: Path
    frame: Any
    response: str
    terms: tuple[Term, ...]
    response_units: str | None = None
    others: tuple[tuple[str, PriorSet], ...] = ()
    noise: bool = True
    model: tuple[str | None, dict[str, str]] | None = None  # the formula given, levels used
    notes: tuple[str, ...] = ()  # the data's row-label and not-used lines
    conditional: bool = False  # one conditional-means screen instead of one per term


class Session:
    """The state of one browser interview (the prior document so far), safe across threads."""

    def __init__(self, study: Study, *, expert: str | None = None):
        self.study = study
        self._mutex = threading.Lock()
        self.doc = answers.open_document(study.out, study.response, study.response_units)
        self.priors = parse_priors(self.doc, source=str(study.out))
        self.expert = expert or answers.last_expert(self.priors)

    # ------------------------------------------------------------------ helpers
    def _term(self, column: Any) -> Term | None:
        if column == form.NOISE and self.study.noise:
            return None
        for t in self.study.terms:
            if t.column == column:
                return t
        raise ApiError(404, f"no question about {str(column)[:60]!r}")

    def _units(self) -> str | None:
        return self.priors.response_units

    def _with_units(self, priors: PriorSet, term: Term) -> Term:
        """``term`` with its predictor's units as ``priors`` hold them."""
        unit = priors.units.get(term.name) if term.level is None else None
        return replace(term, units=unit) if unit is not None else term

    def _doc_with_units(self, body: Mapping[str, Any], term: Term | None) -> dict[str, Any]:
        """The document with the predictor's units typed beside the statement (where the file
        lacks them: :func:`elicit.answers.units_prompt`), validated; blank: none given."""
        if term is None or answers.units_prompt(term, self.priors, self.study.frame) is None:
            return self.doc
        unit = body.get("units")
        if isinstance(unit, str):
            unit = unit.strip()
        if unit is None or unit == "":
            return self.doc
        try:
            priors = answers.with_units(self.doc, term.name, unit, str(self.study.out))
        except PriorFileError as exc:
            raise _Invalid({"units": form.field_of(str(exc))[1]}) from None
        return answers.prior_doc(priors)

    def _block_rows(self) -> tuple[list[str], list[tuple[str, dict[str, float]]]]:
        """The conditional-means names and reference rows, for the terms without an entry of
        their own (as the terminal interview asks them: :func:`elicit.answers.conditional_rows`)."""
        own = {c.column for c in self.priors.coefficients}
        todo = [t for t in self.study.terms if t.column not in own]
        return answers.conditional_rows(todo, self.study.frame, self.study.response)

    def _candidate(self, body: Mapping[str, Any]) -> tuple[str, dict, PriorSet, list[str]]:
        conditional = self.study.conditional and body.get("column") == form.CONDITIONAL
        term = None if conditional else self._term(body.get("column"))
        doc = self.doc if conditional else self._doc_with_units(body, term)
        try:
            if conditional:
                names, rows = self._block_rows()
                ranges, who = form.row_ranges(body, len(rows))
                key, entry = "correlation", answers.conditional_entry(names, rows, ranges, **who)
            elif term is None:
                key, entry = "noise", form.noise_entry(body)
            else:
                key, entry = "coefficient", form.coefficient_entry(body, term.name)
                if term.level is not None:  # a categorical level (elicit.questions)
                    entry = {"name": term.name, "level": term.level, **entry}
        except form.FormError as exc:
            raise _Invalid(exc.fields) from None
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", ElicitationWarning)
            try:
                candidate = answers.with_answer(doc, key, entry, str(self.study.out))
                if self.study.model is not None:  # as the terminal interview writes it
                    done = answers.prior_doc(candidate)
                    candidate = answers.with_model(done, *self.study.model, str(self.study.out))
            except PriorFileError as exc:
                where, problem = form.field_of(str(exc))
                raise _Invalid({where: problem}) from None
        notes = [form.field_of(str(w.message))[1] for w in caught]
        return key, entry, candidate, notes

    # ------------------------------------------------------------------ views
    def coefficient_view(self, priors: PriorSet, term: Term) -> dict[str, Any]:
        term = self._with_units(priors, term)
        prior = priors.get(term.column)
        s = prior.statements[-1]
        marks = views.stated_marks(s)
        curve = views.coefficient_curve(prior, s.per, marks)
        noise_sd = priors.noise.median if priors.noise is not None else None
        rows = views.predictive_rows(
            answers.implied_response(priors, term, self.study.frame, self.study.response)
        )
        level = term.level is not None  # a difference from the reference level: no other change
        again = [] if level else views.restated(prior, s)
        what = (wording.difference(self.study.response, term.column) if level else
                f"change in {self.study.response} "
                f"{wording.change(s.per, term.column, term.units)}")  # fmt: skip
        worst = views.worst_error(prior.dist(), s)
        return {
            "column": term.column, "family": prior.family, "df": prior.df, "per": s.per,
            "marks": marks,
            "xlabel": wording.axis(what, self._units()),
            "curve": curve, "worst": worst, "restated": again, "implied": rows,
            "words": {
                "belief": wording.belief(curve, what, self._units()),
                "fit": wording.fit_quality(worst),
                "restated": wording.restatement(again, term.column, term.units, self._units()),
                "implied": wording.implied(rows, self.study.response, self._units()),
                "show": show.format_coefficient(coefficient_feedback(prior, noise_sd=noise_sd),
                                                noise_sd=noise_sd),
            },
        }  # fmt: skip

    def noise_view(self, priors: PriorSet) -> dict[str, Any]:
        noise = priors.noise
        marks = {"kind": "range", "low": noise.low, "high": noise.high, "mass": noise.mass}
        curve = views.noise_curve(noise)
        what = f"residual sd of {self.study.response}"
        return {
            "column": form.NOISE, "family": "inverse_gamma", "per": 1.0, "marks": marks,
            "xlabel": wording.axis(what, self._units()),
            "curve": curve, "worst": None, "restated": [], "implied": [],
            "words": {"belief": wording.belief(curve, what, self._units()) if curve["x"] else [],
                      "fit": None, "restated": [], "implied": [],
                      "show": [show.format_noise(noise_feedback(noise))]},
        }  # fmt: skip

    def block_view(self, priors: PriorSet) -> dict[str, Any]:
        block = priors.block
        return {"column": form.CONDITIONAL, "names": list(block.names),
                "mean": [float(v) for v in block.mean],
                "sd": [float(v) for v in block.cov.diagonal() ** 0.5],
                "words": {"show": show.format_block(block_feedback(block)),
                          "heading": wording.SHOW_HEADING}}  # fmt: skip

    def conditional_item(self) -> dict[str, Any]:
        """The conditional-means screen: its reference rows (with the ranges saved, if any)."""
        block = self.priors.block
        names, rows = self._block_rows()
        saved = [{"low": r.low, "high": r.high, "mass": r.mass} for r in block.rows] if (
            block is not None and len(block.rows) == len(rows)) else [{} for _ in rows]  # fmt: skip
        units = self._units()
        shown = [{**wording.reference_row(i, label, values), "at": values, "saved": saved[i],
                  "prompts": wording.row_prompts(self.study.response, units, i)}
                 for i, (label, values) in enumerate(rows)]  # fmt: skip
        return {"column": form.CONDITIONAL, "units": units, "units_prompt": None,
                "describe": wording.conditional_intro(self.study.response, units, len(rows),
                                                      names),
                "answered": block is not None, "names": names, "rows": shown,
                "title": wording.CONDITIONAL_TITLE,
                "rationale": block.rows[0].rationale if block is not None and block.rows else None,
                "view": self.block_view(self.priors) if block is not None else None}  # fmt: skip

    def view(self, priors: PriorSet, column: str) -> dict[str, Any]:
        if self.study.conditional and column == form.CONDITIONAL:
            return self.block_view(priors)
        term = self._term(column)
        return self.noise_view(priors) if term is None else self.coefficient_view(priors, term)

    # ------------------------------------------------------------------ requests
    def state(self) -> dict[str, Any]:
        with self._mutex:
            done = answers.answered(self.priors)
            items = [{"column": t.column, "units": self._with_units(self.priors, t).units,
                      "units_prompt": answers.units_prompt(t, self.priors, self.study.frame),
                      "describe": t.describe, "answered": t.column in done,
                      "view": self.view(self.priors, t.column) if self.priors.get(t.column)
                      else None} for t in self.study.terms]  # fmt: skip
            if self.study.conditional:  # one screen for the terms, as the terminal asks them
                items = [self.conditional_item()]
            if self.study.noise:
                have = self.priors.noise is not None
                items.append({"column": form.NOISE, "units": self._units(), "units_prompt": None,
                              "describe": f"the scatter of {self.study.response} around its "
                              "expected value", "answered": have,
                              "view": self.noise_view(self.priors) if have else None})  # fmt: skip
            return {"response": self.study.response, "response_units": self._units(),
                    "title": self.priors.title, "out": str(self.study.out.resolve()),
                    "expert": self.expert, "items": items, "chips": form.DEFAULT_CHIPS,
                    "notes": list(self.study.notes),
                    "others": len(self.study.others),
                    "quantile_sets": {k: list(v) for k, v in form.QUANTILE_SETS.items()},
                    }  # fmt: skip

    def preview(self, body: Mapping[str, Any]) -> dict[str, Any]:
        with self._mutex:
            edges = _edges(body)
            try:
                key, _, candidate, notes = self._candidate(body)
            except _Invalid as bad:
                return {"ok": False, "errors": bad.fields, "edges": edges}
            column = body["column"]
            return {"ok": True, "errors": {}, "notes": notes, "edges": edges,
                    "view": self.view(candidate, column)}  # fmt: skip

    def accept(self, body: Mapping[str, Any]) -> dict[str, Any]:
        with self._mutex:
            column = body.get("column")
            if (
                column in answers.answered(self.priors)
                or (column == form.NOISE and self.priors.noise is not None)
                or (column == form.CONDITIONAL and self.priors.block is not None)
            ):
                raise ApiError(409, f"{column} is already answered in {self.study.out}")
            try:
                _, entry, candidate, notes = self._candidate(body)
            except _Invalid as bad:
                return {"ok": False, "errors": bad.fields, "edges": _edges(body)}
            try:
                self.doc = answers.save(candidate, self.study.out)
            except OSError as exc:  # the file as it was (an atomic write), the answer not saved
                raise ApiError(
                    500,
                    f"cannot write {self.study.out}: "
                    f"{exc.strerror or exc}; the answer is not saved",
                ) from None
            self.priors = candidate
            if entry.get("expert"):
                self.expert = entry["expert"]
            return {"ok": True, "saved": str(self.study.out), "notes": notes,
                    "view": self.view(candidate, column)}  # fmt: skip

    def others(self, body: Mapping[str, Any]) -> dict[str, Any]:
        with self._mutex:
            term = self._term(body.get("column"))
            if term is None:
                raise ApiError(400, "the other experts' noise statements are not overlaid")
            mine = self.priors.get(term.column)
            if mine is None:  # never before the expert has answered (against anchoring)
                raise ApiError(409, f"answer {term.column} first: the other experts' "
                                    "statements are shown only after")  # fmt: skip
            per = mine.statements[-1].per
            found, statements = [], list(mine.statements)
            for path, priors in self.study.others:
                theirs = priors.get(term.column)
                for s in theirs.statements if theirs is not None else ():
                    if s.family != "flat":
                        statements.append(s)
                        found.append((s.expert or Path(path).name, path, s))
            grid = views.shared_grid(statements, per)
            experts = [{"expert": who, "file": path, "per": s.per,
                        "density": views.statement_curve(s, per, grid)}
                       for who, path, s in found]  # fmt: skip
            pool = views.pooled_curve(statements, per, grid) if experts else None
            words = wording.pooled(pool["quantiles"], len(statements), self._units()) if pool else (
                "No other expert's statement about this term in the files given.")  # fmt: skip
            return {"column": term.column, "x": grid, "experts": experts, "pool": pool,
                    "mine": views.statement_curve(mine.statements[-1], per, grid),
                    "words": words}  # fmt: skip

    def summary(self) -> dict[str, Any]:
        with self._mutex:
            shown = [self.view(self.priors, c.column) for c in self.priors.coefficients
                     if c.family != "flat" and self._known(c.column)]  # fmt: skip
            if self.priors.noise is not None and not self.priors.noise.known:
                shown.append(self.noise_view(self.priors))
            fb = feedback(self.priors, frame=self.study.frame, response=self.study.response)
            return {"out": str(self.study.out.resolve()), "priors": shown,
                    "show": show.format_text(fb), "exists": self.study.out.exists()}  # fmt: skip

    def _known(self, column: str) -> bool:
        return any(t.column == column for t in self.study.terms)


class _Invalid(Exception):
    def __init__(self, fields: Mapping[str, str]):
        super().__init__("invalid")
        self.fields = dict(fields)


def _edges(body: Mapping[str, Any]) -> list[float] | None:
    if body.get("method") != "bins":
        return None
    try:
        return form.bin_edges(body)
    except form.FormError:
        return None
