"""Checks of engine.pricing against a published RAROC example and a root finder."""

from __future__ import annotations

import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from obligor_memo.engine.pricing import PricingResult, RarocResult, minimum_income_rate, price_borrower, raroc
from scipy.optimize import brentq

# Crouhy, Galai and Mark, "Risk Management" (McGraw-Hill, 2001), RAROC worked
# example, recalled from memory: loan rate 4 %, funding 1.5 %, expected loss 1 %,
# operating cost 1 %, capital 8 % of the loan invested at 3 % -> RAROC 9.25 %.
CGM_EXAMPLE = dict(
    funding_cost_rate=0.015,
    operating_cost_rate=0.01,
    expected_loss_rate=0.01,
    capital_rate=0.08,
    capital_return_rate=0.03,
)
CGM_INCOME_RATE = 0.04
CGM_RAROC = 0.0925
# Tolerance: the example is exact decimal arithmetic; 1e-12 only absorbs binary rounding.
EXACT = 1e-12


def test_crouhy_galai_mark_example_per_unit() -> None:
    result = raroc(income_rate=CGM_INCOME_RATE, **CGM_EXAMPLE)
    assert isinstance(result, RarocResult)
    assert result.raroc == pytest.approx(CGM_RAROC, abs=EXACT)
    # (4 - 1.5 - 1 - 1 + 8 x 3 %) / 8: the capital earns 0.24 of the 0.74 numerator
    assert result.capital_benefit_rate == pytest.approx(0.0024, abs=EXACT)
    assert result.risk_adjusted_return_rate == pytest.approx(0.0074, abs=EXACT)


@pytest.mark.parametrize("exposure", [100.0, 2.5e6, 7.0e9])  # RAROC is a ratio: the size of the loan cannot matter
def test_crouhy_galai_mark_example_in_amounts(exposure: float) -> None:
    # The 4 % loan rate split into a 1.5 % base (matching the funding cost) and a 2.5 % spread.
    result = price_borrower(
        exposure=exposure,
        proposed_spread=0.025,
        fee_rate=0.0,
        base_rate=0.015,
        funding_spread=0.0,
        operating_cost_rate=0.01,
        expected_loss=0.01 * exposure,
        capital=0.08 * exposure,
        capital_return_rate=0.03,
        hurdle_rate=0.15,
    )
    assert isinstance(result, PricingResult)
    assert result.raroc == pytest.approx(CGM_RAROC, abs=EXACT)
    assert result.income == pytest.approx(0.04 * exposure, rel=EXACT)
    assert result.funding_cost == pytest.approx(0.015 * exposure, rel=EXACT)
    # A 15 % hurdle needs (0.15 - 0.0925) x 8 % = 0.46 % more spread.
    assert result.spread_shortfall == pytest.approx(0.0046, abs=EXACT)
    assert result.meets_hurdle is False


def test_minimum_income_at_the_example_raroc_is_the_example_loan_rate() -> None:
    assert minimum_income_rate(hurdle_rate=CGM_RAROC, **CGM_EXAMPLE) == pytest.approx(CGM_INCOME_RATE, abs=EXACT)


def test_hurdle_equal_to_capital_return_needs_only_termsand_expected_loss() -> None:
    # Common practice: if shareholders ask no more than the risk-free return the
    # capital already earns, the loan need only cover funding, operating cost and EL.
    minimum = minimum_income_rate(hurdle_rate=0.03, **CGM_EXAMPLE)
    assert minimum == pytest.approx(0.015 + 0.01 + 0.01, abs=EXACT)


rates = st.floats(min_value=-0.02, max_value=0.10)
costs = st.floats(min_value=0.0, max_value=0.05)
capitals = st.floats(min_value=0.005, max_value=0.5)
hurdles = st.floats(min_value=0.0, max_value=0.4)


@settings(max_examples=100, deadline=None)
@given(hurdle=hurdles, funding=rates, operating=costs, expected_loss=costs, capital=capitals, capital_return=rates)
def test_minimum_income_round_trip_and_root_finder(
    hurdle: float, funding: float, operating: float, expected_loss: float, capital: float, capital_return: float
) -> None:
    terms = dict(
        funding_cost_rate=funding,
        operating_cost_rate=operating,
        expected_loss_rate=expected_loss,
        capital_rate=capital,
        capital_return_rate=capital_return,
    )
    closed_form = minimum_income_rate(hurdle_rate=hurdle, **terms)
    assume(-1.0 <= closed_form <= 1.0)  # income must stay inside its validated range
    assert raroc(income_rate=closed_form, **terms).raroc == pytest.approx(hurdle, abs=1e-9)
    root = brentq(lambda income: raroc(income_rate=income, **terms).raroc - hurdle, -1.0, 1.0, xtol=1e-14)
    # brentq's xtol plus the rounding of raroc near the root, scaled by 1/capital
    assert closed_form == pytest.approx(root, abs=1e-11)


def _proposal(**override: float) -> dict:
    base = dict(
        exposure=5.0e6,
        proposed_spread=0.02,
        fee_rate=0.002,
        base_rate=0.03,
        funding_spread=0.004,
        operating_cost_rate=0.006,
        expected_loss=20_000.0,
        capital=400_000.0,
        capital_return_rate=0.03,
        hurdle_rate=0.12,
    )
    return base | override


