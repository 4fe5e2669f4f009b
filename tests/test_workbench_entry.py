"""Numbers as people type them, rates as percentages, and messages in the screen's words: the
rules of app/workbench/entry.py on their own, the grid's change handling, then each page's
messages through Streamlit's AppTest (label wording, facility ids, statement years)."""

from __future__ import annotations

import json

import pytest
from obligor_memo.app.workbench import entry
from obligor_memo.app.workbench.state import WORKDIR_ENV, sample_case_dict
from streamlit.testing.v1 import AppTest
from workbench_support import WORKBENCH, _errors, _metric, _number, _open, app  # noqa: F401


@pytest.mark.parametrize(
    ("text", "unit", "expected"),
    [
        ("2.75", entry.PERCENT, 0.0275),  # the case file's own spelling of 2.75 %
        ("2,75", entry.PERCENT, 0.0275),  # a decimal comma is a decimal mark, never thousands
        ("0,4", entry.PERCENT, 0.004),
        ("12 %", entry.PERCENT, 0.12),
        ("2.7", entry.PERCENT, 0.027),  # decimal arithmetic: not 0.027000000000000003
        ("99.9", entry.PERCENT, 0.999),
        ("90,000,000", entry.MONEY, 90_000_000.0),
        ("90 000 000", entry.MONEY, 90_000_000.0),
        ("90m", entry.MONEY, 90_000_000.0),
        ("1.5bn", entry.MONEY, 1_500_000_000.0),
        ("250k", entry.MONEY, 250_000.0),
        ("\u22125", entry.MONEY, -5.0),  # a typographic minus from a word processor
        ("5", entry.INTEGER, 5),
        ("", entry.PERCENT, None),  # empty: not set
        ("   ", entry.MONEY, None),
    ],
)
def test_numbers_are_read_as_people_write_them(text, unit, expected):
    assert entry.store(entry.parse(text, unit), unit) == expected


@pytest.mark.parametrize(
    ("text", "unit"), [("abc", entry.PERCENT), ("1,2,3", entry.NUMBER), ("1.2.3", entry.MONEY), ("5.5", entry.INTEGER)]
)
def test_what_is_not_a_number_is_refused_with_what_is_allowed(text, unit):
    with pytest.raises(entry.EntryError) as caught:
        entry.parse(text, unit)
    assert repr(text) in caught.value.reason and "allowed" in caught.value.reason


@pytest.mark.parametrize("fraction", [0.0275, 0.999, 0.0005, 0.55, 1.0, 0.0, 0.123456])
def test_a_stored_rate_shows_as_the_percentage_that_reads_back_to_it(fraction):
    shown = entry.show(fraction, entry.PERCENT)
    assert entry.store(entry.parse(shown, entry.PERCENT), entry.PERCENT) == fraction


def test_engine_paths_become_the_screen_words():
    raw = sample_case_dict()
    assert entry.where("facilities[1].recovery.std", raw) == "Facility RCF-1, recovery std"
    assert entry.where("statements[0].total_assets", raw) == "Statements, year 2016, total assets"
    assert entry.where("pricing.proposed_spread", raw) == "Proposed spread"
    text = entry.message("pricing.proposed_spread", 5, "a number from -0.05 to 0.5", raw)
    assert text == "Proposed spread: got 500 %; allowed: a number from -5 % to 50 %."
    money = entry.message("statements[2].total_assets", -5, "a number from 0 (exclusive) to 1e+15", raw)
    assert "1,000,000,000,000,000" in money and "year 2018" in money
    overlay = entry.message("what-if.set['facilities.TL-A.recovery.mean']", 0.999, "a number", raw)
    assert overlay.startswith("What-if, Facility TL-A, recovery mean: got 99.9 %")
    assert entry.override_words("pd.asset_growth", -0.05) == "Asset growth -5 %"
    assert entry.override_words("facilities.RCF-1.ccf", 1.0) == "Facility RCF-1, CCF 100 %"


