"""Browser faults while printing the memo: missing, hanging, crashing at once, dying after start.

Each fault must end, within a short timeout, in exit code 2 and one paragraph naming the fix
(the command line) or an on-screen message with a way to print without charts (the workbench);
never a traceback, and never a browser process left behind. The fake browsers are small shell
scripts; each writes its process group id to a file so the test can check that the whole group
is gone afterwards. Timeouts are shortened through OBLIGOR_MEMO_CHART_TIMEOUT.
"""

from __future__ import annotations

import os
import signal
import time
from pathlib import Path

import pytest
from click.testing import CliRunner
from obligor_memo.app import memo
from obligor_memo.app.cli import main
from obligor_memo.app.memo import chart_browser, chart_pages, fetch, layout, render, svg_slim, templates, view  # noqa: F401
from obligor_memo.app.memo import figures as memo_figures
from obligor_memo.app.memo.chart_browser import DEFAULT_TIMEOUT_SECONDS

SHORT_TIMEOUT = "1"  # seconds: long enough for a script to start, short enough for the suite

HANG = "sleep 600\n"
CRASH_AT_ONCE = "exit 1\n"
START_THEN_DIE = "sleep 0.5\nexit 1\n"
FAKES = {"hanging": HANG, "crashing at once": CRASH_AT_ONCE, "starting then dying": START_THEN_DIE}


def fake_browser(folder: Path, body: str) -> Path:
    """An executable that records its process group (field 5 of /proc/PID/stat), then ``body``."""
    script = folder / "fake-chromium"
    script.write_text(f"#!/bin/sh\ncut -d' ' -f5 /proc/$$/stat > '{folder / 'pgid'}'\n" + body)
    script.chmod(0o755)
    return script


def assert_group_gone(folder: Path) -> None:
    pgid_file = folder / "pgid"
    if not pgid_file.exists():  # the script never ran (missing) or died before writing
        return
    group = int(pgid_file.read_text().split()[0])
    deadline = time.monotonic() + 3  # the kernel reaps a killed group within moments
    while chart_browser.process_group_members(group) and time.monotonic() < deadline:
        time.sleep(0.05)
    assert chart_browser.process_group_members(group) == [], f"browser processes left in group {group}"


@pytest.fixture(autouse=True)
def _short_timeout(monkeypatch):
    monkeypatch.setenv(chart_browser.TIMEOUT_VARIABLE, SHORT_TIMEOUT)
    memo.stop_chart_exporter()
    # Figures drawn by earlier tests would be reused without any browser, hiding the fault.
    monkeypatch.setattr(memo_figures, "_SVG_CACHE", {})
    yield
    memo.stop_chart_exporter()


def run_memo(tmp_path: Path, sample_case_path: Path):
    out = tmp_path / "m.pdf"
    started = time.monotonic()
    result = CliRunner().invoke(main, ["memo", str(sample_case_path), "-o", str(out)])
    return result, out, time.monotonic() - started


@pytest.mark.parametrize("kind", sorted(FAKES))
def test_memo_command_reports_a_faulty_browser(kind, tmp_path, monkeypatch, sample_case_path):
    monkeypatch.setenv("BROWSER_PATH", str(fake_browser(tmp_path, FAKES[kind])))
    result, out, seconds = run_memo(tmp_path, sample_case_path)
    assert result.exit_code == 2, result.output
    assert "Traceback" not in result.output and not out.exists()
    assert "could not be started" in result.output and "--no-charts" in result.output
    # The short start-up timeout was honoured: waiting for the default one (30 s) would take longer
    # than the whole command did. (The rest of the time is the analysis and layout, which depend
    # on the machine; bench/ measures them.)
    assert seconds < DEFAULT_TIMEOUT_SECONDS
    assert_group_gone(tmp_path)


