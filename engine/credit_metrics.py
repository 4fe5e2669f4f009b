"""Credit metrics by year from the statement lines: leverage, cover and cash flow.

The usual definitions of the trade (common practice; banks' credit policies and loan
agreements define their own, which take precedence in a covenant test):

- net debt = total debt - cash and equivalents [currency]
- net debt / EBITDA [times]; undefined when EBITDA <= 0 (a negative multiple reads as low leverage)
- interest cover = EBITDA / interest expense [times]; undefined when interest expense is 0
- debt / equity = total debt / book equity [times]; undefined when equity <= 0
- EBITDA margin = EBITDA / sales [fraction]
- free cash flow = operating cash flow - capital expenditure [currency]

A metric is None where a line it needs is missing or it is undefined, never a guess.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any


@dataclass(frozen=True)
class CreditYear:
    """One financial year's credit metrics (see the module docstring for the definitions)."""

    year: int
    """The financial year."""
    revenue: float | None
    """Sales [currency]."""
    ebitda: float | None
    """EBITDA [currency]."""
    ebitda_margin: float | None
    """EBITDA / sales [fraction]."""
    net_debt: float | None
    """Total debt - cash [currency]."""
    net_debt_to_ebitda: float | None
    """Net debt / EBITDA [times]."""
    interest_cover: float | None
    """EBITDA / interest expense [times]."""
    debt_to_equity: float | None
    """Total debt / book equity [times]."""
    free_cash_flow: float | None
    """Operating cash flow - capital expenditure [currency]."""


def _ratio(top: float | None, bottom: float | None, *, positive_bottom: bool = True) -> float | None:
    """Ratio top / bottom; None where either is missing, bottom is 0 or (``positive_bottom``) below 0."""
    if top is None or bottom is None:
        return None
    if bottom == 0 or (positive_bottom and bottom < 0):
        return None
    return top / bottom


def credit_year(row: Any) -> CreditYear:
    """The metrics of one statement row (a schema StatementRow or anything with its fields).

    Parameters
    ----------
    row : Any
        A statement row; a line it does not have (or holds as None) counts as missing.

    Returns
    -------
    CreditYear
        That year's metrics, None where a line is missing or the metric undefined.
    """

    def get(name: str) -> float | None:
        value = getattr(row, name, None)
        return None if value is None else float(value)

    sales, ebitda, cash, debt = get("sales"), get("ebitda"), get("cash"), get("total_debt")
    interest, equity = get("interest_expense"), get("book_equity")
    ocf, capex = get("operating_cash_flow"), get("capital_expenditure")
    net_debt = debt - cash if debt is not None and cash is not None else None
    return CreditYear(
        year=int(row.year),
        revenue=sales,
        ebitda=ebitda,
        ebitda_margin=_ratio(ebitda, sales),
        net_debt=net_debt,
        net_debt_to_ebitda=_ratio(net_debt, ebitda),
        interest_cover=_ratio(ebitda, interest),
        debt_to_equity=_ratio(debt, equity),
        free_cash_flow=ocf - capex if ocf is not None and capex is not None else None,
    )


def credit_metrics(rows: Sequence[Any]) -> tuple[CreditYear, ...]:
    """The metrics of every year, oldest first; empty when no year has any of the lines.

    Parameters
    ----------
    rows : Sequence[Any]
        The statement rows, oldest first.

    Returns
    -------
    tuple[CreditYear, ...]
        One entry per row; empty when no year gives revenue, EBITDA, net debt, free cash flow
        or interest cover.
    """
    years = tuple(credit_year(r) for r in rows)
    wanted = ("revenue", "ebitda", "net_debt", "free_cash_flow", "interest_cover")
    return years if any(getattr(y, name) is not None for y in years for name in wanted) else ()


AMOUNTS = ("revenue", "ebitda", "net_debt", "free_cash_flow")
"""Metrics in currency: their trend is a compound annual growth rate."""
RATIOS = ("ebitda_margin", "net_debt_to_ebitda", "interest_cover", "debt_to_equity")
"""Metrics as ratios: their trend is the change from the first year to the last."""


@dataclass(frozen=True)
class MetricTrend:
    """How one metric moved over the years read: growth a year for amounts, change for ratios."""

    name: str
    """The metric (a :class:`CreditYear` field)."""
    first_year: int
    """The first year that gives the metric."""
    last_year: int
    """The last year that gives it."""
    growth: float | None
    """Compound annual growth (last / first) ** (1 / years) - 1 [1/year], for amounts whose first
    and last values are above 0; None otherwise (a fall to or from a loss has no growth rate)."""
    change: float | None
    """Last minus first [fraction for the margin, times for multiples], for ratios; None for amounts."""


def metric_trends(years: Sequence[CreditYear]) -> dict[str, MetricTrend]:
    """The trend of each metric over ``years``, from the first to the last year that gives it.

    Common practice: the compound annual growth rate of an amount and the change of a ratio over
    the period, as a credit memo reads a borrower's accounts.

    Parameters
    ----------
    years : Sequence[CreditYear]
        The years read, oldest first.

    Returns
    -------
    dict[str, MetricTrend]
        By metric name; a metric given in fewer than two years has no entry.
    """
    out = {}
    for name in AMOUNTS + RATIOS:
        given = [(y.year, getattr(y, name)) for y in years if getattr(y, name) is not None]
        if len(given) < 2 or given[-1][0] <= given[0][0]:
            continue
        (y0, v0), (y1, v1) = given[0], given[-1]
        if name in AMOUNTS:
            growth = (v1 / v0) ** (1.0 / (y1 - y0)) - 1.0 if v0 > 0 and v1 > 0 else None
            out[name] = MetricTrend(name, y0, y1, growth=growth, change=None)
        else:
            out[name] = MetricTrend(name, y0, y1, growth=None, change=v1 - v0)
    return out
