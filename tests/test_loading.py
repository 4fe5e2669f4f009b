"""Reading case files: YAML and JSON, statements from CSV/XLSX files, strict YAML rules."""

from __future__ import annotations

import json
from pathlib import Path

import openpyxl
import pytest
import yaml
from conftest import DATA, SAMPLE_CASE, SAMPLE_STATEMENTS, copy_data, minimal_case_dict, write_case
from obligor_memo.engine.case import parse_case
from obligor_memo.engine.errors import CaseError
from obligor_memo.engine.loading import load_case, load_case_text, parse_text


def test_yaml_and_json_of_the_same_data_give_the_same_case(tmp_path: Path, make_case) -> None:
    from_yaml = load_case(write_case(tmp_path, make_case(), "case.yaml"))
    from_json = load_case(write_case(tmp_path, make_case(), "case.json"))
    assert from_yaml == from_json == parse_case(make_case())


def test_scientific_notation_is_a_number() -> None:
    # PyYAML's YAML 1.1 resolver reads "1e6" as text (it wants a dot); people mean a number.
    assert yaml.safe_load("x: 1e6")["x"] == "1e6"
    assert parse_text("x: 1e6\ny: 2.5E+3\nz: 7", "case.yaml") == {"x": 1e6, "y": 2500.0, "z": 7}


def test_yaml_loader_builds_no_objects() -> None:
    with pytest.raises(CaseError):
        parse_text("x: !!python/object/apply:os.system ['true']\n", "case.yaml")


def test_duplicate_key_in_json_is_refused() -> None:
    with pytest.raises(CaseError) as caught:
        load_case_text('{"borrower": {"name": "A", "name": "B"}}', "case.json")
    assert "each key once" in caught.value.problems[0].allowed


def test_invalid_json_names_line_and_column() -> None:
    with pytest.raises(CaseError) as caught:
        load_case_text('{\n  "borrower": ,\n}', "case.json")
    # The value is missing on line 2, column 15 (1-based, as the json module reports).
    assert caught.value.fields == ("case.json, line 2, column 15",)


def test_nan_written_by_json_dumps_is_refused(make_case) -> None:
    data = make_case()
    data["facilities"][0]["drawn"] = float("nan")
    text = json.dumps(data)  # Python writes NaN unless allow_nan=False
    assert "NaN" in text
    with pytest.raises(CaseError) as caught:
        load_case_text(text, "case.json")
    assert caught.value.fields == ("facilities[0].drawn",)


def test_statements_file_is_inlined_relative_to_the_case(tmp_path: Path, make_case) -> None:
    (tmp_path / "sub").mkdir()
    copy_data(tmp_path / "sub", "statements_ok.csv")
    data = make_case()
    data["statements"] = {"file": "statements_ok.csv"}
    case = load_case(write_case(tmp_path / "sub", data, "case.yaml"))
    assert case.model_copy(update={"statements_source": None}) == parse_case(make_case())
    assert case.statements_source is not None and case.statements_source.file == "statements_ok.csv"
    assert case.statements_source.unit == "units" and case.statements_source.unrecognised == []


def test_semicolon_table_with_decimal_commas_and_shuffled_years(tmp_path: Path, make_case) -> None:
    copy_data(tmp_path, "semicolon_decimal_comma.csv")
    data = make_case()
    data["statements"] = {"file": "semicolon_decimal_comma.csv", "decimal": ","}
    case = load_case(write_case(tmp_path, data, "case.yaml"))
    # Headers "Total Assets" / "Short-term liabilities" are normalised; rows come back sorted.
    assert case.model_copy(update={"statements_source": None}) == parse_case(make_case())


def test_xlsx_statements_match_the_csv(tmp_path: Path, make_case) -> None:
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.title = "Notes"
    sheet.append(["nothing to see"])
    figures = book.create_sheet("Figures")
    for line in (DATA / "statements_ok.csv").read_text().splitlines():
        cells = line.split(",")
        figures.append(cells if cells[0] == "year" else [float(c) for c in cells])
    book.save(tmp_path / "statements.xlsx")
    data = make_case()
    data["statements"] = {"file": "statements.xlsx", "sheet": "Figures"}
    case = load_case(write_case(tmp_path, data, "case.yaml"))
    assert case.model_copy(update={"statements_source": None}) == parse_case(make_case())


def test_xlsx_with_a_formula_is_refused(tmp_path: Path, make_case) -> None:
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.append(["year", "total_assets", "short_term_liabilities", "long_term_liabilities"])
    sheet.append([2020, 100, 80, 30])
    sheet.append([2021, "=B2*1.1", 80, 30])
    book.save(tmp_path / "statements.xlsx")
    data = make_case()
    data["statements"] = {"file": "statements.xlsx"}
    with pytest.raises(CaseError) as caught:
        load_case(write_case(tmp_path, data, "case.yaml"))
    problem = caught.value.problems[0]
    assert problem.field == "statements file statements.xlsx, row 3, column 2"
    assert problem.value == "=B2*1.1"
    assert "formulas are not evaluated" in problem.allowed