def test_a_grid_change_is_applied_to_the_case_records_keeping_what_the_grid_does_not_show():
    from obligor_memo.app.workbench.grids import FACILITY_COLUMNS, FACILITY_DEFAULTS, grid_frame
    from obligor_memo.app.workbench.ui import grids

    records = sample_case_dict()["facilities"]
    frame = grid_frame(records, FACILITY_COLUMNS)
    assert frame.loc[0, "kind"] == "Term loan" and frame.loc[1, "ccf"] == "preset"
    assert frame.loc[0, "committed"] == 120_000_000
    delta = {
        "edited_rows": {"1": {"ccf": "75", "committed": 70_000_000, "kind": "Guarantee"}},
        "added_rows": [{"id": "NEW-1", "kind": "Term loan", "committed": 5_000_000, "drawn": 0}],
        "deleted_rows": [4],
    }
    out = grids.apply_grid_delta(records, delta, FACILITY_COLUMNS, FACILITY_DEFAULTS)
    assert [f["id"] for f in out] == ["TL-A", "RCF-1", "NOTE-29", "GTE-SF", "NEW-1"]
    assert out[1]["ccf"] == 0.75 and out[1]["committed"] == 70_000_000 and out[1]["kind"] == "guarantee"
    # TL-A's recovery and collateral are not in the grid: they survive every grid change.
    assert out[0]["collateral"] == records[0]["collateral"] and out[0]["recovery"] == records[0]["recovery"]
    assert out[4]["status"] == "new" and out[4]["cancellable"] is False
    # "preset" typed back (or the cell emptied) clears the analyst's CCF.
    again = grids.apply_grid_delta(out, {"edited_rows": {"1": {"ccf": "preset"}}}, FACILITY_COLUMNS)
    assert again[1]["ccf"] is None


def test_letters_in_a_rate_get_a_message_and_are_kept_as_typed(app):
    _open(app, "loss")
    _number(app, "Proposed spread (% a year)").set_value("2.7five").run()
    assert not app.exception
    assert "Proposed spread (% a year): got '2.7five'; allowed: a percentage such as 2.75" in _errors(app)
    assert app.session_state["raw"]["pricing"]["proposed_spread"] == "2.7five"  # nothing typed is lost
    assert app.session_state["valid"]["pricing"]["proposed_spread"] == 0.0275
    _open(app, "borrower")
    _open(app, "loss")
    assert _number(app, "Proposed spread (% a year)").value == "2.7five"
    _number(app, "Proposed spread (% a year)").set_value("0,4").run()
    assert app.session_state["raw"]["pricing"]["proposed_spread"] == 0.004  # 0.4 %, never 4 %
    assert "2.7five" not in _errors(app)


def test_a_problem_on_another_page_is_named_there_with_a_link(app):
    _open(app, "recovery")
    _number(app, "Recovery std (%)").set_value("60").run()
    # Beta law by moments needs std^2 < m(upper - m) (Johnson, Kotz and Balakrishnan, ch. 25).
    assert "Facility TL-A, recovery std: got 60 %; allowed: a std below 49.75 % for mean 55 %" in _errors(app)
    _open(app, "loss")
    warnings = " ".join(w.value for w in app.warning)
    assert "On the page 'Recovery and LGD': Facility TL-A, recovery std." in warnings
    assert "facilities[0]" not in warnings + _errors(app)


def test_overrides_can_be_cleared_and_the_window_can_go_back_to_all_years(app):
    _open(app, "asset_pd")
    model_pd = _metric(app, "PD in force")
    _number(app, "Asset volatility override (% a year)").set_value("20").run()
    assert app.session_state["raw"]["pd"]["asset_volatility"] == 0.2
    assert _metric(app, "PD in force") != model_pd
    _number(app, "Asset volatility override (% a year)").set_value("").run()
    assert app.session_state["raw"]["pd"]["asset_volatility"] is None
    assert _metric(app, "PD in force") == model_pd
    _number(app, "Window (years; empty = all years)").set_value("5").run()
    assert app.session_state["raw"]["pd"]["window_years"] == 5
    _number(app, "Window (years; empty = all years)").set_value("").run()
    assert app.session_state["raw"]["pd"]["window_years"] is None
    assert _metric(app, "PD in force") == model_pd


