"""The credit metrics by year and their trend as the memo prints them, for the workbench's table.

The memo's section 1 and the borrower page say the same: amounts in millions with one decimal,
the margin in per cent, the multiples as '3.42x', the trend row as '+5.0 %/yr', '-1.0 pp' and
'+0.92x' (:func:`obligor_memo.app.present.formatting.trend`).
"""

from __future__ import annotations

from typing import Any

from obligor_memo.app.present import formatting as fmt

BODY_YEARS = 10
"""The memo's body and the borrower page show at most the latest ten years (the trend and the
volatility use every year of the window; the memo's appendix prints every year's lines)."""

COLUMNS = (
    ("revenue", "Revenue", "growth"),
    ("ebitda", "EBITDA", "growth"),
    ("ebitda_margin", "EBITDA margin", "margin"),
    ("net_debt", "Net debt", "growth"),
    ("net_debt_to_ebitda", "Net debt / EBITDA", "multiple"),
    ("interest_cover", "EBITDA / interest", "multiple"),
    ("debt_to_equity", "Debt / equity", "multiple"),
    ("free_cash_flow", "Free cash flow", "growth"),
)
"""(metric, heading, how its trend reads), in the memo's column order."""


def _cell(value: float | None, kind: str) -> str:
    if kind == "margin":
        return fmt.pct(value, 1)
    if kind == "multiple":
        return fmt.times(value)
    return fmt.in_millions(value)


def latest_years(results: Any) -> tuple[Any, ...]:
    """The credit-metric years the memo's body and the borrower page show: the latest :data:`BODY_YEARS`.

    Parameters
    ----------
    results : Any
        Evaluated results (their ``credit_metrics``).

    Returns
    -------
    tuple[Any, ...]
        The latest years, oldest first; empty when the statements give no credit lines.
    """
    return tuple(getattr(results, "credit_metrics", ()) or ())[-BODY_YEARS:]


def credit_rows(years: tuple[Any, ...], trends: dict[str, Any]) -> list[dict[str, str]]:
    """One row of printed strings per year, then the trend row when there is a trend.

    Parameters
    ----------
    years : tuple[Any, ...]
        The years shown (``engine.credit_metrics.CreditYear``), oldest first.
    trends : dict[str, Any]
        The trends of those years (``engine.credit_metrics.metric_trends``).

    Returns
    -------
    list[dict[str, str]]
        Rows keyed "Year" and each heading of :data:`COLUMNS`; amounts in millions.
    """
    rows = [
        {"Year": str(y.year), **{head: _cell(getattr(y, name), kind) for name, head, kind in COLUMNS}} for y in years
    ]
    if trends:
        trend_row = {"Year": "Trend"}
        for name, head, kind in COLUMNS:
            t = trends.get(name)
            trend_row[head] = "n/a" if t is None else fmt.trend(t.growth if kind == "growth" else t.change, kind)
        rows.append(trend_row)
    return rows
