"""One-way sensitivity and the two-way PD grid.

References: the grid against engine.structural.balance_sheet_pd cell by cell and against
DD written out by hand with N from scipy.stats.norm; the market grid against the scalar Merton
solver and the Merton-model example of Hull, "Options, Futures, and Other Derivatives" (values
recalled from memory, as quoted in the design notes); every one-way point against evaluate() of the
same change made by hand; monotonicity as the formula DD = (ln(V/DP) + g T) / (s sqrt T) implies.
"""

from __future__ import annotations

import math
import statistics
import time
from pathlib import Path

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from obligor_memo.engine.case import case_to_dict, parse_case
from obligor_memo.engine.errors import CaseError
from obligor_memo.engine.evaluate import evaluate
from obligor_memo.engine.loading import load_case
from obligor_memo.engine.market import solve_merton
from obligor_memo.engine.scenarios import apply_overrides
from obligor_memo.engine.sensitivity import (
    ASSUMPTIONS,
    balance_sheet_pd_grid,
    centred_volatility_axis,
    feasible_recovery_means,
    one_way_sensitivity,
    pd_grid,
)
from obligor_memo.engine.structural import balance_sheet_pd
from scipy import stats

SAMPLE = Path(__file__).resolve().parents[1] / "sample_data" / "hollowmere.yaml"
CASE = load_case(SAMPLE)
BASE = evaluate(CASE)
ONE_WAY = one_way_sensitivity(CASE, BASE)
ROWS = {row.assumption: row for row in ONE_WAY.rows}
LATEST = CASE.statements[-1]


def _edited(edit):
    data = case_to_dict(CASE)
    edit(data)
    return parse_case(data)


def _market_case(**market):
    data = case_to_dict(CASE)
    data["pd"]["method"] = "market"
    data["market"].update(market)
    return parse_case(data)


# --------------------------------------------------------------------------- PD grid: references


def test_grid_cells_equal_balance_sheet_pd_one_at_a_time():
    grid = pd_grid(CASE, BASE)
    assert len(grid.x_values) == 21 and len(grid.y_values) == 21
    for i, s in enumerate(grid.y_values):
        for j, b in enumerate(grid.x_values):
            one = balance_sheet_pd(
                asset_value=LATEST.total_assets,
                asset_growth=BASE.pd.asset_growth,
                asset_volatility=s,
                short_term_liabilities=LATEST.short_term_liabilities,
                long_term_liabilities=LATEST.long_term_liabilities,
                short_term_share=BASE.pd.short_term_share,
                long_term_share=b,
                horizon_years=BASE.pd.horizon_years,
            )
            # Same formula, broadcast versus scalar: agreement to rounding.
            assert math.isclose(grid.pd[i][j], one.pd, rel_tol=1e-12, abs_tol=1e-300)
            assert math.isclose(grid.distance_to_default[i][j], one.distance_to_default, rel_tol=1e-12)


def test_grid_pd_is_normal_cdf_of_minus_hand_written_dd():
    grid = pd_grid(CASE, BASE)
    g, t = BASE.pd.asset_growth, BASE.pd.horizon_years
    for i in (0, 7, 10, 20):
        for j in (1, 10, 20):
            dp = (
                BASE.pd.short_term_share * LATEST.short_term_liabilities
                + grid.x_values[j] * LATEST.long_term_liabilities
            )
            s = grid.y_values[i]
            dd = (math.log(LATEST.total_assets / dp) + g * t) / (s * math.sqrt(t))
            # scipy.stats.norm as the reference N(.); tolerance: floating rounding only.
            assert math.isclose(grid.pd[i][j], stats.norm.cdf(-dd), rel_tol=1e-10)


