"""Why the PD is what it is: the inputs that move it most, the year that drives it, the break-evens.

The break-even points are those at which the grade drops a notch or RAROC falls below the hurdle.

Leave one year out: the asset volatility is the sample standard deviation of the annual log
changes of total assets; dropping one change at a time and re-computing the balance-sheet PD with
everything else held shows how much a single year drives the estimate.

Break-even points: the value of one input at which the PD in force reaches the upper edge of the
grade's band (the grade drops one notch) or at which RAROC equals the hurdle, found by Brent's
method (scipy.optimize.brentq) on the whole evaluation, within the input's allowed range.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np
from obligor_memo.engine.structural import balance_sheet_pd
from obligor_memo.engine.trend import sample_volatility
from scipy.optimize import brentq


@dataclass(frozen=True)
class YearLeftOut:
    """The asset volatility and balance-sheet PD with one year's change left out."""

    year: int
    """The year whose change on the year before is left out."""
    log_change: float
    """That year's log change of total assets [1/year]."""
    volatility: float
    """Sample volatility without it [1/sqrt(year)]."""
    pd: float
    """Balance-sheet PD with that volatility, all else held [fraction]."""


@dataclass(frozen=True)
class Driver:
    """One assumption of the one-way sensitivity and how far it moves the PD in force."""

    label: str
    """The assumption in words."""
    pd_low: float | None
    """PD at the lower input [fraction]; None: that case did not validate."""
    pd_high: float | None
    """PD at the higher input [fraction]; None: that case did not validate."""
    swing: float
    """|PD at the higher input - PD at the lower input| [fraction] (the base PD for a missing side)."""


@dataclass(frozen=True)
class BreakEven:
    """The values of one input at which the grade drops a notch and RAROC reaches the hurdle."""

    input: str
    """The input in words."""
    base: float
    """Its value in use, in the input's own unit."""
    grade_notch: float | None
    """Value at which the grade drops one notch; None: not within range."""
    below_hurdle: float | None
    """Value at which RAROC falls to the hurdle; None: not within range."""
    low: float
    """Lower end of the range searched."""
    high: float
    """Upper end of the range searched."""


@dataclass(frozen=True)
class PdDrivers:
    """What drives the PD: the largest one-way swings, the years left out and the break-evens."""

    drivers: tuple[Driver, ...]
    """Largest PD swing first, at most three."""
    years_left_out: tuple[YearLeftOut, ...]
    """One per year change; empty unless the volatility is estimated from at least three changes."""
    driving_year: YearLeftOut | None
    """The year whose removal changes the volatility most; None without years left out."""
    years_shown: tuple[YearLeftOut, ...]
    """The years a page prints: all when at most :data:`YEARS_SHOWN`, else the ones whose removal
    changes the volatility most, in year order."""
    break_evens: tuple[BreakEven, ...]
    """Break-evens of each input searched (balance-sheet method only)."""


YEARS_SHOWN = 10
"""At most this many years left out are printed: a row of ten years fits a page's width."""


def most_telling(
    years: tuple[YearLeftOut, ...], volatility: float, count: int = YEARS_SHOWN
) -> tuple[YearLeftOut, ...]:
    """The ``count`` years whose removal moves the volatility most, in year order.

    Parameters
    ----------
    years : tuple[YearLeftOut, ...]
        Every year left out.
    volatility : float
        The volatility with every year [1/sqrt(year)].
    count : int, optional
        How many to keep.

    Returns
    -------
    tuple[YearLeftOut, ...]
        ``years`` itself when it has at most ``count`` entries.
    """
    if len(years) <= count:
        return years
    kept = sorted(years, key=lambda y: abs(y.volatility - volatility), reverse=True)[:count]
    return tuple(sorted(kept, key=lambda y: y.year))


def leave_one_year_out(results: Any) -> tuple[YearLeftOut, ...]:
    """Volatility and PD without each year's change (balance-sheet method, estimated volatility).

    Parameters
    ----------
    results : Any
        Evaluated results: the asset trend, the case.

    Returns
    -------
    tuple[YearLeftOut, ...]
        One entry per annual change; empty without a trend, with a volatility set in the case, or
        with fewer than three changes.
    """
    trend, pd, case = results.trend, results.pd, results.case
    if trend is None or trend.volatility_overridden or len(trend.log_changes) < 3:
        return ()
    latest = case.statements[-1]
    changes = np.asarray(trend.log_changes, dtype=float)
    out = []
    for i, change in enumerate(changes):
        vol = sample_volatility(np.delete(changes, i))
        bs = balance_sheet_pd(
            asset_value=latest.total_assets,
            asset_growth=trend.growth_used,
            asset_volatility=vol,
            short_term_liabilities=latest.short_term_liabilities,
            long_term_liabilities=latest.long_term_liabilities,
            short_term_share=case.pd.default_point.short_term_share,
            long_term_share=case.pd.default_point.long_term_share,
            horizon_years=case.pd.horizon_years,
        )
        out.append(YearLeftOut(year=trend.years[i + 1], log_change=float(change), volatility=vol, pd=float(bs.pd)))
    del pd
    return tuple(out)