def test_memo_command_reports_a_missing_browser(tmp_path, monkeypatch, sample_case_path):
    monkeypatch.setenv("BROWSER_PATH", str(tmp_path / "no-such-chromium"))
    result, out, _ = run_memo(tmp_path, sample_case_path)
    assert result.exit_code == 2 and not out.exists()
    assert "BROWSER_PATH" in result.output and "apt-get install chromium" in result.output
    assert "Traceback" not in result.output


def test_memo_command_without_charts_needs_no_browser(tmp_path, monkeypatch, sample_case_path):
    monkeypatch.setenv("BROWSER_PATH", str(fake_browser(tmp_path, HANG)))
    out = tmp_path / "m.pdf"
    result = CliRunner().invoke(main, ["memo", str(sample_case_path), "-o", str(out), "--no-charts"])
    assert result.exit_code == 0, result.output
    assert out.read_bytes().startswith(b"%PDF-")
    assert not (tmp_path / "pgid").exists()  # the fake browser was never started


@pytest.mark.parametrize("text", ["0", "-3", "soon", "1e9"])
def test_bad_timeout_setting_names_the_variable(text, monkeypatch):
    monkeypatch.setenv(chart_browser.TIMEOUT_VARIABLE, text)
    with pytest.raises(memo.ChartsUnavailable, match=f"{chart_browser.TIMEOUT_VARIABLE}.*{text!r}"):
        chart_browser.chart_timeout()


@pytest.mark.browser
@pytest.mark.slow
@pytest.mark.skipif(not os.path.exists("/usr/bin/chromium"), reason="needs a real Chromium")
def test_browser_killed_after_start_is_replaced_once_and_cleaned_up(sample_case, monkeypatch):
    """A real browser that dies between two memos: the next export starts one fresh browser (a
    single retry), draws, and leaves nothing of the dead one behind."""
    from obligor_memo.engine.evaluate import evaluate

    monkeypatch.setenv(chart_browser.TIMEOUT_VARIABLE, "60")  # a real start-up on a busy machine

    exporter = memo.start_chart_exporter()
    group = exporter.process_group
    assert group is not None and chart_browser.process_group_members(group)
    os.killpg(group, signal.SIGKILL)  # as an out-of-memory kill would
    built, _ = memo_figures.build_figures(evaluate(sample_case))
    try:
        svgs = exporter.export_svg(dict(list(built.items())[:1]))
        assert all(svg.lstrip().startswith("<svg") for svg in svgs.values())
        assert chart_browser.process_group_members(group) == []
        assert exporter.running and exporter.process_group != group
    finally:
        memo.stop_chart_exporter()
        exporter.close(force=True)


def test_a_browser_that_keeps_failing_is_reported_after_one_retry(monkeypatch):
    """Two drawing failures in a row end in the message naming the fix (no endless retries)."""
    calls = []

    def failing(self, figures):
        calls.append(1)
        raise memo.ChartsUnavailable(chart_browser._DRAWING_FAILED + " (test). Try again.")

    monkeypatch.setattr(chart_browser.ChartExporter, "_export_once", failing)
    with pytest.raises(memo.ChartsUnavailable, match="Try again"):
        chart_browser.ChartExporter(browser_path="/bin/true").export_svg({})
    assert len(calls) == 2


# --------------------------------------------------------------------------- workbench


def _memo_page(tmp_path: Path, monkeypatch):
    from obligor_memo.app.workbench.state import WORKDIR_ENV
    from streamlit.testing.v1 import AppTest

    monkeypatch.setenv(WORKDIR_ENV, str(tmp_path / "work"))
    at = AppTest.from_file(
        str(Path(__file__).resolve().parent.parent / "app" / "workbench" / "main.py"), default_timeout=60
    )
    at.run()
    at.switch_page("steps/memo.py")
    at.run()
    assert not at.exception
    return at


def _button(at, label: str):
    found = [b for b in at.button if b.label == label]
    assert found, f"no button {label!r}: {[b.label for b in at.button]}"
    return found[0]


def _downloads(at) -> list:
    return [d for d in at.get("download_button") if "(PDF)" in d.proto.label]


