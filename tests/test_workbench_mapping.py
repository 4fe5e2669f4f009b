"""The mapping step after a statements upload, driven through the borrower page (AppTest): each
layout of tests/data is previewed line by line (label, field, years, first values), the unit and
the lines can be changed, "Accept" replaces the statements (amounts multiplied by the unit) and
keeps the unit and mapping in the case, "Cancel" leaves the case as it was, a bad file gives a
message naming the file and the cell."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from obligor_memo.app.workbench import state
from obligor_memo.engine.case import case_to_dict
from obligor_memo.engine.loading import load_case_text
from obligor_memo.engine.statements import read_statements
from workbench_support import _errors, _open, app  # noqa: F401

DATA = Path(__file__).resolve().parent / "data"
ROOT = Path(__file__).resolve().parent.parent
PLAIN = read_statements((ROOT / "sample_data" / "hollowmere_statements.csv").read_bytes(), "plain.csv").rows
LABELS = {
    "Total Assets": "total_assets",
    "Current Liabilities": "short_term_liabilities",
    "Non-current liabilities": "long_term_liabilities",
    "Revenue": "sales",
    "Shareholders' equity": "book_equity",
    "Capex": "capital_expenditure",
}


def _upload(at, name: str, data: bytes | None = None):
    uploader = next(u for u in at.get("file_uploader") if u.label.startswith("Replace the statements"))
    uploader.set_value((name, data if data is not None else (DATA / name).read_bytes(), "application/octet-stream"))
    at.run()
    assert not at.exception, [e.value for e in at.exception]
    return at


def _select(at, label: str):
    found = [s for s in at.selectbox if s.label == label]
    assert found, f"no select labelled {label!r}: {[s.label for s in at.selectbox]}"
    return found[0]


def _button(at, label: str):
    return next(b for b in at.button if b.label == label)


def _markdown(at) -> str:
    return "\n".join(m.value for m in at.markdown)


def _warnings(at) -> str:
    return " ".join(w.value for w in at.warning)


def _filled(rows: list[dict]) -> list[dict]:
    """The rows without empty cells (the statements grid writes every column, empty ones as None)."""
    return [{k: v for k, v in row.items() if v is not None} for row in rows]


def _same_rows(got: list[dict], want: list[dict], factor: float = 1.0) -> None:
    assert [r["year"] for r in got] == [r["year"] for r in want]
    for g, w in zip(got, want):
        for key, value in w.items():
            if key != "year" and value is not None:
                assert g[key] == pytest.approx(value * factor, rel=1e-12), (w["year"], key)


@pytest.mark.parametrize(
    ("name", "unit", "unrecognised", "orientation"),
    [
        ("statements_wide_thousands.xlsx", "thousands", ["Inventories"], "wide"),  # two sheets, title rows
        ("statements_long_millions.csv", "millions", ["Employees"], "long"),  # title row, "2016A"
        ("statements_wide_dates.xlsx", "units", [], "wide"),  # dates as years, no title
    ],
)
def test_each_layout_is_previewed_then_accepted_as_the_plain_rows(app, name, unit, unrecognised, orientation):
    _open(app, "borrower")
    before = json.dumps(app.session_state["raw"], sort_keys=True)
    _upload(app, name)
    preview = app.session_state["mapping_preview"]
    assert preview["read"]["unit"] == unit and preview["read"]["orientation"] == orientation
    # nothing replaced yet
    assert json.dumps(app.session_state["raw"], sort_keys=True) == before
    shown = _markdown(app)
    assert f"Check the statements read from {name}" in shown
    for label, field in LABELS.items():
        assert label in shown
        assert _select(app, f"Field for {label}").value == field
    assert "2016–2025" in shown and "2016: 300,000,000" in shown  # years and first values, in units
    assert _select(app, "Amounts in the file are in").value == unit
    assert _select(app, "Years run").value == orientation
    for label in unrecognised:
        assert f"{label} :orange[(not recognised)]" in shown
        assert label in _warnings(app)
        assert _select(app, f"Field for {label}").value == "not used"
    _button(app, "Accept these statements").click().run()
    assert not app.exception
    raw = app.session_state["raw"]
    _same_rows(raw["statements"], PLAIN)
    source = raw["statements_source"]
    assert source["file"] == name and source["unit"] == unit and source["orientation"] == orientation
    assert source["unrecognised"] == unrecognised
    assert {k: source["mapping"][k] for k in LABELS} == LABELS
    assert "mapping_preview" not in app.session_state
    assert not app.session_state["problems"]
    notice = " ".join(s.value for s in app.success)
    assert f"Read 10 year(s) of statements (2016–2025) from {name}, amounts in {unit}." in notice


def test_a_plain_table_is_previewed_with_its_own_column_names(app):
    _open(app, "borrower")
    _upload(app, "statements_ok.csv")
    shown = _markdown(app)
    assert "Total assets" in shown and "Short-term liabilities" in shown
    assert "each column is read as named" in " ".join(c.value for c in app.caption)
    assert [s.label for s in app.selectbox if s.label.startswith("Field for")] == []
    _button(app, "Accept these statements").click().run()
    rows = _filled(app.session_state["raw"]["statements"])
    assert rows[0] == {
        "year": 2020,
        "total_assets": 100.0,
        "short_term_liabilities": 80.0,
        "long_term_liabilities": 30.0,
    }
    assert app.session_state["raw"]["statements_source"]["mapping"] == {}


def test_changed_lines_and_unit_are_applied_saved_and_read_back_the_same_way(app, tmp_path):
    name = "statements_wide_thousands.xlsx"
    data = (DATA / name).read_bytes()
    _open(app, "borrower")
    _upload(app, name)
    _select(app, "Field for Revenue").set_value("not used").run()
    _select(app, "Field for Inventories").set_value("sales").run()
    _select(app, "Amounts in the file are in").set_value("millions").run()
    assert not app.exception
    shown = _markdown(app)
    assert "2016: 12,345,000,000" in shown  # Inventories now read as sales, in millions
    assert "2016: 300,000,000,000" in shown
    # the preview survives a page switch, with the choices made
    _open(app, "memo")
    _open(app, "borrower")
    assert _select(app, "Field for Inventories").value == "sales"
    assert _select(app, "Field for Revenue").value == "not used"
    assert _select(app, "Amounts in the file are in").value == "millions"
    _button(app, "Accept these statements").click().run()
    assert not app.exception
    raw = app.session_state["raw"]
    _same_rows(raw["statements"], [{k: v for k, v in r.items() if k != "sales"} for r in PLAIN], factor=1000.0)
    assert all(row["sales"] == pytest.approx(12_345 * 1e6) for row in raw["statements"])
    source = raw["statements_source"]
    assert source["unit"] == "millions"
    assert source["mapping"]["Revenue"] == "ignore" and source["mapping"]["Inventories"] == "sales"
    assert source["mapping"]["Total Assets"] == "total_assets"
    assert source["unrecognised"] == []
    # The case file as downloaded re-reads to the same case, and its unit and mapping read the
    # same file into the same statements.
    text = state.case_file_text(raw, "yaml")
    again = case_to_dict(load_case_text(text, "case.yaml"))
    assert again == raw
    reread = read_statements(data, name, unit=again["statements_source"]["unit"], mapping=source["mapping"])
    assert reread.rows == _filled(again["statements"])
    # ...and so does a case file that names the file with that unit and mapping
    (tmp_path / name).write_bytes(data)
    spec = {**raw, "statements": {"file": name, "unit": source["unit"], "mapping": source["mapping"]}}
    spec.pop("statements_source")
    from_file = case_to_dict(load_case_text(json.dumps(spec), "case.json", base_dir=tmp_path))
    assert _filled(from_file["statements"]) == _filled(raw["statements"])
    # A new upload of the same file starts from the saved choices.
    _upload(app, name)
    assert _select(app, "Field for Inventories").value == "sales"
    assert _select(app, "Field for Revenue").value == "not used"
    assert app.session_state["mapping_preview"]["read"]["unit"] == "thousands"  # the file's title says so


def test_a_required_line_left_without_a_field_is_named_and_blocks_accepting(app):
    _open(app, "borrower")
    _upload(app, "statements_long_millions.csv")
    _select(app, "Field for Total Assets").set_value("not used").run()
    assert not app.exception
    assert "Total assets: no line of the file goes to it" in _errors(app)
    assert _button(app, "Accept these statements").disabled
    # another choice (here the unit) drops the unread line choice: the selects show the preview again
    _select(app, "Amounts in the file are in").set_value("thousands").run()
    assert "no line of the file goes to it" not in _errors(app)
    assert _select(app, "Field for Total Assets").value == "total_assets"
    assert app.session_state["mapping_preview"]["read"]["unit"] == "thousands"
    _select(app, "Field for Total Assets").set_value("not used").run()
    assert _button(app, "Accept these statements").disabled
    _select(app, "Field for Employees").set_value("total_assets").run()
    assert "no line of the file goes to it" not in _errors(app)
    assert not _button(app, "Accept these statements").disabled


def test_cancel_leaves_the_case_unchanged(app):
    _open(app, "borrower")
    before = json.dumps(app.session_state["raw"], sort_keys=True)
    _upload(app, "statements_long_millions.csv")
    _select(app, "Amounts in the file are in").set_value("thousands").run()
    _button(app, "Cancel").click().run()
    assert not app.exception
    assert json.dumps(app.session_state["raw"], sort_keys=True) == before
    assert "mapping_preview" not in app.session_state
    assert "Check the statements read from" not in _markdown(app)


@pytest.mark.parametrize(
    ("name", "expected"),
    [
        ("bad_cell.csv", ["bad_cell.csv", "row 3, column total_assets", "'abc'", "a number such as"]),
        ("broken.xlsx", ["broken.xlsx", "Excel 2007+ workbook (.xlsx) or a CSV file"]),
        ("misspelled_header.csv", ["misspelled_header.csv", "total_asets"]),
    ],
)
def test_a_bad_file_gives_a_message_naming_the_file_and_the_cell(app, name, expected):
    _open(app, "borrower")
    before = json.dumps(app.session_state["raw"], sort_keys=True)
    _upload(app, name)
    message = _errors(app)
    for part in expected:
        assert part in message, message
    assert "unchanged" in message and "Traceback" not in message
    assert "mapping_preview" not in app.session_state
    assert json.dumps(app.session_state["raw"], sort_keys=True) == before


def test_a_value_the_case_refuses_is_shown_before_accepting_with_its_year(app):
    _open(app, "borrower")
    rows = (
        b"Year,Total assets,Current liabilities,Non-current liabilities\n"
        b"2022,100,40,30\n2023,110,-5,30\n2024,120,45,30\n"
    )
    _upload(app, "neg.csv", rows)
    message = _errors(app)
    assert "Statements, year 2023, short-term liabilities: got -5" in message
    assert "statements[" not in message


def test_the_orientation_can_be_changed_and_a_reading_that_does_not_fit_keeps_the_preview(app):
    _open(app, "borrower")
    _upload(app, "statements_wide_dates.xlsx")
    before = app.session_state["mapping_preview"]["read"]
    _select(app, "Years run").set_value("long").run()
    assert not app.exception
    message = _errors(app)
    assert "statements_wide_dates.xlsx" in message and "a year column" in message
    assert "The preview below is as before" in message
    assert app.session_state["mapping_preview"]["read"] == before
    assert _select(app, "Years run").value == "wide"  # the select shows what the preview holds
    assert not _button(app, "Accept these statements").disabled  # the preview as before may be accepted
    _select(app, "Years run").set_value("long").run()  # tried again: same message, nothing lost
    assert app.session_state["mapping_preview"]["read"] == before


def test_a_long_table_read_with_the_years_across_is_refused_and_the_preview_still_accepted(app):
    _open(app, "borrower")
    _upload(app, "statements_long_millions.csv")
    _select(app, "Years run").set_value("wide").run()
    assert "two or more years" in _errors(app)
    assert _select(app, "Years run").value == "long"
    _button(app, "Accept these statements").click().run()
    assert app.session_state["raw"]["statements_source"]["orientation"] == "long"
    _same_rows(app.session_state["raw"]["statements"], PLAIN)


TABLE = "Year,Total assets,Current liabilities,Non-current liabilities\n2023,10,4,3\n2024,11,4,3\n"


@pytest.mark.parametrize(
    ("title", "unit"),
    [
        ("Key figures (EUR k)", "thousands"),
        ("Amounts in EUR thousands", "thousands"),
        ("in '000", "thousands"),
        ("Figures in TEUR", "thousands"),
        ("Statements (EUR m)", "millions"),
        ("USD millions", "millions"),
        ("mEUR", "millions"),
        ("I'm the borrower's title", None),
        ("Key financials", None),
        ("EUR m, some lines in EUR k", None),  # two units named: none chosen
    ],
)
def test_the_unit_named_in_a_title_row_is_found(title, unit):
    hint = state.unit_hint(f"{title}\n{TABLE}".encode(), "s.csv")
    assert (hint[0] if hint else None) == unit
    if hint:
        assert hint[1] == title


def test_a_title_naming_the_unit_sets_it_in_the_preview_and_the_rows(app):
    _open(app, "borrower")
    _upload(app, "k.csv", f"Key figures (EUR k)\n{TABLE}".encode())
    read = app.session_state["mapping_preview"]["read"]
    assert read["unit"] == "thousands" and read["rows"][0]["total_assets"] == 10_000.0
    assert "The file says “Key figures (EUR k)”: amounts are read in thousands." in " ".join(
        c.value for c in app.caption
    )
