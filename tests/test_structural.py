"""Balance-sheet structural PD checked against independent computations with scipy.stats."""

from __future__ import annotations

import math

import numpy as np
import pytest
from obligor_memo.engine.structural import (
    balance_sheet_pd,
    constant_hazard_term_structure,
    default_point,
    distance_to_default,
    pd_from_distance,
    structural_term_structure,
)
from scipy import stats

# (V, g, s, STL, LTL, a, b, T): a spread of balance sheets from very safe to distressed.
CASES = [
    (461.177e6, 0.0388, 0.1264, 263.194e6, 141.72e6, 1.0, 0.5, 1.0),
    (120.0, 0.05, 0.12, 80.0, 30.0, 1.0, 0.5, 1.0),
    (100.0, -0.10, 0.30, 70.0, 40.0, 1.0, 0.5, 2.0),
    (100.0, 0.02, 0.25, 60.0, 60.0, 1.0, 1.0, 0.5),
    (1e9, 0.0, 0.05, 1e8, 2e8, 0.8, 0.3, 5.0),
]


@pytest.mark.parametrize(
    ("stl", "ltl", "a", "b", "expected"),
    [
        # 100 % of short-term plus 50 % of long-term liabilities: common practice.
        (263.194e6, 141.72e6, 1.0, 0.5, 263.194e6 + 70.86e6),
        (80.0, 30.0, 1.0, 0.5, 95.0),
        (80.0, 30.0, 1.0, 1.0, 110.0),
        (80.0, 30.0, 0.0, 0.0, 0.0),
    ],
)
def test_default_point(stl, ltl, a, b, expected) -> None:
    assert default_point(
        short_term_liabilities=stl, long_term_liabilities=ltl, short_term_share=a, long_term_share=b
    ) == pytest.approx(expected, rel=1e-15)


def test_default_point_defaults_are_one_and_a_half() -> None:
    assert default_point(short_term_liabilities=80.0, long_term_liabilities=30.0) == 95.0


@pytest.mark.parametrize("case", CASES)
def test_pd_equals_lognormal_probability_of_ending_below_the_default_point(case) -> None:
    v, g, s, stl, ltl, a, b, t = case
    result = balance_sheet_pd(
        asset_value=v,
        asset_growth=g,
        asset_volatility=s,
        short_term_liabilities=stl,
        long_term_liabilities=ltl,
        short_term_share=a,
        long_term_share=b,
        horizon_years=t,
    )
    dp = a * stl + b * ltl
    # Independent route: ln V_T ~ N(ln V + (mu - s^2/2) T, s^2 T) with mu = g + s^2/2, so V_T is
    # lognormal with median V e^{gT}; PD = P(V_T < DP) from scipy.stats.lognorm.
    pd_lognormal = stats.lognorm(s=s * math.sqrt(t), scale=v * math.exp(g * t)).cdf(dp)
    dd = (math.log(v / dp) + g * t) / (s * math.sqrt(t))
    assert result.default_point == pytest.approx(dp, rel=1e-15)
    assert result.asset_return == pytest.approx(g + s**2 / 2, rel=1e-15)
    assert result.distance_to_default == pytest.approx(dd, rel=1e-12)
    # Tolerance: both are one normal CDF evaluation; 1e-9 relative allows for the different paths.
    assert result.pd == pytest.approx(stats.norm.cdf(-dd), rel=1e-9, abs=1e-300)
    assert result.pd == pytest.approx(pd_lognormal, rel=1e-9, abs=1e-300)


def test_distance_to_default_uses_mu_minus_half_variance() -> None:
    # DD = (ln(V/DP) + (mu - s^2/2) T) / (s sqrt T) (Merton 1974; DESIGN.md section 4).
    v, dp, mu, s, t = 150.0, 100.0, 0.08, 0.2, 2.0
    expected = (math.log(1.5) + (0.08 - 0.02) * 2.0) / (0.2 * math.sqrt(2.0))
    assert distance_to_default(
        asset_value=v, default_point=dp, asset_return=mu, asset_volatility=s, horizon_years=t
    ) == pytest.approx(expected, rel=1e-13)