def test_one_undo_brings_back_the_case_before_the_last_change(app):
    _open(app, "loss")
    _number(app, "Hurdle rate (% a year)").set_value("15").run()
    assert app.session_state["raw"]["pricing"]["hurdle_rate"] == 0.15
    next(b for b in app.button if b.label == "Undo the last change").click().run()
    assert app.session_state["raw"]["pricing"]["hurdle_rate"] == 0.12
    assert _number(app, "Hurdle rate (% a year)").value == "12"


def test_the_key_figure_strip_follows_the_case_on_every_page(app):
    def strip() -> str:
        return " ".join(m.value for m in app.sidebar.markdown if "key-figures" in m.value)

    for page in ("borrower", "asset_pd", "exposure", "recovery", "loss", "whatif", "memo"):
        _open(app, page)
        assert "Total EAD" in strip() and "EUR 198.80m" in strip() and "RAROC" in strip()
    _open(app, "loss")
    _number(app, "Proposed spread (% a year)").set_value("1").run()
    raroc = _metric(app, "RAROC")
    _open(app, "memo")
    assert f'<span class="kf-value">{raroc}</span>' in strip()


def test_a_second_session_on_the_same_case_is_told_instead_of_overwriting(tmp_path, monkeypatch):
    monkeypatch.setenv(WORKDIR_ENV, str(tmp_path))
    first = AppTest.from_file(WORKBENCH, default_timeout=30)
    first.run()
    second = AppTest.from_file(WORKBENCH, default_timeout=30)
    second.query_params["case"] = first.session_state["case_id"]
    second.run()
    [w for w in second.text_input if w.label == "Name"][0].set_value("From the second tab").run()
    [w for w in first.text_input if w.label == "Sector"][0].set_value("From the first tab").run()
    assert "was saved from another tab or window" in _errors(first)
    saved = json.loads((tmp_path / "cases" / f"{first.session_state['case_id']}.json").read_text())
    assert saved["raw"]["borrower"]["name"] == "From the second tab"
    assert saved["raw"]["borrower"]["sector"] != "From the first tab"
    next(b for b in first.button if b.label == "Keep this tab's version").click().run()
    saved = json.loads((tmp_path / "cases" / f"{first.session_state['case_id']}.json").read_text())
    assert saved["raw"]["borrower"]["sector"] == "From the first tab" and saved["revision"] == 4


def test_a_covenant_row_reads_its_threshold_in_the_metric_s_unit_and_takes_its_direction():
    from obligor_memo.app.workbench import grids

    delta = {"added_rows": [{"metric": "EBITDA margin", "threshold": "12", "tested": "quarterly"}]}
    rows = grids.apply_grid_delta([], delta, grids.COVENANT_COLUMNS, {"tested": "annual"})
    rows = [grids.complete_covenant(r) for r in rows]
    # A margin is a rate: typed in per cent, stored as a fraction; a floor, so "min".
    assert rows == [{"tested": "quarterly", "metric": "ebitda_margin", "threshold": 0.12, "direction": "min"}]
    lev = grids.apply_grid_delta(
        rows, {"edited_rows": {"0": {"metric": "Net debt / EBITDA", "threshold": "4"}}}, grids.COVENANT_COLUMNS
    )
    lev = [grids.complete_covenant(r) for r in lev]
    assert lev[0]["threshold"] == 4.0 and lev[0]["direction"] == "max"
    frame = grids.grid_frame(rows, grids.COVENANT_COLUMNS)
    assert frame.loc[0, "threshold"] == "12" and frame.loc[0, "metric"] == "EBITDA margin"
