"""Bad input through the workbench gives a message beside its field, never an exception, and keeps
the rest of the case; each browser session keeps its own case on disk."""

from __future__ import annotations

import json

from obligor_memo.app.workbench.state import WORKDIR_ENV
from streamlit.testing.v1 import AppTest
from workbench_support import WORKBENCH, _errors, _metric, _number, _open, _specs, app  # noqa: F401


def test_recovery_page_infeasible_std_gives_message_and_keeps_results(app):
    _open(app, "recovery")
    before = _specs(app)
    _number(app, "Recovery std (%)").set_value("60").run()
    assert not app.exception
    # Beta law by moments needs std^2 < m(1 - m) (Johnson, Kotz and Balakrishnan, ch. 25).
    assert "std below" in _errors(app)
    assert _specs(app) == before  # the chart still shows the last valid case


def test_negative_collateral_value_is_refused_beside_its_field(app):
    _open(app, "recovery")
    _number(app, "Collateral value (EUR)").set_value("-5").run()
    assert not app.exception
    assert "Facility TL-A, collateral value: got -5" in _errors(app)
    assert app.session_state["raw"]["facilities"][0]["collateral"]["value"] == -5.0
    assert app.session_state["valid"]["facilities"][0]["collateral"]["value"] == 90_000_000.0


def test_borrower_page_broken_upload_gives_message_and_keeps_case(app):
    _open(app, "borrower")
    raw_before = json.dumps(app.session_state["raw"], sort_keys=True)
    app.file_uploader[1].set_value(("broken.csv", b"year;;;\n\x00\x01garbage", "text/csv")).run()
    assert not app.exception
    assert "unchanged" in _errors(app)
    assert json.dumps(app.session_state["raw"], sort_keys=True) == raw_before
    app.file_uploader[0].set_value(("case.yaml", b"borrower: [unclosed", "application/x-yaml")).run()
    assert not app.exception and "valid YAML" in _errors(app)


def test_borrower_page_negative_statement_amount_is_flagged(app):
    _open(app, "borrower")
    rows = (
        b"year,total_assets,short_term_liabilities,long_term_liabilities\n"
        b"2022,100,40,30\n2023,110,-5,30\n2024,120,45,30\n"
    )
    app.file_uploader[1].set_value(("neg.csv", rows, "text/csv")).run()
    assert not app.exception
    message = _errors(app)
    assert "short_term_liabilities" in message or "short-term" in message
    # The other inputs stay: facilities and memo untouched, the last valid case still evaluates.
    assert len(app.session_state["raw"]["facilities"]) == 5
    _open(app, "asset_pd")
    assert _metric(app, "PD in force") != "n/a"


def test_sessions_are_separate_and_restore_from_the_address(tmp_path, monkeypatch):
    monkeypatch.setenv(WORKDIR_ENV, str(tmp_path))
    first, second = AppTest.from_file(WORKBENCH), AppTest.from_file(WORKBENCH)
    first.run()
    second.run()
    assert first.session_state["case_id"] != second.session_state["case_id"]
    _open(first, "memo")
    [w for w in first.text_input if w.label == "Reviewed by"][0].set_value("Only in the first").run()
    assert second.session_state["raw"]["memo"]["reviewed_by"] == ""
    # A new session opened on the first one's address finds its autosave (a browser refresh).
    third = AppTest.from_file(WORKBENCH)
    third.query_params["case"] = first.session_state["case_id"]
    third.run()
    assert third.session_state["raw"]["memo"]["reviewed_by"] == "Only in the first"
