"""The elicitation interview: question by question, with feedback, saved after every answer.

The questions come from a list of :class:`Term` (one per design column: a predictor, later a
categorical level or a derived term), so new kinds of columns only need new terms. Input and
output go through two callables, ``ask(prompt, type, default)`` and ``say(text)``, so the
command line uses :func:`click.prompt` (line based, works with stdin not a terminal) and tests
can script them.

Each accepted answer is validated by :func:`elicit.validate.parse_priors` and the whole prior
file rewritten atomically; the answers typed for the open question are kept in a draft
(:mod:`elicit.outfile`), so a kill loses at most the answer being typed. Started again, the
interview skips what the file answers, replays the draft and carries on.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import replace
from pathlib import Path
from typing import Any

import click

from elicit import answers, convert, show
from elicit.errors import InputError, PriorFileError
from elicit.feedback import block_feedback, coefficient_feedback, noise_feedback
from elicit.outfile import Draft, OutputLock, check_writable
from elicit.questions import Term, above, finite, positive, probability, terms_from_data
from elicit.spec import FAMILIES, PriorSet
from elicit.validate import parse_priors

__all__ = ["Interview", "Term", "terms_from_data"]  # Term's home is elicit.questions

Ask = Callable[..., Any]
Say = Callable[[str], None]


def _blank_to_none(text: str) -> str | None:
    text = text.strip()
    return text or None


class Interview:
    """State of one interview: the prior document so far and where it is saved.

    Parameters
    ----------
    out : Path
        The prior file; read and resumed if it exists.
    response : str
        Response column.
    ask, say : callables
        ``ask(prompt, type=None, default=None)`` returns the answer; ``say(text)`` prints.
    frame : pandas.DataFrame, optional
        Data, for the implied-response feedback.
    response_units : str, optional
    expert : str, optional
        Default expert name.
    """

    def __init__(
        self,
        out: Path,
        response: str,
        ask: Ask,
        say: Say,
        *,
        frame=None,
        response_units: str | None = None,
        expert: str | None = None,
    ):
        self.out = Path(out)
        self._typed = ask
        self.say = say
        self.frame = frame
        self.expert = expert
        self.response = response
        self._response_units = response_units
        self._draft: Draft | None = None
        self.model: tuple[str | None, dict[str, str]] | None = None  # written as [model]
        self._load()

    def _load(self) -> None:
        self.doc = answers.open_document(self.out, self.response, self._response_units)
        self.priors = parse_priors(self.doc, source=str(self.out))
        if self.expert is None:  # on resume, the last expert named is the default
            self.expert = answers.last_expert(self.priors)

    def ask(self, prompt: str, type=None, default=None) -> Any:
        """Ask through the ``ask`` callable, replaying and recording the draft."""
        found, answer = self._draft.replay(prompt) if self._draft else (False, None)
        if found:
            self.say(f"{prompt}: {answer} (from the draft)")
        else:
            answer = self._typed(prompt, type=type, default=default)
        if self._draft is not None:
            self._draft.record(prompt, answer)
        return answer

    def _begin(self, item: str) -> None:
        if self._draft is not None and self._draft.item != item:
            if n := self._draft.begin(item):
                self.say(f"resuming the draft: {n} typed answers")

    # -------------------------------------------------------------- state
    @property
    def answered(self) -> set[str]:
        return answers.answered(self.priors)

    def _candidate(self, key: str, value: Any) -> PriorSet:
        return answers.with_answer(self.doc, key, value, str(self.out))

    def _save(self, priors: PriorSet) -> None:
        if self.model is not None:  # the formula given and the reference levels used
            doc = answers.prior_doc(priors)
            priors = answers.with_model(doc, *self.model, str(self.out))
        self.doc = answers.save(priors, self.out)
        self.priors = priors

    def _units(self) -> str:
        u = self.priors.response_units
        return f" (in {u})" if u else ""

    # -------------------------------------------------------------- questions
    def ask_term(self, term: Term, last: Mapping[str, Any]) -> dict[str, Any]:
        """Ask one term's questions (previous answers as defaults); return the entry."""
        units = f" {term.units}" if term.units else ""
        family = self.ask(
            f"Family for {term.column}",
            type=click.Choice(FAMILIES),
            default=last.get("family", "normal"),
        )
        entry: dict[str, Any] = {"name": term.name}
        if term.level is not None:
            entry["level"] = term.level
        entry["family"] = family
        if family == "student_t":
            entry["df"] = self.checked(
                "Degrees of freedom", last.get("df", convert.DEFAULT_DF), positive
            )
        if family != "flat" and term.level is not None:
            what = f"difference in {self.response} for {term.column} against the reference level"
            entry.update(self._ask_range(what, "the difference", last))
        elif family != "flat":
            per = self.checked(
                f"The range is for a change of how many {term.units or 'units'} of {term.column}",
                last.get("per", 1.0),
                positive,
            )
            what = f"change in {self.response} per {per:g}{units} of {term.column}"
            entry.update(self._ask_range(what, "the effect", last))
            if per != 1.0:
                entry["per"] = per
        expert = _blank_to_none(
            self.ask("Expert", type=str, default=last.get("expert", self.expert or ""))
        )
        if expert:
            entry["expert"] = expert
            self.expert = expert
        rationale = _blank_to_none(
            self.ask("Rationale (one line)", type=str, default=last.get("rationale", ""))
        )
        if rationale:
            entry["rationale"] = rationale
        return entry

    def _show_term(self, priors: PriorSet, term: Term) -> None:
        noise_sd = priors.noise.median if priors.noise is not None else None
        info = coefficient_feedback(priors.get(term.column), noise_sd=noise_sd)
        self.say("\n".join(show.format_coefficient(info, noise_sd=noise_sd)))
        implied = answers.implied_response(priors, term, self.frame, self.response)
        if implied is not None:
            self.say("\n".join(show.format_predictive(implied, units=priors.response_units)))

    def _ask_range(self, what: str, subject: str, last: Mapping[str, Any]) -> dict[str, float]:
        """Lowest and highest plausible ``what``, and the probability of that range, each
        checked the moment it is typed (the highest above the lowest, a probability in (0, 1))."""
        low = self.checked(f"Lowest plausible {what}", last.get("low"), finite)
        high = self.checked(f"Highest plausible {what}", last.get("high"),
                            lambda x: finite(x) or above(x, low, "the lowest"))  # fmt: skip
        mass = self.checked(f"Probability that {subject} lies in that range",
                            last.get("mass", 0.9), probability)  # fmt: skip
        return {"low": low, "high": high, "mass": mass}

    def checked(self, prompt: str, default, check: Callable[[float], str | None]) -> float:
        """A number, asked again at once (with the reason) until ``check`` finds no problem."""
        while True:
            value = self.ask(prompt, type=float, default=default)
            problem = check(value)
            if problem is None:
                return value
            self.say(f"not accepted: {problem}")

    def _until_accepted(
        self,
        key: str,
        answer: Callable[[Any], Any],
        present: Callable[[PriorSet], None],
        saved: str,
    ) -> None:
        """Ask (``answer(previous)``), validate, present, and repeat until accepted; then save."""
        self._begin(f"{key}:{saved}")
        last = None
        while True:
            value = last = answer(last)
            try:
                candidate = self._candidate(key, value)
            except PriorFileError as exc:
                self.say(f"not accepted: {exc}")
                continue
            present(candidate)
            choice = self.ask(
                "Accept (a) or revise (r)?", type=click.Choice(["a", "r"]), default="a"
            )
            if choice == "a":
                self._save(candidate)
                if self._draft is not None:
                    self._draft.clear()
                self.say(f"saved {saved} to {self.out}")
                return

    def run_units(self, term: Term) -> Term:
        """Ask the units of ``term``'s predictor once (not when the file has them), save them
        at once, and return the term with its units."""
        if term.units is None and term.name in self.priors.units:
            return replace(term, units=self.priors.units[term.name])
        prompt = answers.units_prompt(term, self.priors, self.frame)
        if prompt is None:
            return term
        unit = _blank_to_none(str(self._typed(prompt, type=str, default=term.units or "")))
        if unit is None:
            return term
        self._save(answers.with_units(self.doc, term.name, unit, str(self.out)))
        return replace(term, units=unit)

    def run_term(self, term: Term, index: int, total: int) -> None:
        """Ask about one term until an answer is valid and accepted; then save."""
        term = self.run_units(term)
        head = f"\n[{index}/{total}] {term.column}"
        self.say(head + (f" ({term.units})" if term.units else "") + (f"; {term.describe}"
                 if term.describe else ""))  # fmt: skip
        self._until_accepted(
            "coefficient",
            lambda last: self.ask_term(term, last or {}),
            lambda priors: self._show_term(priors, term),
            term.column,
        )

    def run_noise(self) -> None:
        """Ask the range of the residual sd until valid and accepted; then save."""
        self.say(f"\nNoise: the scatter of {self.response} around its expected value")
        what = f"residual standard deviation of {self.response}{self._units()}"

        def show_noise(priors: PriorSet) -> None:
            self.say(show.format_noise(noise_feedback(priors.noise), with_scale=False))

        def answer(last: dict[str, Any] | None) -> dict[str, Any]:
            last = last or {}
            table: dict[str, Any] = self._ask_range(what, "it", last)
            said = self.ask("Expert", type=str, default=last.get("expert", self.expert or ""))
            why = self.ask("Rationale (one line)", type=str, default=last.get("rationale", ""))
            for key, text in (("expert", said), ("rationale", why)):
                if _blank_to_none(text):
                    table[key] = _blank_to_none(text)
            return table

        self._until_accepted(
            "noise",
            answer,
            show_noise,
            "the noise range",
        )

    def run_conditional(self, terms: Sequence[Term]) -> None:
        """Conditional-means questions: the expected response at k reference rows.

        The rows are the data means, then each term's last reference value (its 90% quantile)
        with the others at their means; k = len(terms) + 1 (the intercept). The block is one
        answer: it is saved when all its rows are accepted together.

        Raises
        ------
        InputError
            If the interview was started without the data (``frame``).
        """
        if self.frame is None:
            raise InputError("conditional-means questions need the data: give frame")
        names, rows = answers.conditional_rows(terms, self.frame, self.response)
        self.say(
            f"\nConditional means: the expected {self.response} at {len(rows)} reference rows "
            f"gives a correlated prior on {', '.join(names)}"
        )
        self._begin("correlation:the conditional-means prior")
        expert = _blank_to_none(self.ask("Expert", type=str, default=self.expert or ""))

        def answer(last: dict[str, Any] | None) -> dict[str, Any]:
            ranges = []
            for i, (label, _) in enumerate(rows):
                self.say(f"row {i + 1}: {label}")
                what = f"expected {self.response}{self._units()} at row {i + 1}"
                ranges.append(self._ask_range(what, "it", last["row"][i] if last else {}))
            return answers.conditional_entry(names, rows, ranges, expert)

        self._until_accepted(
            "correlation",
            answer,
            lambda priors: self.say("\n".join(show.format_block(block_feedback(priors.block)))),
            "the conditional-means prior",
        )

    def run(
        self, terms: Sequence[Term], *, noise: bool = True, conditional: bool = False
    ) -> PriorSet:
        """Ask every unanswered term (or, with ``conditional``, the conditional-means rows for
        all of them), then the noise; return the saved priors.

        The output file must be writable (checked first) and is locked for the whole run.
        Raises
        ------
        InputError
            When the output file cannot be written or another interview holds its lock.
        """
        check_writable(self.out)
        with OutputLock(self.out):
            self._load()  # the file as it is now that no one else writes it
            self._draft = Draft(self.out)
            try:
                return self._run(terms, noise=noise, conditional=conditional)
            finally:
                self._draft = None

    def _run(self, terms: Sequence[Term], *, noise: bool, conditional: bool) -> PriorSet:
        done = self.answered
        todo = [t for t in terms if t.column not in done]
        if done:
            skipped = ", ".join(t.column for t in terms if t.column in done)
            self.say(f"resuming {self.out}: already answered: {skipped or '-'}")
        if conditional and todo and self.priors.block is None:
            self.run_conditional(todo)
        elif not conditional:
            for i, term in enumerate(todo, len(terms) - len(todo) + 1):
                self.run_term(term, i, len(terms))
        if noise and self.priors.noise is None:
            self.run_noise()
        if not self.out.exists():
            self._save(self.priors)
        held = [c.column for c in self.priors.coefficients]
        if self.priors.block is not None:
            held.append("a correlated block on " + ", ".join(self.priors.block.names))
        self.say(f"\ndone: {self.out} holds priors on {', '.join(held) or 'nothing'}")
        return self.priors