def test_distance_to_default_broadcasts() -> None:
    values = np.array([90.0, 120.0, 200.0])
    dd = distance_to_default(
        asset_value=values, default_point=100.0, asset_return=0.05, asset_volatility=0.2, horizon_years=1.0
    )
    expected = (np.log(values / 100.0) + (0.05 - 0.02)) / 0.2
    # ln V - ln DP (kept finite when V/DP underflows) and ln(V/DP) differ in the last bits.
    np.testing.assert_allclose(dd, expected, rtol=1e-13)
    np.testing.assert_allclose(pd_from_distance(dd), stats.norm.cdf(-expected), rtol=1e-12)


def test_pd_from_distance_matches_the_normal_table() -> None:
    # Standard normal table values (any statistics text): N(-1.645) = 0.05, N(-2.326) = 0.01.
    assert pd_from_distance(1.6448536269514722) == pytest.approx(0.05, rel=1e-12)
    assert pd_from_distance(2.3263478740408408) == pytest.approx(0.01, rel=1e-12)
    assert pd_from_distance(0.0) == 0.5


@pytest.mark.parametrize(
    ("kwargs", "fragment"),
    [
        ({"asset_value": 0.0}, "above 0"),
        ({"default_point": -1.0}, "above 0"),
        ({"asset_volatility": 0.0}, "above 0"),
        ({"horizon_years": 0.0}, "above 0"),
    ],
)
def test_distance_to_default_refuses_bad_parameters(kwargs, fragment) -> None:
    arguments = {
        "asset_value": 100.0,
        "default_point": 80.0,
        "asset_return": 0.05,
        "asset_volatility": 0.2,
        "horizon_years": 1.0,
        **kwargs,
    }
    with pytest.raises(ValueError, match=fragment):
        distance_to_default(**arguments)


@pytest.mark.parametrize(
    ("kwargs", "fragment"),
    [
        ({"short_term_share": 1.5}, "pd.default_point.short_term_share: got 1.5; allowed: a number from 0 to 1"),
        ({"long_term_share": -0.1}, "pd.default_point.long_term_share: got -0.1; allowed: a number from 0 to 1"),
        ({"short_term_share": 0.0, "long_term_share": 0.0}, "pd.default_point: got 0.0"),
    ],
)
def test_balance_sheet_pd_names_a_bad_default_point(kwargs, fragment) -> None:
    with pytest.raises(ValueError) as caught:
        balance_sheet_pd(
            asset_value=100.0,
            asset_growth=0.0,
            asset_volatility=0.2,
            short_term_liabilities=60.0,
            long_term_liabilities=20.0,
            **kwargs,
        )
    assert fragment in str(caught.value)


def test_structural_term_structure_is_the_cumulative_lognormal_probability() -> None:
    v, dp, g, s = 120.0, 95.0, 0.03, 0.15
    ts = structural_term_structure(
        asset_value=v, default_point=dp, log_drift=g, asset_volatility=s, years=5, basis="test"
    )
    t = np.arange(1, 6)
    expected = stats.lognorm(s=s * np.sqrt(t), scale=v * np.exp(g * t)).cdf(dp)
    # Held monotone: a cumulative PD cannot fall.
    np.testing.assert_allclose(ts.cumulative, np.maximum.accumulate(expected), rtol=1e-9)
    np.testing.assert_allclose(np.cumsum(ts.marginal), ts.cumulative, rtol=1e-12)
    assert ts.cumulative[0] == pytest.approx(
        balance_sheet_pd(
            asset_value=v, asset_growth=g, asset_volatility=s, short_term_liabilities=dp, long_term_liabilities=0.0
        ).pd,
        rel=1e-12,
    )
    survival = 1 - np.concatenate([[0.0], ts.cumulative[:-1]])
    np.testing.assert_allclose(ts.conditional, np.array(ts.marginal) / survival, rtol=1e-12)


def test_constant_hazard_term_structure_reproduces_pd_at_the_horizon() -> None:
    ts = constant_hazard_term_structure(pd=0.02, horizon_years=1.0, years=4, basis="test")
    # Constant annual hazard: survival (1 - PD)^t (common practice for extending a one-year PD).
    np.testing.assert_allclose(ts.cumulative, 1 - 0.98 ** np.arange(1, 5), rtol=1e-12)
    np.testing.assert_allclose(ts.conditional, [0.02] * 4, rtol=1e-12)
    two_year = constant_hazard_term_structure(pd=0.04, horizon_years=2.0, years=2, basis="test")
    assert two_year.cumulative[1] == pytest.approx(0.04, rel=1e-12)
