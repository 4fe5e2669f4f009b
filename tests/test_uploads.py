"""Hostile and awkward statement uploads: each is read, or refused with a message naming the file,
the row or column where it can, and what is allowed.

Uploads are data, never code: a workbook formula is refused rather than evaluated, and a CSV cell
that a spreadsheet would run as a formula is refused as text, not read as a number. Every file is
built here, in memory, so the test shows exactly what is fed in.
"""

from __future__ import annotations

import copy
import io
import json
import zipfile
from typing import Any

import openpyxl
import pytest
import yaml
from conftest import SAMPLE_CASE
from obligor_memo.engine.case import parse_case
from obligor_memo.engine.errors import CaseError
from obligor_memo.engine.evaluate import evaluate
from obligor_memo.engine.statements import MAX_FILE_BYTES, MAX_ROWS, MAX_XLSX_UNCOMPRESSED, read_statement_table

HEADER = "year,total_assets,short_term_liabilities,long_term_liabilities"
ROWS = ["2021,100,80,30", "2022,112,80,30", "2023,104,80,30", "2024,120,80,30"]


def _csv(*rows: str, header: str = HEADER) -> str:
    return "\n".join([header, *rows]) + "\n"


def _xlsx(rows: list[list[Any]], title: str = "Statements") -> bytes:
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.title = title
    for row in rows:
        sheet.append(row)
    out = io.BytesIO()
    book.save(out)
    return out.getvalue()


def _refused(data: bytes, name: str, **options: Any) -> CaseError:
    with pytest.raises(CaseError) as caught:
        read_statement_table(data, name, **options)
    error = caught.value
    assert error.problems and all(p.field.strip() and p.allowed.strip() for p in error.problems)
    return error


def _one(error: CaseError, field: str, allowed: str) -> None:
    """Some problem names exactly ``field`` and says ``allowed`` (a fragment of the allowed text)."""
    assert any(p.field == field and allowed in p.allowed for p in error.problems), [
        (p.field, p.allowed) for p in error.problems
    ]


# ------------------------------------------------------------------ size limits and archives


def test_file_over_the_size_limit() -> None:
    data = _csv(*ROWS).encode() + b" " * MAX_FILE_BYTES
    _one(_refused(data, "big.csv"), "statements file big.csv", f"at most {MAX_FILE_BYTES:,} bytes")


def test_too_many_rows_in_a_csv() -> None:
    data = _csv(*(f"{1800 + i},10,4,3" for i in range(MAX_ROWS + 1))).encode()
    _one(_refused(data, "long.csv"), "statements file long.csv", f"at most {MAX_ROWS} years")


def test_too_many_rows_in_a_workbook() -> None:
    rows = [HEADER.split(",")] + [[1800 + i, 10, 4, 3] for i in range(MAX_ROWS + 5)]
    _one(_refused(_xlsx(rows), "long.xlsx"), "statements file long.xlsx", f"at most {MAX_ROWS} years")


