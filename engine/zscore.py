"""Altman Z-scores from statement columns.

Each published variant is a linear discriminant score of accounting ratios,
Z = sum_j c_j X_j, read against two published cut-offs: above the upper one
the "safe" zone, below the lower one the "distress" zone, between them (both
cut-offs included) the "grey" zone. A variant is scored only when every column
it needs was supplied; otherwise the result names the missing columns and the
score stays None: nothing is guessed or filled in.

Ratios (all columns in the statements' currency, one balance-sheet date):

    X1 = working_capital / total_assets
    X2 = retained_earnings / total_assets
    X3 = ebit / total_assets
    X4 = equity / total_liabilities   (market value of equity in the 1968 model,
                                        book equity in the later two)
    X5 = sales / total_assets

The coefficients and cut-offs below are recalled from memory; they are widely
reprinted, e.g. in Altman and Hotchkiss, "Corporate Financial Distress and
Bankruptcy", 3rd ed., Wiley, 2006.
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import Literal

Zone = Literal["safe", "grey", "distress"]

_RATIO_COLUMNS: dict[str, tuple[str, str]] = {
    "X1": ("working_capital", "total_assets"),
    "X2": ("retained_earnings", "total_assets"),
    "X3": ("ebit", "total_assets"),
    "X5": ("sales", "total_assets"),
}


@dataclass(frozen=True)
class _Variant:
    name: str
    coefficients: tuple[tuple[str, float], ...]
    equity_column: str
    distress_below: float
    safe_above: float
    source: str


# The 1968 paper prints 0.012 X1 + 0.014 X2 + 0.033 X3 + 0.006 X4 + 0.999 X5 with
# X1..X4 in percent and X5 as a plain ratio; with every ratio as a fraction this is
# 1.2, 1.4, 3.3, 0.6 and 0.999, conventionally rounded to 1.0.
_VARIANTS: tuple[_Variant, ...] = (
    _Variant(
        name="Z (1968)",
        coefficients=(("X1", 1.2), ("X2", 1.4), ("X3", 3.3), ("X4", 0.6), ("X5", 1.0)),
        equity_column="market_equity",
        distress_below=1.81,
        safe_above=2.99,
        source=(
            "Altman, E. I. (1968), 'Financial Ratios, Discriminant Analysis and the "
            "Prediction of Corporate Bankruptcy', Journal of Finance 23(4), 589-609; "
            "publicly traded manufacturers"
        ),
    ),
    _Variant(
        name="Z' (private firms)",
        coefficients=(("X1", 0.717), ("X2", 0.847), ("X3", 3.107), ("X4", 0.420), ("X5", 0.998)),
        equity_column="book_equity",
        distress_below=1.23,
        safe_above=2.90,
        source=(
            "Altman, E. I. (1983), Corporate Financial Distress, Wiley; model re-estimated "
            "for private firms with book equity in X4"
        ),
    ),
    _Variant(
        # The emerging-market form adds a constant 3.25; this is the form without it.
        name="Z'' (non-manufacturers)",
        coefficients=(("X1", 6.56), ("X2", 3.26), ("X3", 6.72), ("X4", 1.05)),
        equity_column="book_equity",
        distress_below=1.10,
        safe_above=2.60,
        source=(
            "Altman, E. I., Hartzell, J. and Peck, M. (1995), 'Emerging Markets Corporate "
            "Bonds: A Scoring System', Salomon Brothers; four ratios, no sales/assets, "
            "for non-manufacturers"
        ),
    ),
)

VARIANT_NAMES: tuple[str, ...] = tuple(v.name for v in _VARIANTS)


@dataclass(frozen=True)
class ZScore:
    """One Z-score variant for one set of statements."""

    variant: str
    """The variant's name, e.g. "Z (1968)"."""
    score: float | None
    """Z = sum_j coefficient_j * X_j [dimensionless]; None when a needed column is missing."""
    zone: Zone | None
    """"safe" (score above the upper cut-off), "grey" (between the cut-offs, both included), "distress" (below the
    lower cut-off); None when there is no score."""
    components: Mapping[str, float | None]
    """The ratios X1.. [fraction]; a ratio is None when one of its columns is missing."""
    ratio_definitions: Mapping[str, str]
    """Each ratio as "numerator / denominator" columns."""
    coefficients: Mapping[str, float]
    """Published discriminant coefficients by ratio."""
    zone_cutoffs: Mapping[str, float]
    """{"distress_below": ..., "safe_above": ...}."""
    missing: tuple[str, ...]
    """Names of the columns this variant needs but did not get."""
    source: str
    """Citation of the variant."""


def altman_zone(*, score: float, distress_below: float, safe_above: float) -> Zone:
    """Zone of a score: "safe", "grey" or "distress".

    "safe" if score > safe_above, "distress" if score < distress_below, else "grey" (the
    published grey zone includes both cut-offs).

    Parameters
    ----------
    score : float
        The Z-score.
    distress_below : float
        Cut-off below which the score is in distress.
    safe_above : float
        Cut-off above which the score is safe.

    Returns
    -------
    Zone
        ``safe``, ``grey`` or ``distress``.
    """
    if score > safe_above:
        return "safe"
    if score < distress_below:
        return "distress"
    return "grey"


