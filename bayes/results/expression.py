"""A linear expression in a fit's coefficients, read by our own small parser (never ``eval``).

Grammar (spaces anywhere between tokens)::

    expression := term (("+" | "-") term)*
    term       := factor ("*" factor)*
    factor     := ("+" | "-") factor | NUMBER | NAME | "(" expression ")"

A NAME is a coefficient as the fit names it (``intercept``, ``water_cement``,
``C(soil)[clay]``, ``I(water_cement ** 2)``, ``fly_ash:curing_temp``), matched literally,
the longest first and ignoring spaces, or the short form of a level, ``soil[clay]`` for
``C(soil)[clay]``. A reference level names a difference of 0 (its effect is 0 by the
coding). Every value is linear, a vector ``a`` and a constant ``c`` meaning
``a' beta + c``; a product needs a constant on one side.
"""

from __future__ import annotations

import re
from collections.abc import Sequence

import numpy as np

from bayes.errors import InputError

_NUMBER = re.compile(r"(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?")
_WORDISH = re.compile(r"[A-Za-z_][\w.]*(\([^()]*\))?(\[[^\]]*\])?")
_OPERATORS = "+-*()"


def coefficient_names(names: Sequence[str], terms=None) -> dict[str, int | None]:
    """Every spelling of a coefficient the parser accepts -> its index (None: a reference level).

    Parameters
    ----------
    names : sequence of str
        The fit's coefficients ("intercept" first when the model has one).
    terms : bayes.data.terms.Terms, optional
        The coding of categorical predictors (adds the short forms and reference levels).
    """
    known: dict[str, int | None] = {name: j for j, name in enumerate(names)}
    for c in getattr(terms, "categorical", ()):
        for level in c.levels:
            j = known.get(c.column(level))
            known.setdefault(c.column(level), j)
            known.setdefault(f"{c.name}[{level}]", j)
    return known


def parse_linear(text: str, names: Sequence[str], terms=None) -> tuple[np.ndarray, float]:
    """The vector ``a`` and constant ``c`` of ``text`` read as ``a' beta + c``.

    Parameters
    ----------
    text : str
        E.g. ``"soil[clay] - soil[sand]"`` or ``"0.5 * (x1 + x2) - 2 * intercept"``.
    names : sequence of str
        The fit's coefficients, in order (``a`` follows it).
    terms : bayes.data.terms.Terms, optional

    Raises
    ------
    InputError
        One line naming the expression and what is wrong: an unknown name (with the known
        ones, or the factor's levels), a misplaced or missing operator, a product of two
        coefficients, an expression in no coefficient.
    """
    parser = _Parser(text, len(names), coefficient_names(names, terms), terms)
    a, c = parser.expression()
    if parser.peek() is not None:
        parser.fail(f"unexpected '{parser.peek()[1]}'")
    if not np.any(a):
        parser.fail("it involves no coefficient (a constant, or reference levels only)")
    return a, c


class _Parser:
    """Recursive descent over the tokens of one expression."""

    def __init__(self, text: str, k: int, known: dict[str, int | None], terms) -> None:
        self.text, self.k, self.known, self.terms = text, k, known, terms
        self.spellings = sorted(known, key=len, reverse=True)  # longest first
        self.tokens = self._tokens()
        self.at = 0

    def fail(self, why: str):
        raise InputError(f"contrast {self.text!r}: {why}")

    # ------------------------------------------------------------------ tokens
    def _tokens(self) -> list[tuple[str, object]]:
        out, i, text = [], 0, self.text
        while i < len(text):
            if text[i].isspace():
                i += 1
                continue
            name = self._name_at(i)
            if name is not None:
                spelling, i = name
                out.append(("name", spelling))
                continue
            if text[i] in _OPERATORS:
                out.append(("op", text[i]))
                i += 1
                continue
            number = _NUMBER.match(text, i)
            if number:
                out.append(("number", float(number[0])))
                i = number.end()
                continue
            word = _WORDISH.match(text, i)
            self.fail(self._unknown(word[0]) if word else f"unexpected character {text[i]!r}")
        return out

    def _name_at(self, i: int) -> tuple[str, int] | None:
        """The longest known spelling at position ``i`` (spaces ignored) and where it ends."""
        text = self.text
        for spelling in self.spellings:
            j = i
            for ch in spelling:
                if ch.isspace():
                    continue
                while j < len(text) and text[j].isspace():
                    j += 1
                if j >= len(text) or text[j] != ch:
                    break
                j += 1
            else:
                if spelling[-1:].isalnum() or spelling[-1:] == "_":
                    if j < len(text) and (text[j].isalnum() or text[j] in "_.["):
                        continue  # "x" is not the start of "x2"
                return spelling, j
        return None

    def _unknown(self, word: str) -> str:
        base = word.split("[", 1)[0]
        cat = None
        if self.terms is not None:
            cat = self.terms.get(base) or self.terms.get(base.removeprefix("C(").rstrip(")"))
        if cat is not None and "[" in word:
            return (f"unknown level in '{word}': '{cat.name}' has levels "
                    f"{', '.join(cat.levels)} (reference {cat.reference})")  # fmt: skip
        shown = [s for s in self.known if self.known[s] is not None]
        return f"unknown name '{word}' (the fit's coefficients: {', '.join(shown)})"

    # ------------------------------------------------------------------ grammar
    def peek(self):
        return self.tokens[self.at] if self.at < len(self.tokens) else None

    def take(self):
        token = self.peek()
        if token is None:
            self.fail("it ends too early")
        self.at += 1
        return token

    def expression(self) -> tuple[np.ndarray, float]:
        a, c = self.term()
        while self.peek() in (("op", "+"), ("op", "-")):
            sign = 1.0 if self.take()[1] == "+" else -1.0
            b, d = self.term()
            a, c = a + sign * b, c + sign * d
        return a, c

    def term(self) -> tuple[np.ndarray, float]:
        a, c = self.factor()
        while self.peek() == ("op", "*"):
            self.take()
            b, d = self.factor()
            if np.any(a) and np.any(b):
                self.fail("a product of two coefficients is not a linear combination")
            a, c = (a * d + b * c, c * d)
        return a, c

    def factor(self) -> tuple[np.ndarray, float]:
        kind, value = self.take()
        if kind == "op" and value in "+-":
            a, c = self.factor()
            return (a, c) if value == "+" else (-a, -c)
        if kind == "number":
            return np.zeros(self.k), float(value)
        if kind == "name":
            a = np.zeros(self.k)
            j = self.known[value]
            if j is not None:
                a[j] = 1.0
            return a, 0.0
        if value == "(":
            out = self.expression()
            if self.peek() != ("op", ")"):
                self.fail("a '(' is not closed")
            self.take()
            return out
        self.fail(f"unexpected '{value}'")
