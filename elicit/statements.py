"""One expert's statement about one coefficient: the fields of a ``[[coefficient]]`` entry (or
of a pooled entry's ``[[coefficient.statement]]`` table) -> a :class:`elicit.spec.Statement`.

Part of the one validator (:mod:`elicit.validate`); the stated range, quantiles or
center/scale become the family's center and scale (:mod:`elicit.convert`), which must lie
within the limits of :mod:`elicit.limits`.
"""

from __future__ import annotations

import math
import warnings

from elicit import convert, cumulative_fit
from elicit.errors import ElicitationWarning, shown
from elicit.fields import FieldReader
from elicit.limits import LARGEST, PRECISION, SMALLEST, UNITS
from elicit.spec import Statement

STATEMENT_KEYS = frozenset(
    {"family", "low", "high", "mass", "per", "quantiles", "center", "scale", "df"}
    | {"expert", "rationale", "weight", "fit", "bins", "chips"}
)


def check_center_scale(
    r: FieldReader, key: str | None, center: float, scale: float, *, what: str = ""
) -> None:
    """The center and scale a statement gives are finite and within the limits, and the scale
    is not lost in the center's rounding (an error on ``key`` otherwise, its message starting
    with ``what``)."""
    if math.isfinite(center) and math.isfinite(scale) and scale > 0:
        if abs(center) <= LARGEST and SMALLEST <= scale <= LARGEST:
            if scale >= abs(center) * PRECISION:
                return
            raise r.error(
                key,
                f"{what}gives center {center:g} and scale {scale:g}: the scale must be at least "
                f"{PRECISION:g} times the center (a narrower prior is lost in the center's "
                "rounding)",
            )
    raise r.error(
        key,
        f"{what}gives center {center:g} and scale {scale:g}: the scale must be positive and "
        f"finite, within {SMALLEST:g}..{LARGEST:g}, and the center at most {LARGEST:g} in "
        f"magnitude ({UNITS})",
    )


