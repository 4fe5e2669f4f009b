"""Credit metrics by year (common practice definitions, engine/credit_metrics.py)."""

from __future__ import annotations

import csv

import pytest
from conftest import SAMPLE_CASE, SAMPLE_STATEMENTS
from obligor_memo.engine.credit_metrics import credit_metrics, credit_year
from obligor_memo.engine.evaluate import evaluate
from obligor_memo.engine.loading import load_case


class Row:
    def __init__(self, **values):
        self.__dict__.update(values)


def test_definitions_on_a_worked_year():
    # Hand example (common practice): debt 300, cash 50 -> net debt 250; EBITDA 100 -> 2.5x;
    # interest 20 -> cover 5x; equity 150 -> debt/equity 2x; sales 400 -> margin 25 %;
    # operating cash flow 80, capex 30 -> free cash flow 50.
    y = credit_year(
        Row(
            year=2024,
            sales=400.0,
            ebitda=100.0,
            cash=50.0,
            total_debt=300.0,
            interest_expense=20.0,
            book_equity=150.0,
            operating_cash_flow=80.0,
            capital_expenditure=30.0,
        )
    )
    assert (y.net_debt, y.net_debt_to_ebitda, y.interest_cover, y.debt_to_equity) == (250.0, 2.5, 5.0, 2.0)
    assert (y.ebitda_margin, y.free_cash_flow, y.revenue) == (0.25, 50.0, 400.0)


@pytest.mark.parametrize(
    ("values", "missing"),
    [
        ({"ebitda": -5.0, "total_debt": 100.0, "cash": 10.0}, "net_debt_to_ebitda"),  # negative EBITDA: undefined
        ({"ebitda": 10.0, "interest_expense": 0.0}, "interest_cover"),
        ({"total_debt": 10.0, "book_equity": -1.0}, "debt_to_equity"),
        ({"operating_cash_flow": 10.0}, "free_cash_flow"),
        ({"total_debt": 10.0}, "net_debt"),
    ],
)
def test_undefined_or_missing_inputs_give_none(values, missing):
    assert getattr(credit_year(Row(year=2024, **values)), missing) is None


def test_sample_metrics_match_its_statements_file():
    results = evaluate(load_case(SAMPLE_CASE))
    rows = list(csv.DictReader(SAMPLE_STATEMENTS.read_text(encoding="utf-8").splitlines()))
    assert [y.year for y in results.credit_metrics] == [int(r["year"]) for r in rows]
    for metrics, row in zip(results.credit_metrics, rows):
        net_debt = float(row["total_debt"]) - float(row["cash"])
        assert metrics.net_debt_to_ebitda == pytest.approx(net_debt / float(row["ebitda"]), rel=1e-12)
        assert metrics.interest_cover == pytest.approx(float(row["ebitda"]) / float(row["interest_expense"]), rel=1e-12)
    latest = results.credit_metrics[-1]
    assert latest.net_debt_to_ebitda < 4.0  # the sample's proposed covenant holds today
    assert results.to_dict()["credit_metrics"][-1]["year"] == latest.year


def test_no_lines_no_metrics():
    assert credit_metrics([Row(year=2024, total_assets=1.0)]) == ()


def test_trends_are_compound_growth_for_amounts_and_changes_for_ratios():
    from obligor_memo.engine.credit_metrics import metric_trends

    results = evaluate(load_case(SAMPLE_CASE))
    years = results.credit_metrics
    trends = metric_trends(years)
    first, last = years[0], years[-1]
    span = last.year - first.year
    # Common practice: CAGR = (last / first) ** (1 / years) - 1; checked against numpy's power.
    import numpy as np

    assert trends["revenue"].growth == pytest.approx(np.power(last.revenue / first.revenue, 1 / span) - 1, rel=1e-12)
    assert trends["revenue"].growth == pytest.approx(0.0504, abs=5e-4)  # 234.0 -> 364.3 over 9 years
    assert trends["ebitda_margin"].change == pytest.approx(last.ebitda_margin - first.ebitda_margin, rel=1e-12)
    assert trends["net_debt_to_ebitda"].change == pytest.approx(last.net_debt_to_ebitda - first.net_debt_to_ebitda)
    assert trends["revenue"].change is None and trends["ebitda_margin"].growth is None
    assert (trends["revenue"].first_year, trends["revenue"].last_year) == (first.year, last.year)


def test_a_trend_to_or_from_a_loss_has_no_growth_and_one_year_has_no_trend():
    from obligor_memo.engine.credit_metrics import metric_trends

    rows = [
        credit_year(Row(year=2023, operating_cash_flow=10.0, capital_expenditure=15.0, sales=100.0)),
        credit_year(Row(year=2025, operating_cash_flow=20.0, capital_expenditure=5.0, sales=121.0)),
    ]
    trends = metric_trends(rows)
    assert trends["free_cash_flow"].growth is None  # -5 -> 15: no growth rate
    assert trends["revenue"].growth == pytest.approx(0.10)  # 100 -> 121 over two years
    assert "ebitda" not in trends  # not given
    assert metric_trends(rows[:1]) == {}


@pytest.mark.parametrize(
    ("value", "kind", "printed"),
    [
        (0.0504, "growth", "+5.0 %/yr"),
        (-0.0001, "growth", "0.0 %/yr"),
        (-0.0098, "margin", "-1.0 pp"),
        (0.92, "multiple", "+0.92x"),
        (-1.916, "multiple", "-1.92x"),
        (None, "growth", "n/a"),
    ],
)
def test_trends_print_with_their_sign_and_unit(value, kind, printed):
    from obligor_memo.app.present.formatting import trend

    assert trend(value, kind) == printed
