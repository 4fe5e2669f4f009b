"""Properties that must hold for any input (hypothesis)."""

from __future__ import annotations

import json
import math
import string

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from obligor_memo.engine.case import case_to_dict, parse_case
from obligor_memo.engine.exposure import exposure_at_default
from obligor_memo.engine.loss import expected_loss
from obligor_memo.engine.recovery import largest_feasible_std, recovery_law
from obligor_memo.engine.structural import balance_sheet_pd
from scipy import special

positive = st.floats(min_value=1.0, max_value=1e12, allow_nan=False)
growth = st.floats(min_value=-0.5, max_value=0.5)
volatility = st.floats(min_value=0.01, max_value=1.5)
horizon = st.floats(min_value=0.25, max_value=10.0)


def _pd(v, g, s, dp, t):
    return balance_sheet_pd(
        asset_value=v,
        asset_growth=g,
        asset_volatility=s,
        short_term_liabilities=dp,
        long_term_liabilities=0.0,
        horizon_years=t,
    )


@settings(max_examples=300, deadline=None)
@given(v=positive, rise=st.floats(min_value=1e-6, max_value=10.0), dp=positive, g=growth, s=volatility, t=horizon)
def test_pd_falls_as_assets_rise(v, rise, dp, g, s, t) -> None:
    low, high = _pd(v, g, s, dp, t), _pd(v * (1 + rise), g, s, dp, t)
    assert high.distance_to_default > low.distance_to_default
    assert high.pd <= low.pd


@settings(max_examples=300, deadline=None)
@given(v=positive, dp=positive, rise=st.floats(min_value=1e-6, max_value=10.0), g=growth, s=volatility, t=horizon)
def test_pd_rises_with_the_default_point(v, dp, rise, g, s, t) -> None:
    low, high = _pd(v, g, s, dp, t), _pd(v, g, s, dp * (1 + rise), t)
    assert high.distance_to_default < low.distance_to_default
    assert high.pd >= low.pd
    assert 0.0 <= low.pd <= 1.0


@settings(max_examples=300, deadline=None)
@given(
    drawn=st.floats(0, 1e12), committed=st.floats(0, 1e12), ccf=st.floats(0, 1), pd=st.floats(0, 1), lgd=st.floats(0, 1)
)
def test_el_never_exceeds_ead(drawn, committed, ccf, pd, lgd) -> None:
    ead = exposure_at_default(drawn=drawn, committed=committed, ccf=ccf)
    assert drawn <= ead <= max(drawn, committed) * (1 + 1e-15)
    assert 0.0 <= expected_loss(ead=ead, pd=pd, lgd=lgd) <= ead


@st.composite
def feasible_recovery(draw):
    upper = draw(st.floats(min_value=0.05, max_value=1.0))
    mean = draw(st.floats(min_value=0.0, max_value=1.0)) * upper
    share = draw(st.one_of(st.just(0.0), st.floats(min_value=0.001, max_value=0.999)))
    std = share * largest_feasible_std(mean=mean, upper=upper)
    # The schema asks for std 0 (a fixed recovery) or at least 1e-6: smaller is rounding noise.
    return mean, (std if std >= 1e-6 else 0.0), upper


@settings(max_examples=300, deadline=None)
@given(
    feasible_recovery(),
    st.lists(st.one_of(st.floats(min_value=1e-12, max_value=1.0), st.just(0.0)), min_size=1, max_size=5),
)
def test_lgd_stays_within_one_minus_upper_and_one(moments, quantiles) -> None:
    mean, std, upper = moments
    law = recovery_law(mean=mean, std=std, upper=upper)
    tolerance = 1e-12  # rounding in mean / upper and in the incomplete-beta inverse
    assert 1 - upper - tolerance <= law.lgd <= 1 + tolerance
    for q in quantiles:
        lgd_at_q = 1 - float(law.ppf(q))
        assert 1 - upper - tolerance <= lgd_at_q <= 1 + tolerance


@pytest.mark.parametrize("q", [1e-200, 1e-308])
def test_recovery_quantile_far_in_the_tail_is_finite(q) -> None:
    # Found by the property above when quantiles went down to the smallest floats.
    law = recovery_law(mean=0.0625, std=0.030257682392245445)
    x = float(law.ppf(q))
    assert 0.0 <= x <= law.upper
    # Left-tail asymptote of the regularised incomplete beta function (Abramowitz and Stegun
    # 26.5.4, leading term): I_x(a, b) ~ x^a / (a B(a, b)) as x -> 0.
    asymptote = math.exp((math.log(q) + math.log(law.alpha) + special.betaln(law.alpha, law.beta)) / law.alpha)
    assert x == pytest.approx(asymptote, rel=1e-6)


# ----------------------------------------------------------------------------- case round trip

amounts = st.floats(min_value=0.0, max_value=1e15, allow_nan=False, allow_infinity=False)
fractions = st.floats(min_value=0.0, max_value=1.0)


@st.composite
def cases(draw):
    first_year = draw(st.integers(min_value=1900, max_value=2190))
    years = draw(st.integers(min_value=3, max_value=8))
    statements = [
        {
            "year": first_year + i,
            "total_assets": draw(st.floats(min_value=1e-3, max_value=1e15)),
            "short_term_liabilities": draw(st.floats(min_value=1.0, max_value=1e15)),
            "long_term_liabilities": draw(amounts),
        }
        for i in range(years)
    ]  # the last year stays within the schema's 2200
    statements = draw(st.permutations(statements))
    facilities = []
    for index in range(draw(st.integers(min_value=1, max_value=3))):
        facility = {
            "id": f"F{index}-" + draw(st.text(string.ascii_letters, max_size=5)),
            "kind": draw(st.sampled_from(["bond", "term_loan", "revolver", "guarantee", "letter_of_credit"])),
            "committed": draw(amounts),
            "drawn": draw(amounts),
            "ccf": draw(st.one_of(st.none(), fractions)),
            "seniority": draw(st.sampled_from(["senior_secured", "senior_unsecured", "subordinated"])),
            "maturity_years": draw(st.floats(min_value=0.01, max_value=50.0)),
        }
        if draw(st.booleans()):
            mean, std, upper = draw(feasible_recovery())
            facility["recovery"] = {"mean": mean, "std": std, "upper": upper}
        facilities.append(facility)
    data = {
        "borrower": {
            "name": draw(st.text(min_size=1, max_size=40)),
            "currency": draw(st.text(string.ascii_uppercase, min_size=3, max_size=3)),
        },
        "statements": statements,
        "facilities": facilities,
        "pd": {
            "horizon_years": draw(st.floats(min_value=0.1, max_value=30.0)),
            "default_point": {
                "short_term_share": draw(st.floats(min_value=0.01, max_value=1.0)),
                "long_term_share": draw(fractions),
            },
        },
        "memo": {"summary": draw(st.text(max_size=200))},
    }
    if draw(st.booleans()):
        data["pd"]["override"] = draw(st.floats(min_value=1e-9, max_value=1.0))
        data["pd"]["override_reason"] = "x" + draw(st.text(max_size=30))
    return data


@settings(max_examples=150, deadline=None)
@given(cases())
def test_case_json_case_round_trip_is_exact(data) -> None:
    case = parse_case(data)
    text = json.dumps(case_to_dict(case), allow_nan=False)
    again = parse_case(json.loads(text))
    assert again == case
    assert case_to_dict(again) == case_to_dict(case)
    assert all(math.isfinite(row.total_assets) for row in again.statements)