def test_unknown_sheet_lists_the_sheets(tmp_path: Path, make_case) -> None:
    book = openpyxl.Workbook()
    book.active.title = "Figures"
    book.save(tmp_path / "statements.xlsx")
    data = make_case()
    data["statements"] = {"file": "statements.xlsx", "sheet": "Numbers"}
    with pytest.raises(CaseError) as caught:
        load_case(write_case(tmp_path, data, "case.yaml"))
    assert caught.value.fields == ("statements.sheet",)
    assert "Figures" in caught.value.problems[0].allowed


@pytest.mark.parametrize(
    ("spec", "field", "allowed"),
    [
        ({"path": "s.csv"}, "statements", "a list of yearly rows"),
        ({"file": "statements_ok.csv", "decimal": ";"}, "statements.decimal", "'.' or ','"),
    ],
)
def test_bad_statements_spec(tmp_path: Path, make_case, spec, field, allowed) -> None:
    copy_data(tmp_path, "statements_ok.csv")
    data = make_case()
    data["statements"] = spec
    with pytest.raises(CaseError) as caught:
        load_case(write_case(tmp_path, data, "case.yaml"))
    assert caught.value.fields == (field,)
    assert allowed in caught.value.problems[0].allowed


def test_uploaded_text_cannot_point_at_a_file(make_case) -> None:
    data = make_case()
    data["statements"] = {"file": "statements_ok.csv"}
    with pytest.raises(CaseError) as caught:
        load_case_text(yaml.safe_dump(data))
    assert caught.value.fields == ("statements.file",)


def test_missing_case_file_is_named(tmp_path: Path) -> None:
    with pytest.raises(CaseError) as caught:
        load_case(tmp_path / "nowhere.yaml")
    assert caught.value.fields == ("CASE",)
    assert "existing" in caught.value.problems[0].allowed


def test_non_utf8_case_file_is_named(tmp_path: Path) -> None:
    path = tmp_path / "case.yaml"
    path.write_bytes(b"borrower: {name: \xff\xfe}\n")
    with pytest.raises(CaseError) as caught:
        load_case(path)
    assert "UTF-8" in caught.value.problems[0].allowed


def test_byte_order_mark_is_ignored(tmp_path: Path, make_case) -> None:
    path = tmp_path / "case.yaml"
    path.write_bytes(b"\xef\xbb\xbf" + yaml.safe_dump(make_case()).encode("utf-8"))
    assert load_case(path) == parse_case(make_case())


def test_sample_case_reads_its_ten_years() -> None:
    case = load_case(SAMPLE_CASE)
    lines = SAMPLE_STATEMENTS.read_text().strip().splitlines()
    assert [row.year for row in case.statements] == [int(line.split(",")[0]) for line in lines[1:]]
    assert case.statements[-1].total_assets == float(lines[-1].split(",")[1])


# --------------------------------------------------------------------------- YAML 1.2 core schema


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("NO", "NO"),
        ("no", "no"),
        ("yes", "yes"),
        ("on", "on"),
        ("off", "off"),
        ("Y", "Y"),
        ("012", "012"),
        ("0o17", "0o17"),
        ("0x1F", "0x1F"),
        ("1:20", "1:20"),
        ("2024-03-31", "2024-03-31"),
        ("1_000", "1_000"),
        ("true", True),
        ("False", False),
        ("null", None),
        ("~", None),
        ("12", 12),
        ("-3", -3),
        ("0", 0),
        ("1e6", 1e6),
        ("2.75", 2.75),
        ("-0.5", -0.5),
        (".5", 0.5),
    ],
)
def test_plain_scalars_follow_the_yaml_1_2_core_schema(text, expected):
    """YAML 1.2.2 spec, section 10.3.2 (core schema): only true/false are booleans, no octal,
    base 60 or timestamps; whole numbers with a leading zero stay text (a stricter choice)."""
    from obligor_memo.engine.loading import parse_text

    value = parse_text(f"v: {text}\n", "case.yaml")["v"]
    assert value == expected and type(value) is type(expected), (text, value)


def test_norway_stays_norway(tmp_path):
    """country: NO is the text 'NO' (under YAML 1.1 it was false)."""
    data = minimal_case_dict()
    text = yaml.safe_dump(data, sort_keys=False).replace("borrower:\n", "borrower:\n  country: NO\n", 1)
    case = load_case_text(text, "case.yaml")
    assert case.borrower.country == "NO"


def test_yaml_round_trip_keeps_every_value(sample_case_path):
    """The sample case written out as YAML and read back is the same case (and the same text
    values: nothing turns into a boolean or a number on the way)."""
    from obligor_memo.engine.case import case_to_dict, parse_case

    case = load_case(sample_case_path)
    data = case_to_dict(case)
    data["borrower"]["country"] = "NO"
    data["memo"]["prepared_by"] = "yes"
    again = load_case_text(yaml.safe_dump(data, sort_keys=False, allow_unicode=True), "case.yaml")
    assert case_to_dict(again) == data
    assert again == parse_case(data)