def test_grid_base_point_is_the_model_pd_in_force():
    grid = pd_grid(CASE, BASE)
    # The default volatility axis is log-spaced from s/2 to 2s, so its middle is s itself.
    assert math.isclose(grid.y_values[10], BASE.pd.asset_volatility, rel_tol=1e-12)
    assert grid.x_values[10] == pytest.approx(0.5) and grid.base_x == 0.5
    assert grid.base_pd == BASE.pd.model_pd
    assert math.isclose(grid.pd[10][10], BASE.pd.model_pd, rel_tol=1e-10)


def test_grid_without_base_results_runs_only_the_pd_step():
    assert pd_grid(CASE).pd == pd_grid(CASE, BASE).pd


def test_grid_is_fast():
    # Target: a 21 x 21 grid well under 10 ms (measured ~0.5 ms); median of repeats against noise.
    times = []
    for _ in range(15):
        start = time.perf_counter()
        pd_grid(CASE, BASE)
        times.append(time.perf_counter() - start)
    assert statistics.median(times) < 0.010


@pytest.mark.parametrize(
    "volatility, low, high",
    [
        (0.2, 0.1, 0.4),
        (0.015, 0.01, 0.03),  # floor at 1 % volatility
    ],
)
def test_centred_volatility_axis(volatility, low, high):
    axis = centred_volatility_axis(volatility)
    assert len(axis) == 21 and axis[0] == pytest.approx(low) and axis[-1] == pytest.approx(high)
    ratios = axis[1:] / axis[:-1]
    assert np.allclose(ratios, ratios[0])
    assert np.all(np.diff(axis) > 0)


def test_explicit_volatility_axis_is_used():
    data = case_to_dict(CASE)
    data["sensitivity"]["asset_volatility_axis"] = {"start": 0.05, "stop": 0.45, "points": 9}
    grid = pd_grid(parse_case(data))
    assert np.allclose(grid.y_values, np.linspace(0.05, 0.45, 9))


@pytest.mark.parametrize(
    "axis, value, field",
    [
        ("long_term_share_axis", {"start": 0.0, "stop": 1.5, "points": 5}, "sensitivity.long_term_share_axis.stop"),
        ("asset_volatility_axis", {"start": 0.0, "stop": 0.5, "points": 5}, "sensitivity.asset_volatility_axis.start"),
    ],
)
def test_bad_grid_axis_is_a_case_error(axis, value, field):
    data = case_to_dict(CASE)
    data["sensitivity"][axis] = value
    with pytest.raises(CaseError) as caught:
        pd_grid(parse_case(data))
    assert caught.value.fields == (field,)


def test_zero_default_point_column_has_zero_pd():
    dp, dd, pd = balance_sheet_pd_grid(
        asset_value=100.0,
        asset_growth=0.0,
        short_term_liabilities=0.0,
        long_term_liabilities=50.0,
        short_term_share=1.0,
        long_term_shares=[0.0, 0.5],
        asset_volatilities=[0.2],
        horizon_years=1.0,
    )
    assert dp[0] == 0 and pd[0, 0] == 0.0 and dd[0, 0] == math.inf and 0 < pd[0, 1] < 1


@pytest.mark.parametrize(
    "name, value",
    [
        ("long_term_shares", [0.5, 1.2]),
        ("asset_volatilities", [0.0, 0.2]),
        ("asset_volatilities", [float("nan")]),
        ("short_term_share", 1.5),
        ("asset_value", 0.0),
    ],
)
def test_grid_bad_arguments_are_named(name, value):
    args = dict(
        asset_value=100.0,
        asset_growth=0.0,
        short_term_liabilities=40.0,
        long_term_liabilities=50.0,
        short_term_share=1.0,
        long_term_shares=[0.5],
        asset_volatilities=[0.2],
        horizon_years=1.0,
    )
    args[name] = value
    with pytest.raises(ValueError, match=name):
        balance_sheet_pd_grid(**args)


# --------------------------------------------------------------------------- market grid


