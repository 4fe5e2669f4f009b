"""Shared helpers for the workbench's AppTest files: a fresh app on a temporary working folder,
page switching, and readers for charts, fields, metrics and error messages."""

from __future__ import annotations

from pathlib import Path

import pytest
from obligor_memo.app.workbench.state import WORKDIR_ENV
from streamlit.testing.v1 import AppTest

WORKBENCH = str(Path(__file__).resolve().parent.parent / "app" / "workbench" / "main.py")


@pytest.fixture()
def app(tmp_path, monkeypatch):
    monkeypatch.setenv(WORKDIR_ENV, str(tmp_path))
    at = AppTest.from_file(WORKBENCH, default_timeout=30)
    at.run()
    assert not at.exception
    return at


def _open(at: AppTest, page: str) -> AppTest:
    at.switch_page(f"steps/{page}.py")
    at.run()
    assert not at.exception, [e.value for e in at.exception]
    return at


def _specs(at: AppTest) -> list[str]:
    return [chart.proto.spec for chart in at.get("plotly_chart")]


def _number(at: AppTest, label: str):
    """A number field: a text field read as people write numbers (rates in %, amounts grouped)."""
    found = [w for w in at.text_input if w.label == label]
    assert found, f"no number field labelled {label!r}"
    return found[0]


def _metric(at: AppTest, label: str) -> str:
    return next(m.value for m in at.metric if m.label == label)


def _errors(at: AppTest) -> str:
    return " ".join(e.value for e in at.error)
