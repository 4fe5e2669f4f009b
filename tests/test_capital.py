"""Checks of engine.capital against published risk weights and independent computations."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from obligor_memo.engine.capital import (
    BASEL_II_PD_FLOOR,
    BASEL_SCALING_FACTOR,
    IrbCapital,
    irb_corporate_capital,
)
from scipy.optimize import brentq
from scipy.stats import norm

# Basel II (BCBS, June 2006, "International Convergence of Capital Measurement and
# Capital Standards: A Revised Framework - Comprehensive Version"), Annex 5,
# "Illustrative IRB Risk Weights for UL", corporate exposures, LGD 45 %, M 2.5 years,
# no 1.06 factor, in percent. Columns: turnover EUR 50 million (no firm-size
# adjustment) and EUR 5 million (full adjustment).
# Rows 0.03 % to 3.00 % were recalled from memory and then checked against a
# reproduction of the Annex 5 table; that check corrected the EUR 5 million value
# at PD 0.05 % from a recalled 15.33 to the printed 15.39.
# Rows 4.00 % to 20.00 % are recalled from memory only.
ANNEX5_CORPORATE = [
    # (PD %, RW % turnover 50, RW % turnover 5)
    (0.03, 14.44, 11.30),
    (0.05, 19.65, 15.39),
    (0.10, 29.65, 23.30),
    (0.25, 49.47, 39.01),
    (0.40, 62.72, 49.49),
    (0.50, 69.61, 54.91),
    (0.75, 82.78, 65.14),
    (1.00, 92.32, 72.40),
    (1.30, 100.95, 78.77),
    (1.50, 105.59, 82.11),
    (2.00, 114.86, 88.55),
    (2.50, 122.16, 93.43),
    (3.00, 128.44, 97.58),
    (4.00, 139.58, 105.04),
    (5.00, 149.86, 112.27),
    (6.00, 159.61, 119.48),
    (10.00, 193.09, 146.51),
    (15.00, 221.54, 171.91),
    (20.00, 238.23, 188.42),
]

# The same illustrative table as revised for Basel III (December 2017 reforms),
# corporate exposures at LGD 40 % (the revised foundation LGD), M 2.5 years,
# starting at the 0.05 % floor; printed in the Saudi Central Bank rulebook,
# "Illustrative Risk Weights Calculated Under the IRB Approach", section 26, Table 1.
# Only the rows up to 1.30 % were read there.
BASEL3_CORPORATE_LGD40 = [
    (0.05, 17.47, 13.69),
    (0.10, 26.36, 20.71),
    (0.25, 43.97, 34.68),
    (0.40, 55.75, 43.99),
    (0.50, 61.88, 48.81),
    (0.75, 73.58, 57.91),
    (1.00, 82.06, 64.35),
    (1.30, 89.73, 70.02),
]

# Tolerance: one unit in the last printed place (0.01 percentage point). Rounding
# to two decimals accounts for 0.005; a few printed rows (PD 2 % and 5 %) sit
# about 0.006 from the exact formula, presumably from the precision of the
# original computation, so half a unit would be too tight.
PUBLISHED_TOLERANCE_PP = 0.01


def _risk_weight_percent(**kwargs: float) -> float:
    return 100.0 * irb_corporate_capital(**kwargs).risk_weight


@pytest.mark.parametrize(("pd_percent", "rw_sales_50", "rw_sales_5"), ANNEX5_CORPORATE)
def test_basel2_annex5_corporate_risk_weights(pd_percent: float, rw_sales_50: float, rw_sales_5: float) -> None:
    common = dict(pd=pd_percent / 100.0, lgd=0.45, maturity_years=2.5, pd_floor=0.0)
    assert _risk_weight_percent(**common) == pytest.approx(rw_sales_50, abs=PUBLISHED_TOLERANCE_PP)
    assert _risk_weight_percent(**common, annual_sales_eur_millions=50.0) == pytest.approx(
        rw_sales_50, abs=PUBLISHED_TOLERANCE_PP
    )
    assert _risk_weight_percent(**common, annual_sales_eur_millions=5.0) == pytest.approx(
        rw_sales_5, abs=PUBLISHED_TOLERANCE_PP
    )


@pytest.mark.parametrize(("pd_percent", "rw_sales_50", "rw_sales_5"), BASEL3_CORPORATE_LGD40)
def test_basel3_illustrative_corporate_risk_weights_lgd40(
    pd_percent: float, rw_sales_50: float, rw_sales_5: float
) -> None:
    common = dict(pd=pd_percent / 100.0, lgd=0.40, maturity_years=2.5)  # default 0.05 % floor never binds here
    assert _risk_weight_percent(**common) == pytest.approx(rw_sales_50, abs=PUBLISHED_TOLERANCE_PP)
    assert _risk_weight_percent(**common, annual_sales_eur_millions=5.0) == pytest.approx(
        rw_sales_5, abs=PUBLISHED_TOLERANCE_PP
    )


def test_default_floor_lifts_pd_to_five_basis_points() -> None:
    # CRE32.4 (Basel III) floor of 0.05 %: a 0.03 % PD takes the Annex 5 0.05 % row.
    result = irb_corporate_capital(pd=0.0003, lgd=0.45, maturity_years=2.5)
    assert result.floor_binds is True
    assert result.pd_used == 0.0005
    assert result.pd_input == 0.0003
    assert 100.0 * result.risk_weight == pytest.approx(19.65, abs=PUBLISHED_TOLERANCE_PP)
    # Basel II para 285 floor of 0.03 % does not bind at 0.03 %: Annex 5 0.03 % row.
    basel2 = irb_corporate_capital(pd=0.0003, lgd=0.45, maturity_years=2.5, pd_floor=BASEL_II_PD_FLOOR)
    assert basel2.floor_binds is False
    assert 100.0 * basel2.risk_weight == pytest.approx(14.44, abs=PUBLISHED_TOLERANCE_PP)


def test_scaling_factor_multiplies_risk_weight() -> None:
    # Basel II para 44: RWA for credit risk under IRB times 1.06; 1.00 % row of Annex 5.
    plain = irb_corporate_capital(pd=0.01, lgd=0.45, maturity_years=2.5)
    scaled = irb_corporate_capital(pd=0.01, lgd=0.45, maturity_years=2.5, scaling_factor=BASEL_SCALING_FACTOR)
    assert 100.0 * scaled.risk_weight == pytest.approx(1.06 * 92.32, abs=1.06 * PUBLISHED_TOLERANCE_PP)
    assert scaled.k == plain.k  # the factor scales RWA, not K
    # Basel II para 272: RWA = K x 12.5 x EAD.
    assert plain.risk_weight == pytest.approx(12.5 * plain.k, rel=1e-15)


@settings(max_examples=60, deadline=None)
@given(pd=st.floats(min_value=0.0003, max_value=0.999))
def test_maturity_adjustment_is_one_at_one_year(pd: float) -> None:
    # Algebra (common practice): (1 + (1 - 2.5) b) / (1 - 1.5 b) = 1 for any b.
    result = irb_corporate_capital(pd=pd, lgd=0.45, maturity_years=1.0, pd_floor=0.0)
    assert result.maturity_adjustment == pytest.approx(1.0, abs=1e-12)


def test_correlation_limits() -> None:
    # Basel II para 272: R falls from 0.24 (PD -> 0) to 0.12 (PD -> 1).
    for pd in (1e-4, 1e-5):
        result = irb_corporate_capital(pd=pd, lgd=0.45, maturity_years=2.5, pd_floor=0.0)
        # 0.24 - R = 0.12 w and w <= 50 PD / (1 - e^-50) for small PD
        assert 0.24 - 0.12 * 50.0 * pd / (1.0 - math.exp(-50.0)) <= result.correlation < 0.24
    at_one = irb_corporate_capital(pd=1.0, lgd=0.45, maturity_years=2.5)
    assert at_one.correlation == pytest.approx(0.12, abs=1e-15)
    # e^-50 PD is below 1e-10 from PD = 0.5 on: R equals 0.12 to that precision
    assert irb_corporate_capital(pd=0.5, lgd=0.45, maturity_years=2.5).correlation == pytest.approx(0.12, abs=1e-10)


@pytest.mark.parametrize(
    ("sales", "adjustment", "clamped"),
    [
        # Basel II para 273: 0.04 x (1 - (S - 5) / 45), S floored at EUR 5 million.
        (50.0, 0.0, False),  # upper end of the SME band: no adjustment
        (500.0, 0.0, False),  # large corporate: no adjustment
        (27.5, 0.02, False),  # midpoint of 5-50: half of 0.04 (linear in S)
        (5.0, 0.04, False),  # full adjustment
        (1.0, 0.04, True),  # below 5 counts as 5
    ],
)
def test_firm_size_adjustment(sales: float, adjustment: float, clamped: bool) -> None:
    result = irb_corporate_capital(pd=0.01, lgd=0.45, maturity_years=2.5, annual_sales_eur_millions=sales)
    assert result.firm_size_adjustment == pytest.approx(adjustment, abs=1e-15)
    assert result.correlation == pytest.approx(result.correlation_before_size_adjustment - adjustment, abs=1e-15)
    assert result.sales_clamped is clamped


def test_no_sales_means_no_adjustment() -> None:
    result = irb_corporate_capital(pd=0.01, lgd=0.45, maturity_years=2.5)
    assert result.firm_size_adjustment == 0.0
    assert result.annual_sales_input is None and result.annual_sales_used is None
    assert result.sales_clamped is False


@pytest.mark.parametrize("pd", [0.0005, 0.01, 0.2])
@pytest.mark.parametrize("correlation_sales", [None, 5.0])
def test_conditional_pd_is_vasicek_quantile(pd: float, correlation_sales: float | None) -> None:
    # Vasicek (2002, "Loan portfolio value", Risk): the default rate X of a large
    # portfolio has P(X <= x) = N((sqrt(1 - R) G(x) - G(PD)) / sqrt(R)). Its 0.999
    # quantile found by scipy's root finder must equal the closed form in para 272.
    result = irb_corporate_capital(
        pd=pd, lgd=0.45, maturity_years=2.5, annual_sales_eur_millions=correlation_sales, pd_floor=0.0
    )
    rho = result.correlation

    def vasicek_cdf_minus_q(x: float) -> float:
        return norm.cdf((math.sqrt(1.0 - rho) * norm.ppf(x) - norm.ppf(pd)) / math.sqrt(rho)) - 0.999

    quantile = brentq(vasicek_cdf_minus_q, 1e-12, 1.0 - 1e-12, xtol=1e-15, rtol=1e-13)
    assert result.conditional_pd == pytest.approx(quantile, rel=1e-9)  # root-finder tolerance
    assert result.k == pytest.approx(0.45 * (quantile - pd) * result.maturity_adjustment, rel=1e-9)


@settings(max_examples=80, deadline=None)
@given(
    pd_low=st.floats(min_value=0.0003, max_value=0.199),
    step=st.floats(min_value=1e-4, max_value=0.2),
    lgd=st.floats(min_value=0.05, max_value=1.0),
    maturity=st.floats(min_value=1.0, max_value=5.0),
    sales=st.one_of(st.none(), st.floats(min_value=5.0, max_value=50.0)),
)
def test_risk_weight_rises_with_pd_over_performing_range(
    pd_low: float, step: float, lgd: float, maturity: float, sales: float | None
) -> None:
    # Over the Annex 5 range (0.03 % to 20 %) the risk weight rises with PD, as the
    # table does; the curve peaks only near a PD of 27-34 % (EL is deducted).
    pd_high = min(pd_low + step, 0.20)
    common = dict(lgd=lgd, maturity_years=maturity, annual_sales_eur_millions=sales, pd_floor=0.0)
    low = irb_corporate_capital(pd=pd_low, **common).risk_weight
    high = irb_corporate_capital(pd=pd_high, **common).risk_weight
    assert high > low


@settings(max_examples=80, deadline=None)
@given(
    pd=st.floats(min_value=0.0003, max_value=0.5),
    maturity_low=st.floats(min_value=0.01, max_value=10.0),
    step=st.floats(min_value=1e-3, max_value=10.0),
)
def test_risk_weight_rises_with_maturity(pd: float, maturity_low: float, step: float) -> None:
    # b > 0, so K grows linearly in M between the 1- and 5-year bounds and is flat outside.
    maturity_high = maturity_low + step
    low = irb_corporate_capital(pd=pd, lgd=0.45, maturity_years=maturity_low, pd_floor=0.0)
    high = irb_corporate_capital(pd=pd, lgd=0.45, maturity_years=maturity_high, pd_floor=0.0)
    assert high.risk_weight >= low.risk_weight
    if low.maturity_used < high.maturity_used:
        assert high.risk_weight > low.risk_weight


@pytest.mark.parametrize(
    ("maturity", "used", "clamped"),
    [(0.25, 1.0, True), (1.0, 1.0, False), (3.0, 3.0, False), (5.0, 5.0, False), (7.0, 5.0, True)],
)
def test_maturity_clamp(maturity: float, used: float, clamped: bool) -> None:
    # Basel II para 320: M no less than one year and no greater than five years.
    result = irb_corporate_capital(pd=0.01, lgd=0.45, maturity_years=maturity)
    assert result.maturity_input == maturity
    assert result.maturity_used == used
    assert result.maturity_clamped is clamped


def test_defaulted_exposure_has_zero_k() -> None:
    # Basel II para 272: defaulted K = max(0, LGD - EL best estimate), 0 when LGD is that estimate.
    result = irb_corporate_capital(pd=1.0, lgd=0.45, maturity_years=2.5)
    assert result.defaulted is True
    assert result.k == 0.0 and result.risk_weight == 0.0


def test_low_confidence_floors_k_at_zero() -> None:
    # With PD 0.05 % and R about 0.237, G(q) must exceed about 0.855 for the
    # conditional PD to pass the PD; at q = 0.8 (G = 0.84) it does not.
    result = irb_corporate_capital(pd=0.0005, lgd=0.45, maturity_years=2.5, confidence=0.8)
    assert result.conditional_pd < result.pd_used
    assert result.k_floored is True and result.k == 0.0


def test_arrays_broadcast_and_match_scalar_calls() -> None:
    pds = np.array([0.0003, 0.01, 0.2, 1.0])
    maturities = np.array([[0.5], [2.5], [7.0]])
    many = irb_corporate_capital(pd=pds, lgd=0.45, maturity_years=maturities, annual_sales_eur_millions=20.0)
    assert isinstance(many, IrbCapital)
    assert many.risk_weight.shape == (3, 4)
    for row, maturity in enumerate(maturities[:, 0]):
        for column, pd in enumerate(pds):
            single = irb_corporate_capital(pd=pd, lgd=0.45, maturity_years=maturity, annual_sales_eur_millions=20.0)
            assert many.risk_weight[row, column] == pytest.approx(single.risk_weight, rel=1e-14)
            assert many.floor_binds[row, column] == single.floor_binds
            assert many.maturity_clamped[row, column] == single.maturity_clamped
    with pytest.raises(ValueError):
        many.risk_weight[0, 0] = 0.0  # results are frozen, arrays included


def test_scalar_inputs_give_plain_python_numbers() -> None:
    result = irb_corporate_capital(pd=0.01, lgd=0.45, maturity_years=2.5)
    assert type(result.risk_weight) is float and type(result.floor_binds) is bool


@pytest.mark.parametrize(
    ("override", "message"),
    [
        (dict(pd=0.0), r"pd = 0\.0 is outside the allowed range \(0, 1\]"),
        (dict(pd=1.5), r"pd = 1\.5 is outside the allowed range \(0, 1\]"),
        (dict(pd=float("nan")), r"pd = nan is outside"),
        (dict(pd=[0.01, -0.1]), r"pd = -0\.1 \(element 1\) is outside"),
        (dict(pd=1e-7, pd_floor=0.0), r"pd = 1e-07 .*allowed range \[2\.93e-06, 1\]"),
        (dict(lgd=-0.1), r"lgd = -0\.1 is outside the allowed range \[0, 1\]"),
        (dict(lgd=45.0), r"lgd = 45\.0 is outside the allowed range \[0, 1\]"),
        (dict(maturity_years=0.0), r"maturity_years = 0\.0 is outside the allowed range \(0, inf\)"),
        (dict(annual_sales_eur_millions=-3.0), r"annual_sales_eur_millions = -3\.0 is outside .*\(0, inf\)"),
        (dict(pd_floor=0.03), r"pd_floor = 0\.03 is outside the allowed range \[0, 0\.01\]"),
        (dict(scaling_factor=1.25), r"scaling_factor = 1\.25 is outside the allowed range \[1, 1\.1\]"),
        (dict(confidence=0.5), r"confidence = 0\.5 is outside the allowed range \(0\.5, 1\)"),
        (dict(confidence=99.9), r"confidence = 99\.9 is outside the allowed range \(0\.5, 1\)"),
    ],
)
def test_bad_arguments_are_named(override: dict, message: str) -> None:
    arguments = dict(pd=0.01, lgd=0.45, maturity_years=2.5) | override
    with pytest.raises(ValueError, match=message):
        irb_corporate_capital(**arguments)
