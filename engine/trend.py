"""Asset trend: how the borrower's total assets grew, and how unevenly.

Two least-squares lines are fitted over the chosen window so the analyst can judge the trend:
ln(total assets) on year (slope = continuous growth g [1/year]) and total assets on year
(slope [currency/year]), each with its R^2. Asset volatility is the sample standard deviation
(n - 1) of the annual log changes of total assets [1/sqrt(year)].
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from obligor_memo.engine.errors import Caution, InputError


@dataclass(frozen=True)
class LinearFit:
    """y = intercept + slope * year, fitted by ordinary least squares."""

    slope: float
    """[y-units / year]"""
    intercept: float
    """[y-units] at year 0."""
    r_squared: float | None
    """None when y does not vary (R^2 undefined)"""
    n: int
    """Number of points fitted."""

    def at(self, year: float) -> float:
        """Value of the fitted line at ``year``.

        Parameters
        ----------
        year : float
            A calendar year.

        Returns
        -------
        float
            intercept + slope x year [y-units].
        """
        return self.intercept + self.slope * year


def least_squares_line(years: np.ndarray, values: np.ndarray) -> LinearFit:
    """Ordinary least squares of ``values`` on ``years`` with R^2 = 1 - SSR/SST.

    Years are centred before fitting: raw calendar years squared lose digits in float64.

    Parameters
    ----------
    years : np.ndarray
        Financial years, ascending.
    values : np.ndarray
        One value per year (here ln(total assets)).

    Returns
    -------
    LinearFit
        Slope, intercept and R^2 of the fit.

    Raises
    ------
    InputError
        If an input is outside its allowed range (carries the field, the value and the allowed text).
    """
    x = np.asarray(years, dtype=float)
    y = np.asarray(values, dtype=float)
    if x.size < 2:
        raise InputError("years", f"{x.size} point(s)", "at least 2 to fit a line")
    xc = x - x.mean()
    sxx = float(xc @ xc)
    if sxx == 0:
        raise InputError("years", "all equal", "at least two distinct years")
    slope = float(xc @ (y - y.mean())) / sxx
    intercept = float(y.mean() - slope * x.mean())
    residual = y - (intercept + slope * x)
    sst = float(((y - y.mean()) ** 2).sum())
    r2 = None if sst <= 1e-300 * max(1.0, float(np.abs(y).max())) else 1.0 - float(residual @ residual) / sst
    return LinearFit(slope=slope, intercept=intercept, r_squared=r2, n=int(x.size))


def annual_log_changes(years: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Annual log changes ln(A_t / A_{t-1}).

    Across a gap of k years the change is divided by sqrt(k) so that its variance is that of one
    year under a random walk (the mean is not used).

    Parameters
    ----------
    years : np.ndarray
        Financial years, ascending.
    values : np.ndarray
        Total assets of each year [currency units], > 0.

    Returns
    -------
    np.ndarray
        One change per consecutive pair of years [1/year].
    """
    gaps = np.diff(np.asarray(years, dtype=float))
    return np.diff(np.log(values)) / np.sqrt(gaps)


def sample_volatility(changes: np.ndarray) -> float:
    """Sample standard deviation with n - 1 in the denominator (numpy ddof=1).

    Parameters
    ----------
    changes : np.ndarray
        Annual log changes [1/year].

    Returns
    -------
    float
        The sample standard deviation [1/sqrt(year)].

    Raises
    ------
    InputError
        If an input is outside its allowed range (carries the field, the value and the allowed text).
    """
    if changes.size < 2:
        raise InputError(
            "annual log changes", changes.size, "at least 2 (three years of statements) to estimate a volatility"
        )
    return float(np.std(changes, ddof=1))


@dataclass(frozen=True)
class AssetTrend:
    """The asset history in the window and everything fitted from it."""

    years: tuple[int, ...]
    """Window used, oldest first."""
    total_assets: tuple[float, ...]
    """[currency units]"""
    window_years: int
    """Number of years in the window."""
    log_fit: LinearFit
    """ln(total assets) on year; slope = growth g [1/year]"""
    level_fit: LinearFit
    """Total assets on year; slope [currency/year]"""
    log_changes: tuple[float, ...]
    """Annual log changes [1/year]"""
    growth_estimate: float
    """g from the log fit [1/year]"""
    volatility_estimate: float | None
    """Sample std of log changes [1/sqrt(year)]"""
    growth_used: float
    """Estimate or the analyst's override [1/year]"""
    volatility_used: float
    """Estimate or the analyst's override [1/sqrt(year)]"""
    growth_overridden: bool
    """True when the analyst's growth is used."""
    volatility_overridden: bool
    """True when the analyst's volatility is used."""
    expected_return: float
    """mu = g + s^2 / 2 [1/year]"""
    cautions: tuple[Caution, ...]
    """What the reader should know about the fit."""


