"""Checks of engine.zscore against the published coefficients, zones and numpy."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from obligor_memo.engine.zscore import VARIANT_NAMES, altman_scores, altman_zone

# An invented borrower's statements [currency]: not a real company.
STATEMENTS = dict(
    total_assets=1_000_000.0,
    working_capital=150_000.0,
    retained_earnings=220_000.0,
    ebit=90_000.0,
    sales=1_300_000.0,
    market_equity=700_000.0,
    book_equity=400_000.0,
    total_liabilities=600_000.0,
)


def by_name(results):
    return {r.variant: r for r in results}


# Coefficients as published (recalled from memory; widely reprinted, e.g. Altman and
# Hotchkiss, Corporate Financial Distress and Bankruptcy, 3rd ed., 2006). Exact match:
# these are the published constants copied as printed, not computed values.
COEFFICIENTS = [
    # Altman (1968), Journal of Finance 23(4): 1.2, 1.4, 3.3, 0.6, 1.0 (ratios as fractions).
    ("Z (1968)", {"X1": 1.2, "X2": 1.4, "X3": 3.3, "X4": 0.6, "X5": 1.0}),
    # Altman (1983), Corporate Financial Distress, private-firm re-estimation.
    ("Z' (private firms)", {"X1": 0.717, "X2": 0.847, "X3": 3.107, "X4": 0.420, "X5": 0.998}),
    # Altman, Hartzell and Peck (1995), four-ratio model without sales/assets.
    ("Z'' (non-manufacturers)", {"X1": 6.56, "X2": 3.26, "X3": 6.72, "X4": 1.05}),
]

# Zone cut-offs (distress below, safe above), same sources, recalled from memory.
CUTOFFS = [
    ("Z (1968)", 1.81, 2.99),  # Altman (1968): zone of ignorance 1.81-2.99
    ("Z' (private firms)", 1.23, 2.90),  # Altman (1983)
    ("Z'' (non-manufacturers)", 1.10, 2.60),  # Altman, Hartzell and Peck (1995)
]

EQUITY_COLUMN = {
    "Z (1968)": "market_equity",
    "Z' (private firms)": "book_equity",
    "Z'' (non-manufacturers)": "book_equity",
}


def test_one_result_per_variant_in_order():
    results = altman_scores(**STATEMENTS)
    assert tuple(r.variant for r in results) == VARIANT_NAMES
    assert VARIANT_NAMES == tuple(name for name, _ in COEFFICIENTS)


@pytest.mark.parametrize("variant, coefficients", COEFFICIENTS)
def test_published_coefficients(variant, coefficients):
    assert dict(by_name(altman_scores(**STATEMENTS))[variant].coefficients) == coefficients


@pytest.mark.parametrize("variant, distress_below, safe_above", CUTOFFS)
def test_published_zone_cutoffs(variant, distress_below, safe_above):
    result = by_name(altman_scores(**STATEMENTS))[variant]
    assert dict(result.zone_cutoffs) == {"distress_below": distress_below, "safe_above": safe_above}


def test_1968_percent_form_is_equivalent():
    # The 1968 paper: 0.012 X1 + 0.014 X2 + 0.033 X3 + 0.006 X4 + 0.999 X5 with X1..X4 in
    # percent and X5 as a ratio. Same score up to the rounding of 0.999 to 1.0: 0.001 X5.
    ta = STATEMENTS["total_assets"]
    x = np.array(
        [
            STATEMENTS["working_capital"] / ta,
            STATEMENTS["retained_earnings"] / ta,
            STATEMENTS["ebit"] / ta,
            STATEMENTS["market_equity"] / STATEMENTS["total_liabilities"],
            STATEMENTS["sales"] / ta,
        ]
    )
    percent_form = np.dot([0.012, 0.014, 0.033, 0.006], 100.0 * x[:4]) + 0.999 * x[4]
    score = by_name(altman_scores(**STATEMENTS))["Z (1968)"].score
    assert score - percent_form == pytest.approx(0.001 * x[4], abs=1e-12)


@pytest.mark.parametrize("variant, coefficients", COEFFICIENTS)
def test_worked_example_is_numpy_dot_of_ratios_and_coefficients(variant, coefficients):
    # Independent computation: ratios by hand, score as numpy.dot with the published vector.
    s = STATEMENTS
    ta, tl = s["total_assets"], s["total_liabilities"]
    ratios = {
        "X1": s["working_capital"] / ta,  # 0.15
        "X2": s["retained_earnings"] / ta,  # 0.22
        "X3": s["ebit"] / ta,  # 0.09
        "X4": s[EQUITY_COLUMN[variant]] / tl,  # 7/6 (market) or 2/3 (book)
        "X5": s["sales"] / ta,  # 1.30
    }
    keys = list(coefficients)
    expected = float(np.dot([ratios[k] for k in keys], [coefficients[k] for k in keys]))
    result = by_name(altman_scores(**STATEMENTS))[variant]
    # 1e-12: summation order differs (fsum against numpy's dot), nothing else.
    assert result.score == pytest.approx(expected, rel=1e-12)
    for k in keys:
        assert result.components[k] == pytest.approx(ratios[k], rel=1e-15)
    assert result.missing == ()


def test_worked_example_zones_by_hand():
    # Z (1968) = 1.2*0.15 + 1.4*0.22 + 3.3*0.09 + 0.6*(7/6) + 1.0*1.3
    #          = 0.18 + 0.308 + 0.297 + 0.7 + 1.3 = 2.785 -> grey (1.81 <= 2.785 <= 2.99).
    # Z''      = 6.56*0.15 + 3.26*0.22 + 6.72*0.09 + 1.05*(2/3)
    #          = 0.984 + 0.7172 + 0.6048 + 0.7 = 3.006 -> safe (> 2.60).
    results = by_name(altman_scores(**STATEMENTS))
    assert results["Z (1968)"].score == pytest.approx(2.785, abs=1e-12)
    assert results["Z (1968)"].zone == "grey"
    assert results["Z'' (non-manufacturers)"].score == pytest.approx(3.006, abs=1e-12)
    assert results["Z'' (non-manufacturers)"].zone == "safe"


@pytest.mark.parametrize("variant, distress_below, safe_above", CUTOFFS)
def test_zone_boundaries_belong_to_the_grey_zone(variant, distress_below, safe_above):
    zone = lambda score: altman_zone(  # noqa: E731
        score=score, distress_below=distress_below, safe_above=safe_above
    )
    assert zone(distress_below) == "grey"
    assert zone(safe_above) == "grey"
    assert zone(math.nextafter(distress_below, -math.inf)) == "distress"
    assert zone(math.nextafter(safe_above, math.inf)) == "safe"
    assert zone(0.5 * (distress_below + safe_above)) == "grey"


def test_distressed_borrower_end_to_end():
    # Negative working capital, retained earnings, EBIT and book equity are allowed.
    results = altman_scores(
        total_assets=500.0,
        working_capital=-60.0,
        retained_earnings=-120.0,
        ebit=-15.0,
        sales=300.0,
        market_equity=40.0,
        book_equity=-20.0,
        total_liabilities=520.0,
    )
    assert all(r.zone == "distress" for r in results)
    assert all(r.score is not None and r.score < 1.10 for r in results)


def test_missing_columns_are_named_and_nothing_is_guessed():
    results = by_name(altman_scores(total_assets=100.0, working_capital=10.0, ebit=5.0, book_equity=30.0))
    z68 = results["Z (1968)"]
    assert z68.score is None and z68.zone is None
    assert set(z68.missing) == {"retained_earnings", "market_equity", "total_liabilities", "sales"}
    assert z68.components["X1"] == pytest.approx(0.10)
    assert z68.components["X3"] == pytest.approx(0.05)
    assert z68.components["X2"] is None and z68.components["X4"] is None
    z2 = results["Z'' (non-manufacturers)"]
    assert set(z2.missing) == {"retained_earnings", "total_liabilities"}
    assert "sales" not in z2.missing  # Z'' does not use sales
    assert "X5" not in z2.components


def test_variant_needing_only_book_equity_is_scored_without_market_equity():
    columns = dict(STATEMENTS)
    del columns["market_equity"]
    results = by_name(altman_scores(**columns))
    assert results["Z (1968)"].missing == ("market_equity",)
    assert results["Z' (private firms)"].score is not None
    assert results["Z'' (non-manufacturers)"].score is not None


POSITIVE_COLUMNS = [
    ("working_capital", "X1"),
    ("retained_earnings", "X2"),
    ("ebit", "X3"),
    ("market_equity", "X4"),
    ("book_equity", "X4"),
    ("sales", "X5"),
]


@settings(max_examples=200, deadline=None)
@given(
    column=st.sampled_from(POSITIVE_COLUMNS),
    total_assets=st.floats(min_value=1.0, max_value=1e9),
    shares=st.lists(st.floats(min_value=-1.0, max_value=3.0), min_size=7, max_size=7),
    step=st.floats(min_value=0.01, max_value=2.0),
)
def test_score_increases_with_every_ratio_of_positive_coefficient(column, total_assets, shares, step):
    names = [
        "working_capital",
        "retained_earnings",
        "ebit",
        "sales",
        "market_equity",
        "book_equity",
        "total_liabilities",
    ]
    columns = {n: share * total_assets for n, share in zip(names, shares)}
    for n in ("sales", "market_equity"):
        columns[n] = abs(columns[n])
    columns["total_liabilities"] = (0.1 + abs(shares[-1])) * total_assets
    before = altman_scores(total_assets=total_assets, **columns)
    name, ratio = column
    columns[name] += step * total_assets
    after = altman_scores(total_assets=total_assets, **columns)
    for old, new in zip(before, after):
        if ratio in old.coefficients and (ratio != "X4" or name == EQUITY_COLUMN[old.variant]):
            assert old.coefficients[ratio] > 0
            assert new.score > old.score
        else:
            assert new.score == old.score


@pytest.mark.parametrize(
    "changes, fragments",
    [
        ({"total_assets": 0.0}, ["total_assets", "0.0", "> 0"]),
        ({"total_assets": None}, ["total_assets", "required", "> 0"]),
        ({"total_assets": -5.0}, ["total_assets", "-5.0", "> 0"]),
        ({"total_liabilities": 0.0}, ["total_liabilities", "0.0", "> 0"]),
        ({"sales": -1.0}, ["sales", "-1.0", ">= 0"]),
        ({"market_equity": -1.0}, ["market_equity", "-1.0", ">= 0"]),
        ({"ebit": float("nan")}, ["ebit", "nan", "finite", "None"]),
        ({"working_capital": float("inf")}, ["working_capital", "inf", "finite"]),
        ({"retained_earnings": "12"}, ["retained_earnings", "'12'", "number"]),
        ({"book_equity": True}, ["book_equity", "True", "number"]),
    ],
)
def test_bad_columns_rejected_with_name_value_and_range(changes, fragments):
    columns = dict(STATEMENTS)
    columns.update(changes)
    with pytest.raises(ValueError) as caught:
        altman_scores(**columns)
    for fragment in fragments:
        assert fragment in str(caught.value)
