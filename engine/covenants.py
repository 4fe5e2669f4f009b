"""Financial covenants tested on the latest year: value, headroom and EBITDA fall to breach.

A covenant caps a multiple (``direction = "max"``: net debt / EBITDA, debt / equity) or sets a
floor under one (``"min"``: interest cover, EBITDA margin). The metrics are those of
:mod:`engine.credit_metrics`, on the latest statement year. Definitions (common practice):

- headroom, as a fraction of the threshold T, positive when there is room:
  max covenant: (T - value) / T; min covenant: (value - T) / T. Negative: breached now.
- EBITDA fall to breach: the fall of EBITDA, as a fraction of this year's EBITDA, with every
  other line held, at which the metric reaches T:

  * net debt / EBITDA <= T: breached once EBITDA < net debt / T, so the fall is
    1 - (net debt / T) / EBITDA = 1 - value / T (the headroom itself); no fall breaches it
    while net debt is zero or negative;
  * EBITDA / interest >= T: EBITDA* = T x interest, fall = 1 - T / value;
  * EBITDA / sales >= T: EBITDA* = T x sales, fall = 1 - T / value;
  * debt / equity: not EBITDA-based (None, said in words).

A loan agreement's own definitions (adjustments, pro-forma EBITDA, test dates) govern the real
test; these figures read the statements as given.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

from obligor_memo.engine.credit_metrics import CreditYear, credit_year

METRICS: dict[str, tuple[str, str, bool]] = {
    "net_debt_to_ebitda": ("Net debt / EBITDA", "max", True),
    "interest_cover": ("EBITDA / interest", "min", True),
    "debt_to_equity": ("Debt / equity", "max", False),
    "ebitda_margin": ("EBITDA margin", "min", True),
}
"""Metric -> (words, the direction a covenant on it takes, whether EBITDA is its numerator/denominator)."""
_NEEDS = {
    "net_debt_to_ebitda": "total_debt, cash and a positive ebitda",
    "interest_cover": "ebitda and a non-zero interest_expense",
    "debt_to_equity": "total_debt and a positive book_equity",
    "ebitda_margin": "ebitda and positive sales",
}
"""Where a metric is missing: the lines it needs (for the note)."""


@dataclass(frozen=True)
class CovenantTest:
    """One covenant read on the latest year."""

    metric: str
    label: str
    """The metric in words."""
    direction: str
    """"max" or "min"."""
    threshold: float
    """[times; fraction for the margin]"""
    tested: str
    year: int | None
    """The statement year tested (the latest)."""
    value: float | None
    """The metric that year; None when the statements do not give it."""
    headroom: float | None
    """Fraction of the threshold, positive = room; negative = breached [fraction]."""
    breached: bool | None
    ebitda: float | None
    """That year's EBITDA [currency]."""
    ebitda_at_breach: float | None
    """The EBITDA at which the metric reaches the threshold, other lines held [currency]."""
    ebitda_fall_to_breach: float | None
    """(EBITDA - EBITDA at breach) / EBITDA [fraction]; None when no fall breaches or not EBITDA-based."""
    note: str
    """The reading in words where a figure is missing ("not EBITDA-based", ...); "" otherwise."""


def _headroom(value: float, threshold: float, direction: str) -> float:
    """Room to the threshold as a fraction of it, positive when there is room."""
    return (threshold - value) / threshold if direction == "max" else (value - threshold) / threshold


def read_covenant(
    *, metric: str, threshold: float, direction: str, tested: str, latest: CreditYear | None, row: Any
) -> CovenantTest:
    """One covenant on the latest year's metrics ``latest`` (``row``: that statement row).

    Parameters
    ----------
    metric : str
        The metric: a key of :data:`METRICS`.
    threshold : float
        The limit [times; a fraction for ``ebitda_margin``].
    direction : str
        ``max`` (the metric must stay at or below the threshold) or ``min`` (at or above it).
    tested : str
        How often it is tested, in words.
    latest : CreditYear | None
        The latest year's credit metrics; None: no year to test.
    row : Any
        That year's statement row (its ``interest_expense`` and ``sales`` give the EBITDA at breach).

    Returns
    -------
    CovenantTest
        The value, headroom, breach and EBITDA fall to breach, with a note where a figure is missing.
    """
    label, _, ebitda_based = METRICS[metric]
    value = getattr(latest, metric) if latest is not None else None
    year = latest.year if latest is not None else None
    ebitda = latest.ebitda if latest is not None else None
    if value is None:
        return CovenantTest(
            metric=metric,
            label=label,
            direction=direction,
            threshold=threshold,
            tested=tested,
            year=year,
            ebitda=ebitda,
            value=None,
            headroom=None,
            breached=None,
            ebitda_at_breach=None,
            ebitda_fall_to_breach=None,
            note=f"not computable: the latest year needs {_NEEDS[metric]}",
        )
    headroom = _headroom(value, threshold, direction)
    breached = headroom < 0
    at_breach: float | None = None
    fall: float | None = None
    note = ""
    if not ebitda_based:
        note = "not EBITDA-based"
    elif ebitda is None or ebitda <= 0:
        note = "EBITDA is zero or negative: no fall to measure"
    else:
        if metric == "net_debt_to_ebitda":
            net_debt = latest.net_debt if latest is not None else None
            if net_debt is not None and net_debt > 0:
                at_breach = net_debt / threshold
            else:
                note = "net debt is zero or negative: no EBITDA fall breaches it"
        elif metric == "interest_cover":
            at_breach = threshold * float(row.interest_expense)
        else:  # ebitda_margin
            at_breach = threshold * float(row.sales)
        if at_breach is not None:
            fall = (ebitda - at_breach) / ebitda
    if breached:
        note = "breached now" + (f"; {note}" if note else "")
    return CovenantTest(
        metric=metric,
        label=label,
        direction=direction,
        threshold=threshold,
        tested=tested,
        year=year,
        ebitda=ebitda,
        value=value,
        headroom=headroom,
        breached=breached,
        ebitda_at_breach=at_breach,
        ebitda_fall_to_breach=fall,
        note=note,
    )


def covenant_tests(covenants: Sequence[Any], statements: Sequence[Any]) -> tuple[CovenantTest, ...]:
    """Every covenant of the case on the latest statement year (statements sorted by year).

    Parameters
    ----------
    covenants : Sequence[Any]
        The case's covenants (each with ``metric``, ``threshold``, ``direction``, ``tested``).
    statements : Sequence[Any]
        The statement rows, oldest first.

    Returns
    -------
    tuple[CovenantTest, ...]
        One test per covenant, in order; empty without covenants or statements.
    """
    if not covenants or not statements:
        return ()
    row = statements[-1]
    latest = credit_year(row)
    return tuple(
        read_covenant(
            metric=c.metric,
            threshold=float(c.threshold),
            direction=c.direction,
            tested=c.tested,
            latest=latest,
            row=row,
        )
        for c in covenants
    )
