"""The results workbook from the "Memo and files" page: the download button's bytes are the
workbook of ``obligor-memo export`` (same sheets, same figures), named after the borrower."""

from __future__ import annotations

import io

import openpyxl
from obligor_memo.app.present.export import tables
from obligor_memo.app.workbench import state
from obligor_memo.engine.analysis import analyse
from obligor_memo.engine.case import parse_case
from streamlit.runtime.media_file_manager import MediaFileManager
from workbench_support import _open, app  # noqa: F401


def test_download_results_gives_the_export_workbook(app, monkeypatch):
    built: dict[str, object] = {}
    original = MediaFileManager.add_deferred

    def recording(self, data_callable, mimetype, coordinates, file_name=None, **kw):
        file_id = original(self, data_callable, mimetype, coordinates, file_name, **kw)
        built[file_name or ""] = data_callable
        return file_id

    monkeypatch.setattr(MediaFileManager, "add_deferred", recording)
    _open(app, "memo")
    button = next(d for d in app.get("download_button") if d.proto.label == "Results (XLSX)")
    assert button.proto.deferred_file_id  # built when clicked, not on every run of the page
    assert "Hollowmere_Lifting_Group_results.xlsx" in built
    data = built["Hollowmere_Lifting_Group_results.xlsx"]()
    assert isinstance(data, bytes)
    book = openpyxl.load_workbook(io.BytesIO(data))
    expected = tables(analyse(parse_case(state.sample_case_dict())))
    assert book.sheetnames == [title[:31] for title in expected]
    sheet = book["statements"]
    header = [c.value for c in sheet[1]]
    assert header[0] == "year" and "unit_in_file" in header
    assert sheet.max_row - 1 == len(expected["statements"])
    assert sheet.freeze_panes == "A2"
