"""Statement tables (CSV/XLSX cells to numbers) and the ratios of each year."""

from __future__ import annotations

import math

import pytest
from obligor_memo.engine.case import parse_case
from obligor_memo.engine.errors import CaseError
from obligor_memo.engine.statements import MAX_ROWS, parse_number, read_statement_table, year_ratios

HEADER = "year,total_assets,short_term_liabilities,long_term_liabilities\n"


# How people write numbers in statements (common practice): thousands separators, accounting
# brackets for negatives, a decimal comma in much of Europe.
@pytest.mark.parametrize(
    ("text", "decimal", "expected"),
    [
        ("1234.5", ".", 1234.5),
        ("1,234.5", ".", 1234.5),
        ("1,234,567", ".", 1234567.0),
        ("1 234,5", ",", 1234.5),
        ("1.234.567,25", ",", 1234567.25),
        ("(12)", ".", -12.0),
        ("(1,200.5)", ".", -1200.5),
        ("-7", ".", -7.0),
        ("3e6", ".", 3e6),
        ("1'000", ".", 1000.0),
        ("", ".", None),
        ("n/a", ".", None),
        (42, ".", 42.0),
        (None, ".", None),
    ],
)
def test_parse_number(text, decimal, expected) -> None:
    assert parse_number(text, decimal=decimal) == expected


@pytest.mark.parametrize("text", ["abc", "1.2.3", "12%", "1,2", True])
def test_parse_number_refuses_what_is_not_a_number(text) -> None:
    with pytest.raises(ValueError):
        parse_number(text)


def test_header_is_normalised_and_optional_columns_are_kept() -> None:
    data = b'Year,Total Assets,Short-Term Liabilities,Long term liabilities,EBIT\n2024,"1,000",400,300,(50)\n'
    assert read_statement_table(data, "s.csv") == [
        {
            "year": 2024,
            "total_assets": 1000.0,
            "short_term_liabilities": 400.0,
            "long_term_liabilities": 300.0,
            "ebit": -50.0,
        }
    ]


def test_tab_separated_table_is_read() -> None:
    data = b"year\ttotal_assets\tshort_term_liabilities\tlong_term_liabilities\n2024\t10\t4\t3\n"
    assert read_statement_table(data, "s.tsv")[0]["total_assets"] == 10.0


@pytest.mark.parametrize(
    ("data", "name", "field", "allowed"),
    [
        (b"", "s.csv", "statements file s.csv", "a header row"),
        (
            b"year,total_assets\n2024,10\n",
            "s.csv",
            "statements file s.csv, header",
            "a column named short_term_liabilities",
        ),
        ((HEADER + "2024.5,10,4,3\n").encode(), "s.csv", "statements file s.csv, row 2, column year", "a whole year"),
        (
            (HEADER + "2024,,4,3\n").encode(),
            "s.csv",
            "statements file s.csv, row 2, column total_assets",
            "this column is required",
        ),
        (HEADER.encode(), "s.pdf", "statements file s.pdf", "a .csv or .xlsx file"),
        (b"year,total_assets\x00\n", "s.csv", "statements file s.csv", "a CSV text table"),
    ],
)
def test_bad_tables_are_named(data, name, field, allowed) -> None:
    with pytest.raises(CaseError) as caught:
        read_statement_table(data, name)
    assert field in caught.value.fields
    assert any(allowed in p.allowed for p in caught.value.problems)


def test_header_without_years_gives_no_rows() -> None:
    # The table itself is well formed; the case schema then asks for at least one year.
    assert read_statement_table(HEADER.encode(), "s.csv") == []


def test_too_many_rows_are_refused() -> None:
    body = "".join(f"{1900 + i},10,4,3\n" for i in range(MAX_ROWS + 1))
    with pytest.raises(CaseError) as caught:
        read_statement_table((HEADER + body).encode(), "s.csv")
    assert f"at most {MAX_ROWS} years" in caught.value.problems[0].allowed


def test_windows_1252_text_with_a_non_breaking_space_is_read() -> None:
    # 0xA0 (no-break space, a common thousands separator) is not valid UTF-8 on its own.
    data = (HEADER + "2024,1\xa0000,4,3\n").encode("cp1252")
    with pytest.raises(UnicodeDecodeError):
        data.decode("utf-8")
    assert read_statement_table(data, "s.csv")[0]["total_assets"] == 1000.0


def test_year_ratios_by_hand(make_case) -> None:
    data = make_case()
    data["statements"][-1].update(book_equity=10.0, ebit=6.0, sales=60.0, total_liabilities=110.0)
    case = parse_case(data)
    ratios = year_ratios(case.statements)
    assert [r.year for r in ratios] == [2020, 2021, 2022, 2023]
    first, last = ratios[0], ratios[-1]
    assert first.asset_growth is None
    # Log change of total assets, computed with the standard library.
    assert last.asset_growth == pytest.approx(math.log(120.0 / 104.0), rel=1e-15)
    assert first.total_liabilities == 110.0  # short + long when not given
    assert first.leverage == pytest.approx(110.0 / 100.0, rel=1e-15)
    assert first.short_term_share_of_debt == pytest.approx(80.0 / 110.0, rel=1e-15)
    assert first.equity_ratio is None and first.ebit_margin is None
    assert last.equity_ratio == pytest.approx(10.0 / 120.0, rel=1e-15)
    assert last.ebit_margin == pytest.approx(0.1, rel=1e-15)
    assert last.return_on_assets == pytest.approx(6.0 / 120.0, rel=1e-15)