def test_market_grid_reproduces_hull_merton_example():
    # Hull, Options, Futures, and Other Derivatives, Merton-model example: E = 3, sE = 80 %,
    # r = 5 %, D = 10, T = 1 give V = 12.40, s = 21.23 %, risk-neutral PD = 12.7 % (recalled from
    # memory; the check allows the last quoted digit).
    data = case_to_dict(CASE)
    data["statements"] = [
        {"year": 2024, "total_assets": 12.0, "short_term_liabilities": 10.0, "long_term_liabilities": 0.0}
    ]
    data["market"] = {"equity_value": 3.0, "equity_volatility": 0.80, "risk_free_rate": 0.05}
    data["pd"].update(method="market", measure="risk_neutral", horizon_years=1.0)
    grid = pd_grid(parse_case(data))
    assert grid.method == "market" and grid.y_name == "equity_volatility"
    assert grid.y_values[10] == pytest.approx(0.80, rel=1e-12)
    assert set(grid.default_point) == {10.0}  # no long-term debt: one default point
    assert grid.pd[10][0] == pytest.approx(0.127, abs=5e-4)
    assert grid.base_pd == pytest.approx(0.127, abs=5e-4)


def test_market_grid_cells_equal_scalar_solves():
    case = _market_case()
    results = evaluate(case)
    grid = pd_grid(case, results)
    assert any("equity volatility" in note for note in grid.notes)
    m = case.market
    for i in (0, 10, 20):
        for j in (0, 10, 20):
            one = solve_merton(
                equity_value=m.equity_value,
                equity_volatility=grid.y_values[i],
                default_point=grid.default_point[j],
                risk_free_rate=m.risk_free_rate,
                horizon_years=case.pd.horizon_years,
            )
            # Both solves stop at relative residual 1e-9: PDs agree far inside that.
            assert math.isclose(grid.pd[i][j], one.pd, rel_tol=1e-7)
    assert math.isclose(grid.pd[10][10], results.pd.model_pd, rel_tol=1e-9)


# --------------------------------------------------------------------------- monotonicity


positive = st.floats(1.0, 1e4)
share = st.floats(0.0, 1.0)


@settings(max_examples=60, deadline=None)
@given(
    v=positive,
    stl=st.floats(0.0, 1e4),
    ltl=st.floats(0.1, 1e4),
    a=share,
    g=st.floats(-0.5, 0.5),
    s=st.floats(0.02, 1.5),
    t=st.floats(0.1, 10),
)
def test_pd_rises_with_long_term_share(v, stl, ltl, a, g, s, t):
    _, _, pd = balance_sheet_pd_grid(
        asset_value=v,
        asset_growth=g,
        short_term_liabilities=stl,
        long_term_liabilities=ltl,
        short_term_share=a,
        long_term_shares=np.linspace(0, 1, 11),
        asset_volatilities=[s],
        horizon_years=t,
    )
    assert np.all(np.diff(pd[0]) >= -1e-15)


@settings(max_examples=60, deadline=None)
@given(
    v=positive,
    stl=st.floats(0.1, 1e4),
    ltl=st.floats(0.0, 1e4),
    b=share,
    a1=share,
    a2=share,
    g=st.floats(-0.5, 0.5),
    s=st.floats(0.02, 1.5),
)
def test_pd_rises_with_short_term_share(v, stl, ltl, b, a1, a2, g, s):
    a1, a2 = sorted((a1, a2))
    assume(a1 * stl + b * ltl > 0)

    def pd(a):
        return balance_sheet_pd(
            asset_value=v,
            asset_growth=g,
            asset_volatility=s,
            short_term_liabilities=stl,
            long_term_liabilities=ltl,
            short_term_share=a,
            long_term_share=b,
        ).pd

    assert pd(a1) <= pd(a2) + 1e-15