def _check_column(name: str, value: float | None, *, rule: str, allowed: str, required: bool = False) -> float | None:
    if value is None:
        if required:
            raise ValueError(f"{name} is required: {allowed}")
        return None
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise ValueError(f"{name} must be a number ({allowed}) or None if absent; got {value!r}")
    number = float(value)
    ok = math.isfinite(number) and (
        rule == "any" or (rule == "positive" and number > 0) or (rule == "nonnegative" and number >= 0)
    )
    if not ok:
        raise ValueError(f"{name} = {value!r} is not allowed: {allowed}; pass None for a column you do not have")
    return number


def altman_scores(
    *,
    total_assets: float,
    working_capital: float | None = None,
    retained_earnings: float | None = None,
    ebit: float | None = None,
    sales: float | None = None,
    market_equity: float | None = None,
    book_equity: float | None = None,
    total_liabilities: float | None = None,
) -> tuple[ZScore, ...]:
    """Every Altman Z-score variant the supplied columns allow.

    Parameters
    ----------
    total_assets : float
        Book total assets [currency units], > 0.
    working_capital : float | None, optional
        Current assets minus current liabilities [currency units], any sign.
    retained_earnings : float | None, optional
        Accumulated retained earnings [currency units], any sign.
    ebit : float | None, optional
        Earnings before interest and taxes, over the year [currency units], any sign.
    sales : float | None, optional
        Net sales over the year [currency units], >= 0.
    market_equity : float | None, optional
        Market value of equity [currency units], >= 0 (used by Z (1968)).
    book_equity : float | None, optional
        Book value of equity [currency units], any sign (used by Z', Z'').
    total_liabilities : float | None, optional
        Book total liabilities [currency units], > 0.

    Returns
    -------
    tuple[ZScore, ...]
        One ``ZScore`` per variant, in the order of ``VARIANT_NAMES``; a variant lacking
        columns has score and zone None and lists the missing names.
    """
    any_sign = "a finite number of any sign [currency]"
    columns: dict[str, float | None] = {
        "total_assets": _check_column(
            "total_assets",
            total_assets,
            rule="positive",
            allowed="a finite number > 0 [currency]",
            required=True,
        ),
        "working_capital": _check_column("working_capital", working_capital, rule="any", allowed=any_sign),
        "retained_earnings": _check_column("retained_earnings", retained_earnings, rule="any", allowed=any_sign),
        "ebit": _check_column("ebit", ebit, rule="any", allowed=any_sign),
        "sales": _check_column("sales", sales, rule="nonnegative", allowed="a finite number >= 0 [currency]"),
        "market_equity": _check_column(
            "market_equity",
            market_equity,
            rule="nonnegative",
            allowed="a finite number >= 0 [currency] (a market value cannot be negative)",
        ),
        "book_equity": _check_column("book_equity", book_equity, rule="any", allowed=any_sign),
        "total_liabilities": _check_column(
            "total_liabilities",
            total_liabilities,
            rule="positive",
            allowed="a finite number > 0 [currency]",
        ),
    }
    return tuple(_score_variant(variant, columns) for variant in _VARIANTS)


def _ratio(numerator: float, denominator: float) -> float:
    """Quotient numerator / denominator, inf (not an exception) when the quotient overflows."""
    try:
        return numerator / denominator
    except OverflowError:
        return math.copysign(math.inf, numerator) * math.copysign(1.0, denominator)


def _score_variant(variant: _Variant, columns: Mapping[str, float | None]) -> ZScore:
    definitions = dict(_RATIO_COLUMNS)
    definitions["X4"] = (variant.equity_column, "total_liabilities")
    components: dict[str, float | None] = {}
    ratio_definitions: dict[str, str] = {}
    missing: list[str] = []
    for ratio, _ in variant.coefficients:
        numerator, denominator = definitions[ratio]
        ratio_definitions[ratio] = f"{numerator} / {denominator}"
        top, bottom = columns[numerator], columns[denominator]
        if top is None or bottom is None:
            missing.extend(c for c in (numerator, denominator) if columns[c] is None and c not in missing)
            components[ratio] = None
        else:
            components[ratio] = _ratio(top, bottom)
    coefficients = dict(variant.coefficients)
    score: float | None = None
    zone: Zone | None = None
    present = {r: v for r, v in components.items() if v is not None}
    if not missing and all(math.isfinite(present[r]) for r in coefficients):
        try:
            score = math.fsum(coefficients[r] * present[r] for r in coefficients)
        except OverflowError:  # finite terms whose sum is not: no meaningful score
            score = None
        if score is not None and math.isfinite(score):
            zone = altman_zone(score=score, distress_below=variant.distress_below, safe_above=variant.safe_above)
        else:
            score = None
    return ZScore(
        variant=variant.name,
        score=score,
        zone=zone,
        components=MappingProxyType(components),
        ratio_definitions=MappingProxyType(ratio_definitions),
        coefficients=MappingProxyType(coefficients),
        zone_cutoffs=MappingProxyType({"distress_below": variant.distress_below, "safe_above": variant.safe_above}),
        missing=tuple(missing),
        source=variant.source,
    )
