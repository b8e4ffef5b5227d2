"""The ``[pool]`` table of a prior file: how several entries for one coefficient are combined.

``method = "linear" | "log"`` (default linear, see :mod:`elicit.pool`); ``family``: one family
for every pooled column (``"normal"``, ..., ``"mixture"``), or a table of design column ->
family (``family = {fly_ash = "mixture", water = "normal"}``; a name without its level also
covers every level); ``df`` of pooled Student-t priors; ``weights``: the record of the expert
weights ``elicit pool`` applied (expert name -> weight; the statements' ``weight`` fields hold
them, so they are not applied again).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

from elicit.errors import shown
from elicit.fields import FieldReader
from elicit.pool import DEFAULT_METHOD, METHODS
from elicit.spec import POOL_FAMILIES

POOL_KEYS = frozenset({"method", "family", "df", "weights"})


@dataclass(frozen=True)
class PoolChoice:
    """What a ``[pool]`` table says (defaults when there is none)."""

    method: str = DEFAULT_METHOD
    family: str | Mapping[str, str] | None = None
    df: float | None = None
    weights: Mapping[str, float] = field(default_factory=dict)

    def family_for(self, name: str, level: str | None) -> str | None:
        """The chosen family of column ``name`` (``name[level]``), or None."""
        if not isinstance(self.family, Mapping):
            return self.family
        column = name if level is None else f"{name}[{level}]"
        return self.family.get(column, self.family.get(name))


def pool_choice(r: FieldReader | None) -> PoolChoice:
    """Validate the ``[pool]`` table read by ``r`` (None: no table)."""
    if r is None:
        return PoolChoice()
    method = r.text("method") or DEFAULT_METHOD
    if method not in METHODS:
        raise r.error("method", f"must be one of {', '.join(METHODS)}, got {shown(method)}")
    family = r.table.get("family")
    if isinstance(family, Mapping):
        for column, chosen in family.items():
            if chosen not in POOL_FAMILIES:
                raise r.error("family", f"{shown(column)}: unknown family {shown(chosen)}")
        family = dict(family)
    else:
        family = r.text("family")
        if family is not None and family not in POOL_FAMILIES:
            raise r.error("family", f"unknown family {shown(family)}")
    weights = r.table.get("weights", {})
    if not isinstance(weights, Mapping):
        raise r.error("weights", "must be a table of expert name -> weight")
    checked = {name: r.number("weights", value=w, positive=True) for name, w in weights.items()}
    return PoolChoice(method, family, r.number("df", positive=True, dimensionless=True), checked)