def test_xlsx_zip_bomb_is_refused_before_it_is_expanded() -> None:
    # One member of zeros a little over the limit compresses to a few tens of kilobytes.
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", compression=zipfile.ZIP_DEFLATED, compresslevel=9) as archive:
        archive.writestr("[Content_Types].xml", "<Types/>")
        with archive.open("xl/worksheets/sheet1.xml", "w") as member:
            chunk = b"\0" * 1_000_000
            for _ in range(MAX_XLSX_UNCOMPRESSED // len(chunk) + 1):
                member.write(chunk)
    data = buffer.getvalue()
    assert len(data) < MAX_FILE_BYTES  # small on disk: the size limit alone would not catch it
    _one(
        _refused(data, "bomb.xlsx"),
        "statements file bomb.xlsx",
        f"expanding to at most {MAX_XLSX_UNCOMPRESSED:,} bytes",
    )


@pytest.mark.parametrize("data", [b"year,total_assets\n2024,1\n", b"PK\x03\x04 broken", b"%PDF-1.7\n"])
def test_a_file_that_is_not_a_zip_named_xlsx(data: bytes) -> None:
    _one(_refused(data, "fake.xlsx"), "statements file fake.xlsx", "an Excel 2007+ workbook (.xlsx)")


def test_a_zip_that_is_not_a_workbook() -> None:
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w") as archive:
        archive.writestr("readme.txt", "not a workbook")
    _one(
        _refused(buffer.getvalue(), "other.xlsx"),
        "statements file other.xlsx",
        "a workbook saved by a spreadsheet program",
    )


# ------------------------------------------------------------------ nothing is executed


def test_a_workbook_formula_is_refused_not_evaluated() -> None:
    rows = [HEADER.split(","), [2023, 104, 80, 30], [2024, "=SUM(B2,16)", 80, 30]]
    error = _refused(_xlsx(rows), "formula.xlsx")
    _one(error, "statements file formula.xlsx, row 3, column 2", "formulas are not evaluated")
    # The message carries the formula as typed, not a computed 120.
    assert error.problems[0].value == "=SUM(B2,16)"


@pytest.mark.parametrize(
    "cell", ["=cmd|' /C calc'!A0", "=1+2", "+1+2", "-1+2", "@SUM(1,2)", '=HYPERLINK("http://example.invalid")']
)
def test_a_csv_cell_a_spreadsheet_would_run_is_text_not_a_number(cell: str) -> None:
    quoted = '"' + cell.replace('"', '""') + '"'
    error = _refused(_csv(*ROWS[:3], f"2024,{quoted},80,30").encode(), "inject.csv")
    _one(error, "statements file inject.csv, row 5, column total_assets", "a number such as 1234.5")
    assert error.problems[0].value == cell


# ------------------------------------------------------------------ empty and undecodable input


@pytest.mark.parametrize("data", [b"", b"   \n\r\n\t\n"])
def test_empty_csv(data: bytes) -> None:
    _one(_refused(data, "empty.csv"), "statements file empty.csv", "a header row and at least one year")


def test_empty_sheet() -> None:
    _one(_refused(_xlsx([]), "empty.xlsx"), "statements file empty.xlsx", "a header row and at least one year")


def test_binary_garbage_named_csv() -> None:
    data = bytes(range(256)) * 8
    _one(_refused(data, "garbage.csv"), "statements file garbage.csv", "a text file in UTF-8")


def test_binary_with_nul_bytes_named_csv() -> None:
    data = b"year,total_assets\x00\x01\x02\n" + bytes(range(1, 128))
    _one(_refused(data, "nul.csv"), "statements file nul.csv", "a CSV text table or an .xlsx workbook")


@pytest.mark.parametrize("name", ["statements.pdf", "statements.xls", "statements", "statements.csv.exe"])
def test_an_unsupported_file_type(name: str) -> None:
    _one(_refused(_csv(*ROWS).encode(), name), f"statements file {name}", "a .csv or .xlsx file")


# ------------------------------------------------------------------ encodings and number formats


def test_csv_in_utf16_with_a_byte_order_mark_is_read() -> None:
    # Spreadsheet programs save "Unicode text" as UTF-16 with a byte order mark.
    rows = read_statement_table(_csv(*ROWS).encode("utf-16"), "unicode.csv")
    assert [r["total_assets"] for r in rows] == [100.0, 112.0, 104.0, 120.0]


@pytest.mark.parametrize("encoding", ["utf-16", "cp1252", "utf-8"])
def test_accented_text_in_a_number_cell_is_shown_as_typed(encoding: str) -> None:
    data = _csv(*ROWS[:3], "2024,néant,80,30").encode(encoding)
    error = _refused(data, "accents.csv")
    _one(error, "statements file accents.csv, row 5, column total_assets", "a number such as 1234.5")
    assert error.problems[0].value == "néant"  # decoded right, not mojibake


@pytest.mark.parametrize("encoding", ["utf-16", "cp1252"])
def test_accented_unknown_column_is_listed_as_typed_not_dropped(encoding: str) -> None:
    from obligor_memo.engine.statements import read_statements

    data = _csv(*ROWS, header=HEADER + ",Bénéfice").encode(encoding)
    read = read_statements(data, "accents.csv")
    assert read.unrecognised == ("Bénéfice",)
    assert all("Bénéfice" not in row for row in read.rows) and len(read.rows) == len(ROWS)


def test_windows_1252_values_with_a_euro_sign_and_no_break_spaces() -> None:
    # 0xA0 (no-break space) as a thousands separator, as French-locale exports write it.
    data = _csv("2023,1\xa0040,800,300", "2024,1\xa0200,800,300").encode("cp1252")
    rows = read_statement_table(data, "fr.csv")
    assert [r["total_assets"] for r in rows] == [1040.0, 1200.0]
    error = _refused(_csv("2024,€1200,800,300").encode("cp1252"), "euro.csv")
    assert error.problems[0].value == "€1200"


def test_semicolon_separated_with_decimal_commas() -> None:
    text = (
        "year;total_assets;short_term_liabilities;long_term_liabilities\n"
        "2023;104,5;80,25;30\n2024;1.234.567,5;80;30,75\n"
    )
    rows = read_statement_table(text.encode(), "eu.csv", decimal=",")
    assert rows == [
        {"year": 2023, "total_assets": 104.5, "short_term_liabilities": 80.25, "long_term_liabilities": 30.0},
        {"year": 2024, "total_assets": 1234567.5, "short_term_liabilities": 80.0, "long_term_liabilities": 30.75},
    ]


# Thousands separators and accounting brackets are how statements are printed (common practice).
@pytest.mark.parametrize(
    ("cell", "decimal", "expected"),
    [
        ('"1,234,567"', ".", 1234567.0),
        ('"1,234,567.25"', ".", 1234567.25),
        ("1.234.567,5", ",", 1234567.5),
        ("(30)", ".", -30.0),
        ('"(1,030.5)"', ".", -1030.5),
        ("(1.030,5)", ",", -1030.5),
    ],
)
def test_thousands_separators_and_brackets(cell: str, decimal: str, expected: float) -> None:
    separator = "," if decimal == "." else ";"
    header = HEADER.replace(",", separator) + separator + "working_capital"
    row = separator.join(["2024", "120", "80", "30", cell])
    rows = read_statement_table(_csv(row, header=header).encode(), "t.csv", decimal=decimal)
    assert rows[0]["working_capital"] == expected


# ------------------------------------------------------------------ columns and cells


def test_missing_required_column() -> None:
    header = "year,total_assets,short_term_liabilities"
    error = _refused(_csv("2024,120,80", header=header).encode(), "s.csv")
    _one(error, "statements file s.csv, header", "a column named long_term_liabilities")


def test_unknown_column_gets_a_suggestion() -> None:
    header = HEADER.replace("total_assets", "total_asets")
    error = _refused(_csv(*ROWS, header=header).encode(), "s.csv")
    _one(error, "statements file s.csv, header", "did you mean 'total_assets'?")


@pytest.mark.parametrize(
    ("row", "column"),
    [
        ("2024,,80,30", "total_assets"),
        ("2024,120,,30", "short_term_liabilities"),
        (",120,80,30", "year"),
        ("2024,120,80", "long_term_liabilities"),
    ],
)
def test_blank_cell_in_a_required_column(row: str, column: str) -> None:
    error = _refused(_csv(*ROWS[:3], row).encode(), "s.csv")
    _one(error, f"statements file s.csv, row 5, column {column}", "this column is required")


@pytest.mark.parametrize("cell", ["twelve", "12 EUR", "1.2.3", "nan", "inf", "0x1F", "1_000", "TRUE"])
def test_text_in_a_number_cell(cell: str) -> None:
    error = _refused(_csv(*ROWS[:3], f"2024,{cell},80,30").encode(), "s.csv")
    _one(error, "statements file s.csv, row 5, column total_assets", "a number such as 1234.5")


def test_text_and_a_boolean_in_workbook_number_cells() -> None:
    rows = [HEADER.split(","), [2023, "n.a.", 80, 30], [2024, True, 80, 30]]
    error = _refused(_xlsx(rows), "s.xlsx")
    _one(error, "statements file s.xlsx, row 2, column total_assets", "a number")
    _one(error, "statements file s.xlsx, row 3, column total_assets", "a number")


@pytest.mark.parametrize("year", ["2024.5", "1e400"])
def test_a_year_that_is_not_whole(year: str) -> None:
    error = _refused(_csv(*ROWS[:3], f"{year},120,80,30").encode(), "s.csv")
    _one(error, "statements file s.csv, row 5, column year", "a whole year such as 2024")


def test_a_fractional_year_in_a_workbook() -> None:
    rows = [HEADER.split(","), [2023, 104, 80, 30], [2023.5, 120, 80, 30]]
    _one(_refused(_xlsx(rows), "s.xlsx"), "statements file s.xlsx, row 3, column year", "a whole year")


def test_a_cell_longer_than_the_csv_field_limit() -> None:
    _refused(_csv(*ROWS[:3], "2024," + "1" * 200_000 + ",80,30").encode(), "s.csv")


def test_a_column_given_twice_is_refused() -> None:
    header = HEADER + ",total_assets"
    _refused(_csv("2024,120,80,30,999", header=header).encode(), "s.csv")


def test_a_number_too_large_for_a_float_is_refused_in_the_table() -> None:
    _refused(_csv(*ROWS[:3], "2024,1e400,80,30").encode(), "s.csv")


# ------------------------------------------------------------------ round trip into the case


def _sample_without_statements() -> dict[str, Any]:
    data = yaml.safe_load(SAMPLE_CASE.read_text(encoding="utf-8"))
    data.pop("statements")
    return data


SAMPLE_REST = _sample_without_statements()
# Ten invented years [thousands of EUR], written as exports write them: decimal comma, separators,
# newest year first.
TEN_YEARS = [
    (
        2016 + i,
        300_000.0 + 17_500.0 * i + (9_250.5 if i % 2 else 0.0),
        100_000.0 + 15_000.0 * i,
        110_000.0 + 3_000.0 * i,
    )
    for i in range(10)
]


def _accepted_uploads() -> list[tuple[str, bytes, str, dict[str, Any]]]:
    plain = _csv(*(f"{y},{a},{s},{lt}" for y, a, s, lt in TEN_YEARS))
    euro = plain.replace(",", ";").replace(".", ",")
    separators = _csv(*(f'{y},"{a:,.2f}",{s},{lt}' for y, a, s, lt in reversed(TEN_YEARS)))
    rows = [HEADER.split(",")] + [list(t) for t in TEN_YEARS]
    return [
        ("plain.csv", plain.encode(), ".", {}),
        ("utf16.csv", plain.encode("utf-16"), ".", {}),
        ("cp1252.csv", plain.encode("cp1252"), ".", {}),
        ("euro.csv", euro.encode(), ",", {}),
        ("separators.csv", separators.encode(), ".", {}),
        ("book.xlsx", _xlsx(rows), ".", {}),
        ("sheet.xlsx", _xlsx(rows, title="FY"), ".", {"sheet": "FY"}),
    ]


@pytest.mark.parametrize(
    ("name", "data", "decimal", "options"), _accepted_uploads(), ids=[u[0] for u in _accepted_uploads()]
)
def test_accepted_uploads_round_trip_into_the_case(
    name: str, data: bytes, decimal: str, options: dict[str, Any]
) -> None:
    rows = read_statement_table(data, name, decimal=decimal, **options)
    case = parse_case({**copy.deepcopy(SAMPLE_REST), "statements": rows})
    assert [
        (r.year, r.total_assets, r.short_term_liabilities, r.long_term_liabilities) for r in case.statements
    ] == TEN_YEARS  # the schema sorts the years
    results = evaluate(case)
    json.dumps(results.to_dict(), allow_nan=False)
    assert 0 < results.pd.pd < 1