@settings(max_examples=100, deadline=None)
@given(
    base_rate=rates,
    fee=st.floats(min_value=0.0, max_value=0.02),
    funding_spread=st.floats(min_value=0.0, max_value=0.03),
    el_share=st.floats(min_value=0.0, max_value=0.05),
    capital_share=capitals,
    hurdle=hurdles,
)
def test_raroc_at_minimum_spread_equals_hurdle(
    base_rate: float, fee: float, funding_spread: float, el_share: float, capital_share: float, hurdle: float
) -> None:
    exposure = 1.0e6
    common = _proposal(
        exposure=exposure,
        base_rate=base_rate,
        fee_rate=fee,
        funding_spread=funding_spread,
        expected_loss=el_share * exposure,
        capital=capital_share * exposure,
        hurdle_rate=hurdle,
    )
    first = price_borrower(**common)
    assume(-1.0 <= first.minimum_spread <= 1.0)
    at_minimum = price_borrower(**(common | dict(proposed_spread=first.minimum_spread)))
    assert at_minimum.raroc == pytest.approx(hurdle, abs=1e-9)
    assert at_minimum.spread_shortfall == pytest.approx(0.0, abs=1e-12)
    # The amounts function must agree with the per-unit one.
    per_unit = raroc(
        income_rate=base_rate + common["proposed_spread"] + fee,
        funding_cost_rate=base_rate + funding_spread,
        operating_cost_rate=common["operating_cost_rate"],
        expected_loss_rate=el_share,
        capital_rate=capital_share,
        capital_return_rate=common["capital_return_rate"],
    )
    assert first.raroc == pytest.approx(per_unit.raroc, rel=1e-9, abs=1e-9)
    if abs(first.raroc - hurdle) > 1e-9:  # away from the boundary, where rounding could go either way
        assert first.meets_hurdle is (first.raroc > hurdle)


@settings(max_examples=100, deadline=None)
@given(spread=st.floats(min_value=-0.01, max_value=0.08), extra=st.floats(min_value=1e-5, max_value=0.05))
def test_raroc_rises_with_spread(spread: float, extra: float) -> None:
    low = price_borrower(**_proposal(proposed_spread=spread))
    high = price_borrower(**_proposal(proposed_spread=spread + extra))
    assert high.raroc > low.raroc
    assert high.spread_shortfall < low.spread_shortfall
    assert high.minimum_spread == pytest.approx(low.minimum_spread, abs=1e-15)  # the minimum ignores the offer


@settings(max_examples=100, deadline=None)
@given(expected_loss=st.floats(min_value=0.0, max_value=0.05), extra=st.floats(min_value=1e-5, max_value=0.05))
def test_raroc_falls_with_expected_loss(expected_loss: float, extra: float) -> None:
    low_loss = raroc(income_rate=0.06, **(CGM_EXAMPLE | dict(expected_loss_rate=expected_loss)))
    high_loss = raroc(income_rate=0.06, **(CGM_EXAMPLE | dict(expected_loss_rate=expected_loss + extra)))
    assert high_loss.raroc < low_loss.raroc
    exposure = 5.0e6
    low_amount = price_borrower(**_proposal(expected_loss=expected_loss * exposure))
    high_amount = price_borrower(**_proposal(expected_loss=(expected_loss + extra) * exposure))
    assert high_amount.raroc < low_amount.raroc


@settings(max_examples=100, deadline=None)
@given(funding=st.floats(min_value=-0.01, max_value=0.08), extra=st.floats(min_value=1e-5, max_value=0.05))
def test_raroc_falls_with_funding_cost(funding: float, extra: float) -> None:
    cheap = raroc(income_rate=0.06, **(CGM_EXAMPLE | dict(funding_cost_rate=funding)))
    dear = raroc(income_rate=0.06, **(CGM_EXAMPLE | dict(funding_cost_rate=funding + extra)))
    assert dear.raroc < cheap.raroc
    cheap_amount = price_borrower(**_proposal(funding_spread=funding))
    dear_amount = price_borrower(**_proposal(funding_spread=funding + extra))
    assert dear_amount.raroc < cheap_amount.raroc


def test_cushion_above_hurdle_is_negative_shortfall() -> None:
    result = price_borrower(**_proposal(proposed_spread=0.05))
    assert result.raroc > result.hurdle_rate
    assert result.spread_shortfall < 0.0
    assert result.meets_hurdle is True


@pytest.mark.parametrize("capital", [0.0, -1000.0])
def test_non_positive_capital_is_rejected_with_the_basis_named(capital: float) -> None:
    with pytest.raises(ValueError, match=r"capital = .* RAROC .* undefined"):
        price_borrower(**_proposal(capital=capital))
    with pytest.raises(ValueError, match=r"capital_rate = .* RAROC .* undefined"):
        raroc(income_rate=0.04, **(CGM_EXAMPLE | dict(capital_rate=capital)))
    with pytest.raises(ValueError, match=r"capital_rate = .* RAROC .* undefined"):
        minimum_income_rate(hurdle_rate=0.1, **(CGM_EXAMPLE | dict(capital_rate=capital)))


@pytest.mark.parametrize(
    ("override", "message"),
    [
        (dict(exposure=0.0), r"exposure = 0\.0 is outside the allowed range \(0, inf\]"),
        (dict(hurdle_rate=15.0), r"hurdle_rate = 15\.0 is outside the allowed range \[0, 1\]"),  # 15 meant as 15 %
        (dict(proposed_spread=2.5), r"proposed_spread = 2\.5 is outside the allowed range \[-1, 1\]"),
        (dict(operating_cost_rate=-0.01), r"operating_cost_rate = -0\.01 is outside .*\[0, 1\]"),
        (dict(expected_loss=float("nan")), r"expected_loss = nan is outside"),
        (dict(capital=6.0e6), r"capital = 6000000\.0 is outside the allowed range \(0, 5e\+06\]"),
        (dict(fee_rate="two"), r"fee_rate = 'two' is not a number"),
    ],
)
def test_bad_arguments_are_named(override: dict, message: str) -> None:
    with pytest.raises(ValueError, match=message):
        price_borrower(**_proposal(**override))