def top_drivers(sensitivity: Any, count: int = 3) -> tuple[Driver, ...]:
    """The assumptions of the one-way sensitivity that move the PD in force most.

    Parameters
    ----------
    sensitivity : Any
        The one-way sensitivity table, or None.
    count : int, optional
        Largest number of drivers given.

    Returns
    -------
    tuple[Driver, ...]
        Largest PD swing first, at most ``count``, without those that do not move it.
    """
    if sensitivity is None:
        return ()
    rows = []
    for row in sensitivity.rows:
        lo = row.pd_low if row.pd_low is not None else row.pd_base
        hi = row.pd_high if row.pd_high is not None else row.pd_base
        rows.append(Driver(label=row.label, pd_low=row.pd_low, pd_high=row.pd_high, swing=abs(hi - lo)))
    rows.sort(key=lambda d: d.swing, reverse=True)
    return tuple(d for d in rows[:count] if d.swing > 0)


def _root(f: Callable[[float], float], a: float, b: float) -> float | None:
    """A root of f in [a, b] by Brent's method; None where f has no sign change there or fails."""
    try:
        fa, fb = f(a), f(b)
    except Exception:  # an input the case refuses at the edge: no break-even reported
        return None
    if fa == 0:
        return a
    if not np.isfinite(fa) or not np.isfinite(fb) or fa * fb > 0:
        return None
    return float(brentq(f, a, b, xtol=1e-7))


def break_evens(results: Any) -> tuple[BreakEven, ...]:
    """Grade-notch and hurdle break-evens of the inputs that move the PD and RAROC.

    The inputs searched are the long-term share of the default point, the asset volatility, the
    asset growth (where the PD step uses one) and the unsecured mean recovery of the first facility
    with its own recovery law (recovery moves RAROC, never the grade). The grade search runs the
    PD step alone (estimate and grade, as ``evaluate`` runs them); the hurdle search evaluates each
    case whole (``evaluate(..., detail=False)``).

    Parameters
    ----------
    results : Any
        Evaluated results: the case, its PD step and pricing.

    Returns
    -------
    tuple[BreakEven, ...]
        One per input with a range to search; empty unless the PD is the balance-sheet method's
        and its grade has an upper edge.
    """
    from obligor_memo.engine.evaluate import evaluate
    from obligor_memo.engine.pd_estimate import estimate_pd, grade_pd
    from obligor_memo.engine.scenarios import apply_overrides

    case, pd, pricing = results.case, results.pd, results.pricing
    if case.pd.method != "balance_sheet" or pd.grade_upper is None:
        return ()
    cache: dict[tuple[str, float], Any] = {}
    pds: dict[tuple[str, float], float] = {}

    def run(path: str, value: float) -> Any:
        key = (path, round(value, 12))
        if key not in cache:
            cache[key] = evaluate(apply_overrides(case, {path: value}, where="break-even"), detail=False)
        return cache[key]

    def pd_in_force(path: str, value: float) -> float:
        # The PD step alone (the grade needs nothing else): evaluate's first two steps, as it
        # runs them, without the exposures, loss distribution and capital of the whole case.
        key = (path, round(value, 12))
        if key not in pds:
            moved = apply_overrides(case, {path: value}, where="break-even")
            pds[key] = float(grade_pd(moved, estimate_pd(moved, cross_check=False)[1])[0].pd)
        return pds[key]

    def grade_gap(path: str) -> Callable[[float], float]:
        return lambda v: pd_in_force(path, v) - pd.grade_upper

    def hurdle_gap(path: str) -> Callable[[float], float]:
        def f(v: float) -> float:
            p = run(path, v).pricing
            return float("nan") if p is None else p.raroc - p.hurdle_rate

        return f

    specs: list[tuple[str, str, float, float, float, bool]] = [
        (
            "Long-term share in the default point",
            "pd.default_point.long_term_share",
            case.pd.default_point.long_term_share,
            case.pd.default_point.long_term_share,
            1.0,
            True,
        ),
        ("Asset volatility", "pd.asset_volatility", pd.asset_volatility, pd.asset_volatility, 1.0, True),
    ]
    if pd.asset_growth is not None:
        specs.append(("Asset growth", "pd.asset_growth", pd.asset_growth, -0.5, pd.asset_growth, True))
    secured = next((f for f in case.facilities if f.recovery is not None), None)
    if secured is not None:
        specs.append(
            (
                f"Recovery mean of {secured.id}, unsecured law",
                f"facilities.{secured.id}.recovery.mean",
                secured.recovery.mean,
                0.01,
                secured.recovery.mean,
                False,
            )
        )
    out = []
    for label, path, base, lo, hi, moves_grade in specs:
        if hi <= lo:
            continue
        notch = _root(grade_gap(path), lo, hi) if moves_grade else None
        hurdle = _root(hurdle_gap(path), lo, hi) if pricing is not None else None
        out.append(BreakEven(input=label, base=base, grade_notch=notch, below_hurdle=hurdle, low=lo, high=hi))
    return tuple(out)


def pd_drivers(results: Any) -> PdDrivers:
    """The drivers, years left out and break-evens of a case's PD.

    Parameters
    ----------
    results : Any
        Evaluated results (with their one-way sensitivity where it was computed).

    Returns
    -------
    PdDrivers
        The largest one-way PD swings, the years left out, the driving year and the break-evens.
    """
    years = leave_one_year_out(results)
    driving = None
    shown: tuple[YearLeftOut, ...] = ()
    if years and results.trend is not None:
        driving = max(years, key=lambda y: abs(y.volatility - results.trend.volatility_used))
        shown = most_telling(years, results.trend.volatility_used)
    return PdDrivers(
        drivers=top_drivers(getattr(results, "sensitivity", None)),
        years_left_out=years,
        driving_year=driving,
        years_shown=shown,
        break_evens=break_evens(results),
    )
