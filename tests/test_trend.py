"""Asset trend: least-squares fits, volatility of log changes and the window, checked against
scipy.stats.linregress, numpy.polyfit and numpy.std."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import SAMPLE_STATEMENTS
from hypothesis import given, settings
from hypothesis import strategies as st
from obligor_memo.engine.trend import annual_log_changes, fit_asset_trend, least_squares_line, sample_volatility
from scipy import stats

_TABLE = np.genfromtxt(SAMPLE_STATEMENTS, delimiter=",", names=True)
YEARS = _TABLE["year"].astype(int)
ASSETS = _TABLE["total_assets"]

# Tolerance: two float64 least-squares solvers agree to a few ulps times the condition number;
# 1e-9 relative is far above that and far below anything a memo prints.
REL = 1e-9


@pytest.mark.parametrize("transform", [np.log, lambda a: a], ids=["log-linear", "straight-line"])
def test_fit_matches_linregress_and_polyfit(transform) -> None:
    y = transform(ASSETS)
    fit = least_squares_line(YEARS, y)
    reference = stats.linregress(YEARS, y)
    slope, intercept = np.polyfit(YEARS, y, 1)
    assert fit.slope == pytest.approx(reference.slope, rel=REL)
    assert fit.slope == pytest.approx(slope, rel=REL)
    assert fit.intercept == pytest.approx(reference.intercept, rel=1e-7)  # year 0 is far away
    assert fit.intercept == pytest.approx(intercept, rel=1e-7)
    assert fit.r_squared == pytest.approx(reference.rvalue**2, rel=REL)
    assert fit.n == len(YEARS)
    assert fit.at(2030) == pytest.approx(np.polyval([slope, intercept], 2030), rel=REL)


def test_volatility_is_numpy_std_with_ddof_1_of_log_changes() -> None:
    trend = fit_asset_trend(years=list(YEARS), total_assets=list(ASSETS))
    changes = np.diff(np.log(ASSETS))
    assert trend.log_changes == pytest.approx(tuple(changes), rel=1e-12)
    assert trend.volatility_estimate == pytest.approx(np.std(changes, ddof=1), rel=1e-12)
    assert trend.growth_estimate == pytest.approx(stats.linregress(YEARS, np.log(ASSETS)).slope, rel=REL)
    # mu = g + s^2/2: the drift of a geometric Brownian motion whose log grows at g
    # (Hull, Options, Futures, and Other Derivatives, lognormal property; from memory).
    assert trend.expected_return == pytest.approx(trend.growth_used + trend.volatility_used**2 / 2, rel=1e-15)


@pytest.mark.parametrize("window", [3, 5, 10])
def test_window_keeps_the_latest_years(window) -> None:
    trend = fit_asset_trend(years=list(YEARS), total_assets=list(ASSETS), window_years=window)
    assert trend.years == tuple(YEARS[-window:])
    assert trend.window_years == window
    reference = stats.linregress(YEARS[-window:], np.log(ASSETS[-window:]))
    assert trend.growth_estimate == pytest.approx(reference.slope, rel=REL)
    assert trend.volatility_estimate == pytest.approx(np.std(np.diff(np.log(ASSETS[-window:])), ddof=1), rel=1e-12)


def test_years_in_any_order_are_sorted_first() -> None:
    order = np.random.default_rng(7).permutation(len(YEARS))
    shuffled = fit_asset_trend(years=list(YEARS[order]), total_assets=list(ASSETS[order]), window_years=4)
    ordered = fit_asset_trend(years=list(YEARS), total_assets=list(ASSETS), window_years=4)
    assert shuffled == ordered


def test_overrides_replace_the_estimates_but_keep_them() -> None:
    trend = fit_asset_trend(
        years=list(YEARS), total_assets=list(ASSETS), growth_override=-0.05, volatility_override=0.3
    )
    assert (trend.growth_used, trend.volatility_used) == (-0.05, 0.3)
    assert trend.growth_overridden and trend.volatility_overridden
    assert trend.growth_estimate == pytest.approx(stats.linregress(YEARS, np.log(ASSETS)).slope, rel=REL)
    assert trend.expected_return == pytest.approx(-0.05 + 0.3**2 / 2, rel=1e-15)


def test_gap_years_scale_the_change_by_one_over_sqrt_gap() -> None:
    # Under a random walk the variance of a k-year log change is k times the annual one.
    changes = annual_log_changes(np.array([2019, 2020, 2023]), np.array([100.0, 110.0, 150.0]))
    assert changes[0] == pytest.approx(np.log(1.1), rel=1e-15)
    assert changes[1] == pytest.approx(np.log(150 / 110) / np.sqrt(3), rel=1e-15)
    trend = fit_asset_trend(years=[2019, 2020, 2023], total_assets=[100.0, 110.0, 150.0])
    assert "trend.gaps" in {c.code for c in trend.cautions}


def test_cautions_for_short_history_and_weak_fit() -> None:
    trend = fit_asset_trend(years=[2020, 2021, 2022, 2023], total_assets=[100.0, 140.0, 90.0, 130.0])
    codes = {c.code for c in trend.cautions}
    assert {"trend.short_history", "trend.weak_fit"} <= codes
    assert stats.linregress([2020, 2021, 2022, 2023], np.log([100.0, 140.0, 90.0, 130.0])).rvalue ** 2 < 0.5
    long = fit_asset_trend(years=list(YEARS), total_assets=list(ASSETS))
    assert "trend.short_history" not in {c.code for c in long.cautions}


def test_constant_values_have_no_r_squared() -> None:
    assert least_squares_line(np.array([2020, 2021, 2022]), np.array([5.0, 5.0, 5.0])).r_squared is None


@pytest.mark.parametrize(
    ("call", "fragment"),
    [
        (lambda: least_squares_line(np.array([2020]), np.array([1.0])), "at least 2"),
        (lambda: least_squares_line(np.array([2020, 2020]), np.array([1.0, 2.0])), "two distinct years"),
        (lambda: sample_volatility(np.array([0.1])), "at least 2"),
        (lambda: fit_asset_trend(years=[2020], total_assets=[1.0]), "pd.asset_growth"),
        (lambda: fit_asset_trend(years=[2020, 2021], total_assets=[1.0, 2.0]), "pd.asset_volatility"),
        (lambda: fit_asset_trend(years=[2020, 2021, 2022], total_assets=[5.0, 5.0, 5.0]), "pd.asset_volatility"),
    ],
)
def test_too_little_history_raises_a_named_error(call, fragment) -> None:
    with pytest.raises(ValueError, match="allowed") as caught:
        call()
    assert fragment in str(caught.value)


@settings(max_examples=200, deadline=None)
@given(
    st.lists(st.floats(min_value=1.0, max_value=1e12), min_size=3, max_size=12),
    st.integers(min_value=1950, max_value=2100),
)
def test_fit_matches_polyfit_on_any_history(values, first_year) -> None:
    years = np.arange(first_year, first_year + len(values))
    y = np.log(np.array(values))
    fit = least_squares_line(years, y)
    slope, intercept = np.polyfit(years - years.mean(), y, 1)  # centred: polyfit stays well conditioned
    assert fit.slope == pytest.approx(slope, rel=1e-7, abs=1e-9)
    assert fit.at(years.mean()) == pytest.approx(intercept, rel=1e-9, abs=1e-9)
