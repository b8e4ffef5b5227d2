"""The grammar a model formula may use, checked by our own parser before any library sees it.

The formula library evaluates the terms of a formula (``I(...)``, ``log(...)``) as Python
code, so a formula read from a file (a fit folder's ``terms.json``, a prior file) could run
anything. :func:`check_formula` accepts only:

* column names, plain (``water_cement``) or backquoted (```cement type```);
* numbers;
* the operators ``+ - * / ** :`` and parentheses, and ``~`` between the two sides;
* ``I(...)`` and the transforms :data:`TRANSFORMS` around arithmetic of the same pieces
  (``**`` with a number as exponent and a column on its left), and ``C(column)``.

Anything else (attribute access, calls to other names, subscripts, strings, lambdas, names
with a leading double underscore, keywords) is one :class:`InputError` naming the term.
"""

from __future__ import annotations

import keyword
import re

from bayes.errors import InputError

TRANSFORMS = ("log", "exp", "sqrt", "abs")  # the named transforms a formula may call
STATEFUL = ("center", "scale", "standardize", "poly", "bs", "cs", "cr", "cc", "lag", "hashed")
MAX_DEPTH = 50  # nesting of parentheses and calls
MAX_LENGTH = 20_000  # characters of one formula

_TOKEN = re.compile(
    r"\s+|(?P<bq>`[^`]+`)|(?P<num>(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)"
    r"|(?P<name>[^\W\d]\w*)|(?P<op>\*\*|[-+*/:()~])"
)
ALLOWED = (
    "column names (plain or `backquoted`), numbers, + - * / ** :, parentheses, I(...), "
    f"C(column) and {', '.join(TRANSFORMS)}"
)


def data_dependent(term: str) -> InputError:
    """The error for a term whose values depend on the data it is fitted to."""
    return InputError(
        f"formula: the term '{term}' depends on the data it is fitted to (it cannot "
        "be applied to new rows the same way): write the column out, or use I(...)"
    )


class _Refused(Exception):
    """A piece of the formula outside the grammar, at character ``pos``."""

    def __init__(self, pos: int, why: str, *, kind: str = "refused") -> None:
        super().__init__(why)
        self.pos, self.why, self.kind = pos, why, kind  # kind: refused, syntax or stateful


def _tokens(text: str) -> list[tuple[str, str, int]]:
    """(kind, text, position) of each token; kind is bq, num, name or op."""
    out, pos = [], 0
    while pos < len(text):
        m = _TOKEN.match(text, pos)
        if m is None:
            raise _Refused(pos, f"{text[pos]!r} is not part of a formula")
        if m.lastgroup is not None:
            out.append((m.lastgroup, m.group(), pos))
        pos = m.end()
    return out


class _Parser:
    """Recursive descent over the tokens: formula level, and arithmetic inside calls."""

    def __init__(self, text: str) -> None:
        self.text = text
        self.toks = _tokens(text)
        self.i = 0
        self.depth = 0

    # helpers
    def peek(self) -> tuple[str, str, int] | None:
        return self.toks[self.i] if self.i < len(self.toks) else None

    def at(self, *ops: str) -> bool:
        t = self.peek()
        return t is not None and t[0] == "op" and t[1] in ops

    def take(self) -> tuple[str, str, int]:
        t = self.peek()
        if t is None:
            raise _Refused(len(self.text), "the formula ends too early", kind="syntax")
        self.i += 1
        return t

    def expect(self, op: str) -> None:
        t = self.take()
        if t[0] != "op" or t[1] != op:
            raise _Refused(t[2], f"'{op}' expected before '{t[1]}'", kind="syntax")

    def nest(self, pos: int) -> None:
        self.depth += 1
        if self.depth > MAX_DEPTH:
            raise _Refused(pos, f"nested more than {MAX_DEPTH} deep")

    def name(self, t: tuple[str, str, int]) -> None:
        kind, text, pos = t
        bare = text.strip("`") if kind == "bq" else text
        if bare.startswith("__"):
            raise _Refused(pos, f"the name '{bare}' is not allowed (leading double underscore)")
        if kind == "name" and (keyword.iskeyword(text) or not text.isidentifier()):
            raise _Refused(pos, f"'{text}' is not a column name")

    # the whole formula
    def formula(self) -> None:
        if not self.at("~"):
            self.sum()
        if self.at("~"):
            self.take()
            self.sum()
        t = self.peek()
        if t is not None:
            raise _Refused(t[2], f"'{t[1]}' is not expected here", kind="syntax")

    def chain(self, ops: tuple[str, ...], operand) -> None:
        """``operand (op operand)*`` for the binary operators ``ops`` of one precedence."""
        operand()
        while self.at(*ops):
            self.take()
            operand()

    # formula level: + - * / : ** between terms
    def sum(self) -> None:
        if self.at("+", "-"):
            self.take()
        self.chain(("+", "-"), self.product)

    def product(self) -> None:
        self.chain(("*", "/"), self.colon)

    def colon(self) -> None:
        self.chain((":",), self.power)

    def power(self) -> None:
        self.atom(self.sum, arithmetic=False)
        if self.at("**"):
            self.take()
            self.number()

    def atom(self, inner, *, arithmetic: bool) -> None:
        """A name, a number, a call, or ``(inner)``: the formula level's or arithmetic's."""
        t = self.take()
        kind, text, pos = t
        if kind == "op" and text == "(":
            self.nest(pos)
            inner()
            self.expect(")")
            self.depth -= 1
        elif kind == "name" and self.at("("):
            if arithmetic and text == "C":
                raise _Refused(pos, "C(...) is a term of its own, not arithmetic")
            self.call(t)
        elif kind in ("name", "bq"):
            self.name(t)
        elif kind != "num":
            raise _Refused(pos, f"'{text}' is not expected here", kind="syntax")

    def call(self, t: tuple[str, str, int]) -> None:
        _, text, pos = t
        self.take()  # (
        self.nest(pos)
        if text == "C":
            arg = self.take()
            if arg[0] not in ("name", "bq"):
                raise _Refused(arg[2], "C(...) takes one column name")
            self.name(arg)
        elif text == "I" or text in TRANSFORMS:
            self.arith()
        elif text in STATEFUL:
            raise _Refused(pos, "", kind="stateful")
        else:
            raise _Refused(pos, f"'{text}(...)' is not an allowed transform")
        self.expect(")")
        self.depth -= 1

    # inside I(...) and the transforms: Python arithmetic of the same pieces
    def arith(self) -> None:
        self.chain(("+", "-"), self.aterm)

    def aterm(self) -> None:
        self.chain(("*", "/"), self.unary)

    def unary(self) -> None:
        if self.at("+", "-"):
            pos = self.take()[2]
            self.nest(pos)
            self.unary()
            self.depth -= 1
            return
        start = self.i
        self.atom(self.arith, arithmetic=True)
        if self.at("**"):
            pos = self.take()[2]
            if not any(k in ("name", "bq") for k, _, _ in self.toks[start : self.i - 1]):
                raise _Refused(pos, "** needs a column on its left")
            if self.at("-"):
                self.take()
            self.number()

    def number(self) -> None:
        t = self.take()
        if t[0] != "num":
            raise _Refused(t[2], "the exponent of ** must be a number")


