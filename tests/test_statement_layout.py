"""Statements as analysts have them: title rows, years across or down, usual wording, units.

Each file in tests/data/ (made for these tests from the invented sample borrower's figures) is
read into the same rows as the plain sample CSV, the amounts multiplied by the stated unit, and
the case built on it gives the same PD.
"""

from __future__ import annotations

import copy
import shutil
from pathlib import Path

import pytest
import yaml
from conftest import DATA, SAMPLE_CASE, SAMPLE_STATEMENTS
from obligor_memo.engine.errors import CaseError
from obligor_memo.engine.evaluate import evaluate
from obligor_memo.engine.loading import load_case, parse_text
from obligor_memo.engine.statement_layout import field_for, year_of
from obligor_memo.engine.statements import read_statements

PLAIN = read_statements(SAMPLE_STATEMENTS.read_bytes(), SAMPLE_STATEMENTS.name).rows


def _case_with(tmp_path: Path, statements: dict) -> Path:
    data = parse_text(SAMPLE_CASE.read_text(encoding="utf-8"), SAMPLE_CASE.name)
    data = copy.deepcopy(data)
    data["statements"] = statements
    shutil.copy(DATA / statements["file"], tmp_path / statements["file"])
    path = tmp_path / "case.yaml"
    path.write_text(yaml.safe_dump(data, sort_keys=False), encoding="utf-8")
    return path


@pytest.mark.parametrize(
    ("name", "unit", "orientation", "unknown"),
    [
        ("statements_wide_thousands.xlsx", "thousands", "wide", ("Inventories",)),
        ("statements_long_millions.csv", "millions", "long", ("Employees",)),
        ("statements_wide_dates.xlsx", "units", "wide", ()),
    ],
)
def test_layouts_read_into_the_plain_rows(name, unit, orientation, unknown):
    read = read_statements((DATA / name).read_bytes(), name, unit=unit)
    assert read.orientation == orientation and read.unrecognised == unknown
    assert [r["year"] for r in read.rows] == [r["year"] for r in PLAIN]
    for got, want in zip(read.rows, PLAIN):
        assert set(got) == set(want)
        for key, value in want.items():
            assert got[key] == pytest.approx(value, rel=1e-12), (name, got["year"], key)


@pytest.mark.parametrize(
    ("name", "unit"), [("statements_wide_thousands.xlsx", "thousands"), ("statements_long_millions.csv", "millions")]
)
def test_a_case_on_a_real_layout_gives_the_same_pd(tmp_path, name, unit):
    reference = evaluate(load_case(SAMPLE_CASE))
    results = evaluate(load_case(_case_with(tmp_path, {"file": name, "unit": unit})))
    assert results.pd.pd == pytest.approx(reference.pd.pd, rel=1e-10)
    assert results.total.expected_loss == pytest.approx(reference.total.expected_loss, rel=1e-10)
    codes = {c.code: c.message for c in results.cautions}
    assert f"EUR {unit}" in codes["statements.unit"]
    assert "statements.unrecognised" in codes and "statements.scale" not in codes


def test_thousands_read_as_units_gets_the_scale_caution(tmp_path):
    results = evaluate(load_case(_case_with(tmp_path, {"file": "statements_wide_thousands.xlsx"})))
    codes = {c.code for c in results.cautions}
    assert "statements.scale" in codes


def test_mapping_brings_an_unknown_line_in_or_leaves_it_out(tmp_path):
    mapping = {"Inventories": "ignore"}
    read = read_statements(
        (DATA / "statements_wide_thousands.xlsx").read_bytes(), "s.xlsx", unit="thousands", mapping=mapping
    )
    assert read.unrecognised == ()
    renamed = read_statements(
        (DATA / "statements_long_millions.csv").read_bytes(),
        "s.csv",
        unit="millions",
        mapping={"Employees": "cash", "Cash and cash equivalents": "ignore"},
    )
    assert renamed.rows[0]["cash"] == pytest.approx(850e6)
    case = load_case(
        _case_with(tmp_path, {"file": "statements_wide_thousands.xlsx", "unit": "thousands", "mapping": mapping})
    )
    assert case.statements_source.mapping == mapping


@pytest.mark.parametrize(
    ("cell", "year"),
    [
        ("2023", 2023),
        ("FY2023", 2023),
        ("FY 2023", 2023),
        ("2023A", 2023),
        ("2024E", 2024),
        (2022, 2022),
        (2022.0, 2022),
        ("31.12.2021", 2021),
        ("2020-12-31", 2020),
        ("Revenue", None),
        ("12", None),
        (True, None),
    ],
)
def test_year_headers(cell, year):
    assert year_of(cell) == year


@pytest.mark.parametrize(
    ("label", "field"),
    [
        ("Total Assets", "total_assets"),
        ("Current Liabilities", "short_term_liabilities"),
        ("Non-current liabilities", "long_term_liabilities"),
        ("Short-term liabilities", "short_term_liabilities"),
        ("Turnover", "sales"),
        ("Revenue", "sales"),
        ("EBITDA", "ebitda"),
        ("Cash & cash equivalents", "cash"),
        ("Capex", "capital_expenditure"),
        ("Interest expense", "interest_expense"),
        ("Total debt", "total_debt"),
        ("Operating profit (EBIT)", "ebit"),
        ("Inventories", None),
        ("total_liabilities", "total_liabilities"),
    ],
)
def test_the_trades_wording_is_matched(label, field):
    assert field_for(label) == field


def test_bad_unit_and_bad_mapping_are_named(tmp_path):
    with pytest.raises(CaseError) as caught:
        load_case(_case_with(tmp_path, {"file": "statements_long_millions.csv", "unit": "billions"}))
    assert caught.value.problems[0].field == "statements.unit"
    with pytest.raises(CaseError) as caught:
        load_case(_case_with(tmp_path, {"file": "statements_long_millions.csv", "mapping": {"Employees": "staff"}}))
    assert caught.value.problems[0].field == "statements.mapping['Employees']"


def test_a_file_missing_a_required_line_lists_what_it_found():
    text = "Title\n\nItem,FY2022,FY2023\nTotal assets,100,110\nCurrent liabilities,40,45\nGoodwill,5,5\n"
    with pytest.raises(CaseError) as caught:
        read_statements(text.encode(), "short.csv")
    problem = caught.value.problems[0]
    assert "long_term_liabilities" in problem.allowed and "Goodwill" in str(problem.value)
