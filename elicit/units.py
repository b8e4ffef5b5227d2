"""Units of a coefficient in words: response units per unit of its predictor or term.

The one home of the units grammar: a plain column takes the unit the prior file's ``[units]``
gives it; an interaction multiplies its parts' units; a derived term such as
``I(water_cement**2)`` is read as arithmetic on its columns' units; a categorical level's
indicator has no unit, so its coefficient is in response units alone.
"""

from __future__ import annotations

import ast
import re
from collections.abc import Mapping

LEVEL = re.compile(r".+\[.*\]", re.S)  # a categorical level's indicator column, "name[level]"


def split_term(name: str) -> list[str]:
    """Split a term name at the interaction colons outside brackets and backticks.

    ``"cement_type[CEM-B]:fly_ash"`` -> ``["cement_type[CEM-B]", "fly_ash"]``.
    """
    parts, depth, tick, start = [], 0, False, 0
    for i, ch in enumerate(name):
        if ch == "`":
            tick = not tick
        elif not tick and ch in "([":
            depth += 1
        elif not tick and ch in ")]":
            depth -= 1
        elif ch == ":" and depth == 0 and not tick:
            parts.append(name[start:i])
            start = i + 1
    parts.append(name[start:])
    return parts


def term_units(term_name: str, units_mapping: Mapping[str, str], response_units: str | None) -> str:
    """Units of the coefficient of a design column, in words.

    Parameters
    ----------
    term_name : str
        A design column as the output prints it: ``"fly_ash"``,
        ``"cement_type[CEM-B]"``, ``"fly_ash:curing_temp"``, ``"I(water_cement ** 2)"``
        or ``"intercept"``.
    units_mapping : mapping of predictor -> unit
        The prior file's ``[units]`` table (a predictor without an entry is
        said as "unit of <predictor>").
    response_units : str or None
        ``[study] response_units`` (None: "response units").

    Returns
    -------
    str
        E.g. ``"MPa per share of binder per degC"``; a level (a difference from
        the reference level) and the intercept are in response units alone.
    """
    out = response_units or "response units"
    if term_name == "intercept":
        return out
    for part in split_term(term_name):
        if LEVEL.fullmatch(part):  # a level's indicator: no unit
            continue
        out += f" per {_factor_units(part, units_mapping)}"
    return out


def predictor_units(term_name: str, units_mapping: Mapping[str, str]) -> str | None:
    """Units of a design column itself (the predictor side), or None (none, or not given).

    ``"fly_ash:curing_temp"`` -> ``"share of binder x degC"``; a level's indicator
    (``"cement_type[CEM-B]"``) has no unit, so it gives None.
    """
    parts = [p for p in split_term(term_name) if not LEVEL.fullmatch(p)]
    found = [_factor_units(p, units_mapping) for p in parts]
    if not parts or any(u.startswith("unit of ") for u in found):
        return None
    return " x ".join(found)


def _factor_units(expr: str, units: Mapping[str, str]) -> str:
    if expr in units:
        return units[expr]
    plain = expr.strip("`")
    if plain in units:
        return units[plain]
    inner = re.fullmatch(r"I\((.*)\)", expr, flags=re.S)
    source = inner.group(1) if inner else expr
    names: dict[str, str] = {}

    def repl(m: re.Match) -> str:
        key = f"_v{len(names)}"
        names[key] = m.group(1)
        return key

    try:
        tree = ast.parse(re.sub(r"`([^`]+)`", repl, source), mode="eval").body
        unit = _unit_of(tree, {**{k: units.get(v, f"unit of {v}") for k, v in names.items()}},
                        units)  # fmt: skip
    except (SyntaxError, ValueError):
        unit = None
    return unit or f"unit of {expr}"


def _unit_of(node: ast.AST, quoted: Mapping[str, str], units: Mapping[str, str]) -> str | None:
    """Unit of an arithmetic expression of columns; '' for a pure number; None if unknown."""
    if isinstance(node, ast.Constant) and isinstance(node.value, (int, float)):
        return ""
    if isinstance(node, ast.Name):
        if node.id in quoted:
            return quoted[node.id]
        return units.get(node.id, f"unit of {node.id}")
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, (ast.USub, ast.UAdd)):
        return _unit_of(node.operand, quoted, units)
    if isinstance(node, ast.BinOp):
        a = _unit_of(node.left, quoted, units)
        if isinstance(node.op, ast.Pow):
            power = node.right.value if isinstance(node.right, ast.Constant) else None
            if a is None or not isinstance(power, (int, float)):
                return None
            return f"{_wrap(a)}^{power:g}" if a else ""
        b = _unit_of(node.right, quoted, units)
        if a is None or b is None:
            return None
        if isinstance(node.op, (ast.Add, ast.Sub)):
            return a if a == b or not b else (b if not a else None)
        if isinstance(node.op, ast.Mult):
            return " x ".join(_wrap(u) for u in (a, b) if u)
        if isinstance(node.op, ast.Div):
            return f"{_wrap(a) if a else '1'}/{_wrap(b)}" if b else a
    return None


def _wrap(unit: str) -> str:
    return f"({unit})" if re.search(r"[\s/^x*]", unit) else unit