@settings(max_examples=60, deadline=None)
@given(v=positive, dp=positive, g1=st.floats(-1, 1), g2=st.floats(-1, 1), s=st.floats(0.02, 1.5), t=st.floats(0.1, 10))
def test_pd_falls_with_growth(v, dp, g1, g2, s, t):
    g1, g2 = sorted((g1, g2))
    pds = [
        balance_sheet_pd(
            asset_value=v,
            asset_growth=g,
            asset_volatility=s,
            short_term_liabilities=dp,
            long_term_liabilities=0.0,
            horizon_years=t,
        ).pd
        for g in (g1, g2)
    ]
    assert pds[0] >= pds[1] - 1e-15


@settings(max_examples=80, deadline=None)
@given(
    v=positive,
    dp=positive,
    g=st.floats(-0.5, 0.5),
    s=st.floats(0.02, 1.5),
    t1=st.floats(0.1, 10),
    t2=st.floats(0.1, 10),
)
def test_pd_against_horizon_follows_the_sign_of_g_t_minus_log_leverage(v, dp, g, s, t1, t2):
    # d DD / d T = (g T - L) / (2 s T^1.5), L = ln(V/DP). g T - L is linear in T, so its sign
    # on [T1, T2] is fixed when it has one sign at both ends: PD rises with T where g T < L and
    # falls where g T > L. (Not "PD always rises with the horizon".)
    t1, t2 = sorted((t1, t2))
    leverage = math.log(v / dp)
    ends = (g * t1 - leverage, g * t2 - leverage)
    assume(max(ends) < -1e-9 or min(ends) > 1e-9)

    def pd(t):
        return balance_sheet_pd(
            asset_value=v,
            asset_growth=g,
            asset_volatility=s,
            short_term_liabilities=dp,
            long_term_liabilities=0.0,
            horizon_years=t,
        ).pd

    if max(ends) < 0:
        assert pd(t1) <= pd(t2) + 1e-15
    else:
        assert pd(t1) >= pd(t2) - 1e-15


@settings(max_examples=80, deadline=None)
@given(v=positive, dp=positive, g=st.floats(-0.5, 0.5), t=st.floats(0.1, 10))
def test_pd_against_volatility_follows_the_sign_of_the_numerator(v, dp, g, t):
    # With the log drift g held fixed, d DD / d s = -(L + g T) / (s^2 sqrt T): PD rises with s
    # exactly when L + g T > 0 (e.g. g >= 0 and V > DP), and falls when L + g T < 0.
    numerator = math.log(v / dp) + g * t
    assume(abs(numerator) > 1e-9)
    _, _, pd = balance_sheet_pd_grid(
        asset_value=v,
        asset_growth=g,
        short_term_liabilities=dp,
        long_term_liabilities=0.0,
        short_term_share=1.0,
        long_term_shares=[0.0],
        asset_volatilities=np.linspace(0.02, 2, 25),
        horizon_years=t,
    )
    steps = np.diff(pd[:, 0])
    assert np.all(steps >= -1e-15) if numerator > 0 else np.all(steps <= 1e-15)


@settings(max_examples=25, deadline=None)
@given(c1=share, c2=share)
def test_el_rises_with_ccf(c1, c2):
    c1, c2 = sorted((c1, c2))
    el = [evaluate(apply_overrides(CASE, {"facilities.*.ccf": c}, where="t")).total.expected_loss for c in (c1, c2)]
    assert el[0] <= el[1] * (1 + 1e-12)


@settings(max_examples=25, deadline=None)
@given(u1=st.floats(0, 1), u2=st.floats(0, 1))
def test_el_falls_with_recovery_mean(u1, u2):
    low, high = feasible_recovery_means(std=0.22, upper=1.0)  # TL-A's law
    m1, m2 = sorted(low + u * (high - low) for u in (u1, u2))
    el = [
        evaluate(apply_overrides(CASE, {"facilities.TL-A.recovery.mean": m}, where="t")).total.expected_loss
        for m in (m1, m2)
    ]
    assert el[0] >= el[1] * (1 - 1e-12)


# --------------------------------------------------------------------------- one-way table