def _term_at(text: str, pos: int) -> str:
    """The term of ``text`` (between top-level + or ~) holding character ``pos``."""
    depth, quoted, start = 0, False, 0
    bounds = []
    for k, ch in enumerate(text):
        if ch == "`":
            quoted = not quoted
        elif not quoted and ch == "(":
            depth += 1
        elif not quoted and ch == ")":
            depth -= 1
        elif not quoted and depth <= 0 and ch in "+~":
            bounds.append((start, k))
            start = k + 1
    bounds.append((start, len(text)))
    for a, b in bounds:
        if a <= pos <= b:
            return text[a:b].strip() or text.strip()
    return text.strip()


def check_formula(text: str, *, what: str = "formula") -> str:
    """``text`` when it keeps to the grammar of a model formula (see the module); else an error.

    Parameters
    ----------
    text : str
        A formula (``"y ~ a + I(a**2)"``), one side of it, or one term.
    what : str
        What the text is, for the message ("formula", "coefficient name").

    Raises
    ------
    InputError
        Naming the term that is outside the grammar and why.
    """
    if not isinstance(text, str):
        raise InputError(f"{what} must be text, got {type(text).__name__}")
    if len(text) > MAX_LENGTH:
        raise InputError(f"{what} is longer than {MAX_LENGTH} characters")
    try:
        _Parser(text).formula()
    except _Refused as e:
        if e.kind == "stateful":
            raise data_dependent(_term_at(text, e.pos)) from None
        if e.kind == "syntax":
            raise InputError(f"{what}: cannot read '{text}': {e.why}") from None
        raise InputError(
            f"{what}: the term '{_term_at(text, e.pos)}' is not allowed: {e.why} "
            f"(a formula may use {ALLOWED})"
        ) from None
    return text


def formula_names(text: str) -> set[str]:
    """The column names a formula that passed :func:`check_formula` reads (no call names)."""
    toks = _tokens(text)
    out = set()
    for k, (kind, tok, _) in enumerate(toks):
        called = k + 1 < len(toks) and toks[k + 1][:2] == ("op", "(")
        if kind == "bq":
            out.add(tok[1:-1])
        elif kind == "name" and not called:
            out.add(tok)
    return out


def quote_keywords(text: str, columns) -> str:
    """``text`` with each bare name that is a Python keyword and one of the data's ``columns``
    backquoted (``yield ~ nitrogen`` -> ```yield` ~ nitrogen``), so that a column may be named
    ``yield`` or ``class`` without the user quoting it; anything else is left as written."""
    if not isinstance(text, str):
        return text
    try:
        toks = _tokens(text)
    except _Refused:
        return text  # check_formula names the problem
    names, out, last = set(columns), [], 0
    for kind, tok, pos in toks:
        if kind == "name" and keyword.iskeyword(tok) and tok in names:
            out += [text[last:pos], f"`{tok}`"]
            last = pos + len(tok)
    return "".join(out) + text[last:]
