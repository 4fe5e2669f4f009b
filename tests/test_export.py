"""Results out to a spreadsheet: the workbook read back with openpyxl equals evaluate --json."""

from __future__ import annotations

import csv
import json

import openpyxl
import pytest
from click.testing import CliRunner
from conftest import SAMPLE_CASE
from obligor_memo.app.cli import main


@pytest.fixture(scope="module")
def exported(tmp_path_factory):
    folder = tmp_path_factory.mktemp("export")
    runner = CliRunner()
    done = runner.invoke(main, ["export", str(SAMPLE_CASE), "-o", str(folder / "r.xlsx"), "--csv", str(folder / "csv")])
    assert done.exit_code == 0, done.output
    reference = json.loads(runner.invoke(main, ["evaluate", str(SAMPLE_CASE), "--json"]).output)
    return folder, openpyxl.load_workbook(folder / "r.xlsx"), reference


def _pairs(sheet):
    return {row[0].value: row[1] for row in sheet.iter_rows(min_row=2)}


def test_every_total_and_pd_figure_equals_the_json(exported):
    _, book, reference = exported
    for sheet, block in (("totals", "total"), ("pd", "pd")):
        cells = _pairs(book[sheet])
        for key, value in reference[block].items():
            if isinstance(value, (int, float)) and not isinstance(value, bool):
                assert cells[key].value == pytest.approx(value, rel=1e-12), (sheet, key)
            elif isinstance(value, str):
                assert cells[key].value == value
    assert _pairs(book["totals"])["ead"].number_format == "#,##0"
    assert _pairs(book["pd"])["pd"].number_format == "0.0000%"


def test_every_facility_figure_equals_the_json(exported):
    _, book, reference = exported
    sheet = book["facilities"]
    header = [c.value for c in sheet[1]]
    for row, facility in zip(sheet.iter_rows(min_row=2), reference["facilities"]):
        cells = dict(zip(header, row))
        for key, value in facility.items():
            if isinstance(value, (int, float)) and not isinstance(value, bool):
                assert cells[key].value == pytest.approx(value, rel=1e-12), (facility["id"], key)
        assert cells["ead"].number_format == "#,##0" and cells["lgd"].number_format == "0.00%"


def test_sheets_have_frozen_headers_and_the_statements_their_unit(exported):
    _, book, reference = exported
    assert {
        "inputs",
        "statements",
        "facilities",
        "totals",
        "pd",
        "term structure",
        "sensitivity",
        "pd grid",
        "scenarios",
        "credit metrics",
    } <= set(book.sheetnames)
    assert all(book[name].freeze_panes == "A2" for name in book.sheetnames)
    statements = book["statements"]
    header = [c.value for c in statements[1]]
    assert "unit_in_file" in header
    assert statements.max_row - 1 == len(reference["case"]["statements"])


def test_one_csv_per_sheet(exported):
    folder, book, reference = exported
    files = sorted(p.stem for p in (folder / "csv").glob("*.csv"))
    assert files == sorted(name.replace(" ", "_") for name in book.sheetnames)
    with (folder / "csv" / "totals.csv").open() as handle:
        totals = {row["figure"]: row["value"] for row in csv.DictReader(handle)}
    assert float(totals["expected_loss"]) == pytest.approx(reference["total"]["expected_loss"], rel=1e-12)


def test_export_usage_mistakes(tmp_path):
    runner = CliRunner()
    assert runner.invoke(main, ["export", str(SAMPLE_CASE)]).exit_code == 2
    wrong = runner.invoke(main, ["export", str(SAMPLE_CASE), "-o", str(tmp_path / "r.csv")])
    assert wrong.exit_code == 2 and ".xlsx" in wrong.output