def test_rows_cover_every_assumption_sorted_by_el_swing():
    assert set(ROWS) == set(ASSUMPTIONS)
    swings = [row.el_swing for row in ONE_WAY.rows]
    assert swings == sorted(swings, reverse=True)
    for row in ONE_WAY.rows:
        assert row.el_swing == abs(row.el_high - row.el_low)
        assert row.pd_base == BASE.pd.pd and row.el_base == BASE.total.expected_loss


CASE_LEVEL = [
    ("short_term_share", lambda d, v: d["pd"]["default_point"].update(short_term_share=v)),
    ("long_term_share", lambda d, v: d["pd"]["default_point"].update(long_term_share=v)),
    ("asset_growth", lambda d, v: d["pd"].update(asset_growth=v)),
    ("asset_volatility", lambda d, v: d["pd"].update(asset_volatility=v)),
    ("horizon_years", lambda d, v: d["pd"].update(horizon_years=v)),
]


@pytest.mark.parametrize("name, edit", CASE_LEVEL, ids=[c[0] for c in CASE_LEVEL])
def test_case_level_rows_equal_evaluate_of_hand_edited_cases(name, edit):
    row = ROWS[name]
    step = getattr(CASE.sensitivity.steps, name)
    assert row.low_value == max(row.base_value - step, 0.0 if "share" in name else -1.0)
    assert row.high_value == min(row.base_value + step, 1.0 if "share" in name else 30.0)
    for value, pd, el in ((row.low_value, row.pd_low, row.el_low), (row.high_value, row.pd_high, row.el_high)):
        hand = evaluate(_edited(lambda d: edit(d, value)))
        assert (pd, el) == (hand.pd.pd, hand.total.expected_loss)


def test_estimated_growth_and_volatility_are_moved_around_the_estimate():
    assert CASE.pd.asset_growth is None and CASE.pd.asset_volatility is None
    assert ROWS["asset_growth"].base_value == BASE.trend.growth_estimate
    assert ROWS["asset_volatility"].base_value == BASE.trend.volatility_estimate
    assert "estimate" in ROWS["asset_growth"].note


def test_share_at_its_bound_is_clipped_not_exceeded():
    row = ROWS["short_term_share"]
    assert row.base_value == 1.0 and row.high_value == 1.0 and row.clipped
    assert row.pd_high == BASE.pd.pd and "kept within" in row.note


def test_ccf_row_equals_hand_edited_cases():
    row = ROWS["ccf"]
    step = CASE.sensitivity.steps.ccf
    for side in ("low", "high"):

        def edit(d):
            for f, r in zip(d["facilities"], BASE.facilities):
                f["ccf"] = min(1.0, max(0.0, r.ccf - step if side == "low" else r.ccf + step))

        hand = evaluate(_edited(edit))
        assert getattr(row, f"el_{side}") == hand.total.expected_loss
    assert [s.base_value for s in row.facilities] == [f.ccf for f in BASE.facilities]
    assert {s.facility_id for s in row.facilities if s.clipped} == {"NOTE-29", "GTE-SF"}


def test_recovery_row_equals_hand_edited_cases():
    row = ROWS["recovery_mean"]
    step = CASE.sensitivity.steps.recovery_mean
    for side, sign in (("low", -1), ("high", 1)):

        def edit(d):
            for f, r in zip(d["facilities"], BASE.facilities):
                f["recovery"] = {
                    "mean": r.recovery_mean + sign * step,
                    "std": r.recovery_std,
                    "upper": r.recovery_upper,
                }

        hand = evaluate(_edited(edit))
        assert math.isclose(getattr(row, f"el_{side}"), hand.total.expected_loss, rel_tol=1e-12)
    assert "no recovery block on RCF-1, GTE-SF, LC-IMP" in row.note