@pytest.mark.parametrize("kind", ["missing", pytest.param("hanging", marks=pytest.mark.slow)])
def test_memo_page_reports_the_fault_and_prints_without_charts(kind, tmp_path, monkeypatch):
    if kind == "missing":
        monkeypatch.setenv("BROWSER_PATH", str(tmp_path / "no-such-chromium"))
    else:
        monkeypatch.setenv("BROWSER_PATH", str(fake_browser(tmp_path, HANG)))
    at = _memo_page(tmp_path, monkeypatch)
    _button(at, "Print the memo (PDF)").click().run()
    assert not at.exception
    message = " ".join(e.value for e in at.error)
    assert "charts could not be drawn" in message and "without charts" in message
    assert not _downloads(at)
    # The page stays usable: the narrative still edits, and the memo prints without charts.
    [w for w in at.text_input if w.label == "Reviewed by"][0].set_value("R. Second").run()
    assert at.session_state["raw"]["memo"]["reviewed_by"] == "R. Second"
    _button(at, "Print the memo without charts").click().run()
    assert not at.exception
    assert [d.proto.label for d in _downloads(at)] == ["Memo without charts (PDF)"]
    assert at.session_state["memo_pdf"][1].startswith(b"%PDF-")
    # Nothing starts the faulty browser again ahead of a click: not the edit, not the plain print.
    from obligor_memo.app.workbench import print_ahead

    assert not [key for key in print_ahead.printer().keys() if key[1]]
    memo.stop_chart_exporter()
    assert_group_gone(tmp_path)


def test_memo_page_prints_the_technical_annex_when_ticked(tmp_path, monkeypatch):
    """The committee memo by default; the box adds the annex, and switching it asks for a reprint."""
    import subprocess

    monkeypatch.setenv("BROWSER_PATH", str(tmp_path / "no-such-chromium"))
    at = _memo_page(tmp_path, monkeypatch)
    [c for c in at.checkbox if c.label == "Technical annex"][0].check().run()
    _button(at, "Print the memo (PDF)").click().run()  # no browser: the charts fail
    _button(at, "Print the memo without charts").click().run()
    assert not at.exception
    assert [d.proto.label for d in _downloads(at)] == ["Memo with annex, without charts (PDF)"]
    pdf = at.session_state["memo_pdf"][1]
    text = subprocess.run(["pdftotext", "-", "-"], input=pdf, capture_output=True, check=True).stdout.decode()
    assert "Methods and sources" in text and "Every other input, as in the case file (YAML)" in text
    [c for c in at.checkbox if c.label == "Technical annex"][0].uncheck().run()
    assert not _downloads(at)
    assert any("annex was switched" in c.value for c in at.caption)
    memo.stop_chart_exporter()


def test_memo_page_analyses_the_case_before_the_click(tmp_path, monkeypatch):
    """The page analyses the case once it is drawn; the print after the click reuses that analysis."""
    import streamlit as st
    from obligor_memo.engine import analysis

    calls = []
    real = analysis.analyse

    def counted(*args, **kwargs):
        calls.append(1)
        return real(*args, **kwargs)

    monkeypatch.setattr(analysis, "analyse", counted)
    monkeypatch.setenv("BROWSER_PATH", str(tmp_path / "no-such-chromium"))
    from obligor_memo.app.workbench import print_ahead
    from obligor_memo.app.workbench import ui as workbench_ui

    st.cache_resource.clear()
    workbench_ui.ANALYSES.clear()
    at = _memo_page(tmp_path, monkeypatch)
    for key in print_ahead.printer().keys():  # the print ahead analyses first, then fails (no browser)
        print_ahead.printer().job(key).wait(120)
    assert len(calls) == 1  # the page on screen: analysed ahead of any click
    _button(at, "Print the memo (PDF)").click().run()  # no browser: the charts fail
    _button(at, "Print the memo without charts").click().run()
    assert not at.exception
    assert at.session_state["memo_pdf"][1].startswith(b"%PDF-")
    assert len(calls) == 1  # the print did not analyse again
    memo.stop_chart_exporter()
