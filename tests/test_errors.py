"""One structured error from the engine's steps: field, value and allowed text travel as data."""

from __future__ import annotations

import logging

import pytest
from obligor_memo.engine.errors import CaseError, InputError, Problem
from obligor_memo.engine.pd_estimate import engine_error
from obligor_memo.engine.structural import default_point
from obligor_memo.engine.trend import fit_asset_trend


def test_step_raises_input_error_with_its_parts():
    with pytest.raises(InputError) as caught:
        default_point(short_term_liabilities=10.0, long_term_liabilities=5.0, long_term_share=1.5)
    err = caught.value
    assert isinstance(err, ValueError)
    assert (err.field, err.value) == ("pd.default_point.long_term_share", 1.5)
    assert err.allowed == "a number from 0 to 1"
    assert str(err) == "pd.default_point.long_term_share: got 1.5; allowed: a number from 0 to 1"


def test_engine_error_reads_the_attributes_not_the_text():
    # A message that a text parser would split wrongly ("x: y" inside the allowed text) keeps
    # its field and allowed text intact because nothing is parsed.
    err = InputError("pd.asset_volatility", 0.0, "a volatility above 0: set pd.asset_volatility")
    case_error = engine_error("statements", err)
    assert isinstance(case_error, CaseError)
    assert case_error.problems == (
        Problem("pd.asset_volatility", 0.0, "a volatility above 0: set pd.asset_volatility"),
    )


def test_a_plain_value_error_is_reported_on_the_given_field_whole():
    case_error = engine_error("statements", ValueError("years: got 3; allowed: 4"))
    assert case_error.problems == (Problem("statements", "", "years: got 3; allowed: 4"),)


def test_trend_step_error_reaches_the_user_with_its_field():
    with pytest.raises(InputError) as caught:
        fit_asset_trend(
            years=[2020, 2021],
            total_assets=[1.0, 2.0],
            window_years=None,
            growth_override=None,
            volatility_override=None,
        )
    assert caught.value.field == "statements"
    assert "pd.asset_volatility" in caught.value.allowed


def test_swallowed_cleanup_errors_are_logged(caplog, tmp_path, monkeypatch):
    """A failed clean-up after a failed autosave write is logged, and the write's error raised."""
    import os

    from obligor_memo.app.workbench import state

    def failing_replace(src, dst):
        raise OSError("disk full")

    def failing_unlink(path):
        raise OSError("read-only folder")

    monkeypatch.setattr(os, "replace", failing_replace)
    monkeypatch.setattr(os, "unlink", failing_unlink)
    with caplog.at_level(logging.WARNING, logger="obligor_memo.app.workbench.state"):
        with pytest.raises(OSError, match="disk full"):
            state._atomic_write(tmp_path / "case.json", "{}")
    assert any("temporary file" in r.getMessage() for r in caplog.records)