def test_directions_on_the_sample():
    # V > DP and g > 0 on the sample with g T < ln(V/DP) for T <= 1.5, so PD rises with both
    # shares, volatility and horizon and falls with growth; EL follows CCF up, recovery down.
    for name in ("short_term_share", "long_term_share", "asset_volatility", "horizon_years"):
        assert ROWS[name].pd_low <= ROWS[name].pd_base <= ROWS[name].pd_high
    assert ROWS["asset_growth"].pd_low > ROWS["asset_growth"].pd_high
    assert ROWS["ccf"].el_low < ROWS["ccf"].el_high
    assert ROWS["recovery_mean"].el_low > ROWS["recovery_mean"].el_high


def test_override_pins_pd_and_el_on_model_inputs():
    case = _edited(lambda d: d["pd"].update(override=0.02, override_reason="Sector outlook"))
    result = one_way_sensitivity(case)
    assert result.pd_overridden and result.notes
    rows = {r.assumption: r for r in result.rows}
    for name in ("short_term_share", "long_term_share", "asset_growth", "asset_volatility", "horizon_years"):
        assert rows[name].pd_low == rows[name].pd_high == 0.02
        assert rows[name].el_low == rows[name].el_high == result.el_base
        assert "override" in rows[name].note
    assert rows["long_term_share"].model_pd_low < rows["long_term_share"].model_pd_high
    assert rows["ccf"].el_low < rows["ccf"].el_high


def test_invalid_perturbed_case_is_reported_not_hidden():
    # Short-term share 0.10 - 0.10 is 0; with no long-term share the default point is 0.
    # Short-term liabilities at ten times assets keep the base PD well inside (0, 1).
    def edit(d):
        d["pd"]["default_point"].update(short_term_share=0.10, long_term_share=0.0)
        d["statements"][-1]["short_term_liabilities"] = 10 * d["statements"][-1]["total_assets"]

    case = _edited(edit)
    row = next(r for r in one_way_sensitivity(case).rows if r.assumption == "short_term_share")
    assert row.low_value == 0.0 and row.pd_low is None and row.el_low is None
    assert "does not validate" in row.note and "default point above 0" in row.note
    assert row.el_swing == abs(row.el_high - row.el_base)


def test_market_method_has_no_volatility_row():
    result = one_way_sensitivity(_market_case())
    names = {r.assumption for r in result.rows}
    assert "asset_volatility" not in names and "asset_growth" not in names
    assert any("solved from the equity market" in n for n in result.notes)


def test_one_way_is_fast():
    # Target: well under 100 ms on the sample (measured ~40 ms for 13 evaluations); the bound
    # leaves room for a slow test machine.
    start = time.perf_counter()
    result = one_way_sensitivity(CASE, BASE)
    assert time.perf_counter() - start < 0.3
    assert result.evaluations <= 2 * len(ASSUMPTIONS)


# --------------------------------------------------------------------------- recovery feasibility


@pytest.mark.parametrize("std, upper", [(0.25, 1.0), (0.18, 0.9), (0.05, 0.5), (0.0, 1.0)])
def test_feasible_recovery_means_bound_a_beta_law(std, upper):
    low, high = feasible_recovery_means(std=std, upper=upper)
    for mean in (low, high):
        # The moment fit (design notes, section 4) must give a beta law whose scaled std is std:
        # scipy.stats.beta is the reference.
        m, v = mean / upper, (std / upper) ** 2
        if std == 0:
            continue
        k = m * (1 - m) / v - 1
        assert k > 0
        assert math.isclose(upper * stats.beta(m * k, (1 - m) * k).std(), std, rel_tol=1e-9)
        # ...and the case schema accepts it.
        parse_case(
            case_to_dict(CASE)
            | {
                "facilities": [
                    case_to_dict(CASE)["facilities"][0] | {"recovery": {"mean": mean, "std": std, "upper": upper}}
                ]
            }
        )
    assert 0 <= low <= high <= upper


def test_base_results_of_another_case_are_refused():
    other = evaluate(_edited(lambda d: d["pd"].update(horizon_years=2.0)))
    for function in (one_way_sensitivity, pd_grid):
        with pytest.raises(ValueError, match="base: got the results of a different case"):
            function(CASE, other)