def parse_statement(r: FieldReader) -> Statement:
    """One entry's statement (the fields of :data:`STATEMENT_KEYS` in ``r``'s table).

    Raises
    ------
    PriorFileError
        Naming the file, the entry and the field; also when the center or scale it gives is
        beyond the limits of :mod:`elicit.limits`.
    """
    family, df = r.family_and_df()
    weight = r.number("weight", positive=True, dimensionless=True)
    per = r.number("per", positive=True)
    modes = [
        m
        for m, keys in (
            ("range", ("low", "high", "mass")),
            ("quantiles", ("quantiles",)),
            ("center", ("center", "scale")),
            ("bins", ("bins", "chips")),
        )
        if any(r.has(k) for k in keys)
    ]
    if len(modes) > 1:
        raise r.error(
            {"range": "low", "quantiles": "quantiles", "center": "center", "bins": "bins"}[
                modes[1]
            ],
            "give one of low/high/mass, quantiles, bins/chips, or center/scale, not several",
        )
    mode = modes[0] if modes else None
    low = high = mass = quantiles = bins = chips = None
    fit_kind = r.text("fit")
    if fit_kind is not None and (mode != "quantiles" or fit_kind not in cumulative_fit.FIT_KINDS):
        raise r.error("fit", f"is {' or '.join(cumulative_fit.FIT_KINDS)}, for quantiles only")
    if family == "flat":
        if mode is not None or per is not None:
            key = next(
                k
                for k in ("low", "high", "mass", "quantiles", "bins", "chips", "center", "scale")
                + ("per",)
                if r.has(k)
            )
            raise r.error(key, "a flat prior takes no range or parameters")
        center, scale = 0.0, math.nan
    elif mode == "range":
        low, high, mass = r.range()
        try:
            center, scale = convert.from_range(family, low, high, mass, per=per or 1.0, df=df)
        except (ZeroDivisionError, OverflowError):
            raise r.error("mass", f"{mass:g} gives a scale beyond the float limit") from None
    elif mode == "quantiles":
        quantiles = parse_quantiles(r)
        fitter = cumulative_fit.fit_probabilities if fit_kind == "probability" else None
        try:
            fit = (fitter or convert.fit_quantiles)(family, quantiles, per=per or 1.0, df=df)
        except ValueError as exc:
            raise r.error("quantiles", str(exc)) from None
        if fitter is None and fit.warning:  # a fit on the probabilities shows its worst error
            warnings.warn(
                f"{r.source}: {r.where}: field 'quantiles': {fit.warning}",
                ElicitationWarning,
                stacklevel=2,
            )
        center, scale = fit.center, fit.scale
    elif mode == "bins":
        bins, chips = parse_bins(r)
        try:
            by_p = cumulative_fit.fit_bins(family, bins, chips, per=per or 1.0, df=df)
        except ValueError as exc:
            raise r.error("chips", str(exc)) from None
        center, scale = by_p.center, by_p.scale
    elif mode == "center":
        if per is not None:
            raise r.error(
                "per",
                "applies to a stated range or quantiles; center and scale "
                "are per one unit of the predictor",
            )
        center = r.number("center", required=True)
        scale = r.number("scale", required=True, positive=True)
    else:
        raise r.error("low", f"a {family} prior needs low/high/mass, quantiles, bins/chips, or "
                      "center/scale")  # fmt: skip
    if family != "flat":
        key = "per" if per is not None else {"range": "low", "quantiles": "quantiles",
                                             "bins": "bins"}.get(mode)  # fmt: skip
        check_center_scale(r, key or "scale", center, scale)
    return Statement(
        expert=r.text("expert"),
        rationale=r.text("rationale"),
        low=low,
        high=high,
        mass=mass,
        per=per or 1.0,
        quantiles=quantiles,
        family=family,
        center=center,
        scale=scale,
        df=df,
        weight=weight or 1.0,
        fit=fit_kind,
        bins=bins,
        chips=chips,
    )


def parse_bins(r: FieldReader) -> tuple[tuple[float, ...], tuple[int, ...]]:
    """The ``bins`` (edges, increasing) and ``chips`` (one whole count per bin) fields."""
    edges = r.numbers("bins", required=True)
    raw = r.table.get("chips")
    if not isinstance(raw, list) or any(isinstance(c, bool) or not isinstance(c, int) or c < 0
                                        for c in raw):  # fmt: skip
        raise r.error("chips", f"must be a list of whole numbers, 0 or more, got {shown(raw)}")
    if len(edges) < 2 or len(raw) != len(edges) - 1:
        raise r.error("chips", f"need one count per bin: {len(edges)} edges, {len(raw)} counts")
    if any(not b > a for a, b in zip(edges, edges[1:], strict=False)):
        raise r.error("bins", "edges must increase")
    if sum(raw) > 10**6:
        raise r.error("chips", f"at most {10**6} chips in all, got {sum(raw)}")
    return tuple(edges), tuple(int(c) for c in raw)


def parse_quantiles(r: FieldReader) -> tuple[tuple[float, float], ...]:
    """The ``quantiles`` field: at least two ``[probability, value]`` pairs."""
    raw = r.table["quantiles"]
    if not isinstance(raw, list) or len(raw) < 2:
        raise r.error("quantiles", "must be a list of at least two [probability, value] pairs")
    pairs = []
    for pair in raw:
        if not isinstance(pair, list) or len(pair) != 2:
            raise r.error("quantiles", f"each item must be [probability, value], got {shown(pair)}")
        p = r.number("quantiles", value=pair[0], dimensionless=True)
        if not 0.0 < p < 1.0:
            raise r.error("quantiles", f"probability must be in (0, 1), got {p:g}")
        pairs.append((p, r.number("quantiles", value=pair[1])))
    return tuple(pairs)