def fit_asset_trend(
    *,
    years: list[int],
    total_assets: list[float],
    window_years: int | None = None,
    growth_override: float | None = None,
    volatility_override: float | None = None,
) -> AssetTrend:
    """Fit the asset trend over the latest ``window_years`` years (None = all years).

    Growth g is the slope of ln(total assets) on year; volatility s the sample standard deviation
    of annual log changes; the expected asset return is mu = g + s^2/2 (the drift of a geometric
    Brownian motion whose log grows at g; e.g. Hull, Options, Futures, and Other Derivatives,
    the lognormal property of stock prices).

    Parameters
    ----------
    years : list[int]
        Financial year of each statement, ascending.
    total_assets : list[float]
        Total assets of each year [currency units], > 0.
    window_years : int | None, optional
        Number of latest years fitted; None for all years.
    growth_override : float | None, optional
        The analyst's growth g, used instead of the estimate [1/year]; None for none.
    volatility_override : float | None, optional
        The analyst's volatility s, used instead of the estimate [1/sqrt(year)]; None for none.

    Returns
    -------
    AssetTrend
        Growth, volatility and expected return estimated and in use, with their cautions.

    Raises
    ------
    InputError
        If an input is outside its allowed range (carries the field, the value and the allowed text).
    """
    y = np.asarray(years, dtype=float)
    a = np.asarray(total_assets, dtype=float)
    order = np.argsort(y)
    y, a = y[order], a[order]
    if window_years is not None:
        y, a = y[-window_years:], a[-window_years:]
    cautions: list[Caution] = []
    if len(y) < 2 and growth_override is None:
        raise InputError(
            "statements",
            f"{len(y)} year(s) in the window",
            "at least 2 to estimate asset growth, or set pd.asset_growth",
        )
    if len(y) >= 2:
        log_fit = least_squares_line(y, np.log(a))
        level_fit = least_squares_line(y, a)
        changes = annual_log_changes(y, a)
    else:
        log_fit = LinearFit(slope=0.0, intercept=float(np.log(a[0])), r_squared=None, n=1)
        level_fit = LinearFit(slope=0.0, intercept=float(a[0]), r_squared=None, n=1)
        changes = np.array([])
    if np.any(np.diff(y) > 1):
        cautions.append(
            Caution(
                "trend.gaps",
                "The statement years are not consecutive; annual log changes across a gap are scaled by 1/sqrt(gap).",
                "statements",
            )
        )
    vol_estimate = sample_volatility(changes) if changes.size >= 2 else None
    if vol_estimate is None and volatility_override is None:
        raise InputError(
            "statements",
            f"{len(y)} year(s) in the window",
            "at least 3 to estimate asset volatility, or set pd.asset_volatility",
        )
    if len(y) < 5:
        cautions.append(
            Caution(
                "trend.short_history",
                f"Only {len(y)} years in the window: growth and volatility estimates "
                "from so short a history are very uncertain.",
                "pd.window_years",
            )
        )
    if vol_estimate is not None and vol_estimate == 0 and volatility_override is None:
        raise InputError(
            "pd.asset_volatility",
            0.0,
            "a volatility above 0 (the estimate is 0: total assets changed by the same "
            "log amount every year): set pd.asset_volatility",
        )
    if vol_estimate is not None and vol_estimate > 3 and volatility_override is None:
        raise InputError(
            "pd.asset_volatility",
            round(vol_estimate, 4),
            "an estimate from the statements up to 3 (300 % a year); swings this wide "
            "make the structural model meaningless: review the statements or set "
            "pd.asset_volatility",
        )
    for fit, label in ((log_fit, "log-linear"), (level_fit, "straight-line")):
        if fit.r_squared is not None and fit.r_squared < 0.5 and fit.n >= 3:
            cautions.append(
                Caution(
                    "trend.weak_fit",
                    f"The {label} asset trend explains little "
                    f"(R^2 = {fit.r_squared:.2f}); the growth estimate is weak.",
                    "pd.window_years",
                )
            )
            break
    growth = growth_override if growth_override is not None else log_fit.slope
    if volatility_override is not None:
        vol = volatility_override
    else:
        assert vol_estimate is not None  # refused above when neither is there
        vol = float(vol_estimate)
    return AssetTrend(
        years=tuple(int(v) for v in y),
        total_assets=tuple(float(v) for v in a),
        window_years=len(y),
        log_fit=log_fit,
        level_fit=level_fit,
        log_changes=tuple(float(c) for c in changes),
        growth_estimate=log_fit.slope,
        volatility_estimate=vol_estimate,
        growth_used=float(growth),
        volatility_used=float(vol),
        growth_overridden=growth_override is not None,
        volatility_overridden=volatility_override is not None,
        expected_return=float(growth) + float(vol) ** 2 / 2,
        cautions=tuple(cautions),
    )
