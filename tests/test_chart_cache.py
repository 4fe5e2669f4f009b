"""Chart drawings kept on disk (app/memo/chart_cache.py): a reprint in a new process needs no browser.

Most checks use a stand-in browser that returns a known SVG per figure, so they count what is
drawn; one journey drives the console command twice with the real Chromium and checks that the
second memo started no browser and printed the same bytes.
"""

from __future__ import annotations

import logging
import os
import shutil
import time
from datetime import UTC, datetime
from pathlib import Path

import pytest
from obligor_memo.app import memo, settings
from obligor_memo.app.memo import chart_browser, chart_cache, chart_pages
from obligor_memo.app.memo import figures as memo_figures


class CountingBrowser:
    """Draws each figure as a small SVG naming its chart, and counts what it was asked for."""

    timeout = 30.0

    def __init__(self) -> None:
        self.drawn: list[str] = []

    def export_svg(self, figures):
        self.drawn += list(figures)
        return {
            key: f'<svg xmlns="http://www.w3.org/2000/svg" width="10" height="10"><desc>{key}</desc></svg>'
            for key in figures
        }


@pytest.fixture
def kept(tmp_path, monkeypatch):
    """A fresh folder of kept drawings, and an empty in-process cache (as in a new process)."""
    folder = tmp_path / "charts"
    monkeypatch.setenv(settings.CHART_CACHE, str(folder))
    monkeypatch.setattr(memo_figures, "_SVG_CACHE", {})
    return folder


@pytest.fixture(scope="module")
def figures(sample_case):
    from obligor_memo.engine.analysis import analyse

    built, notes = memo_figures.build_figures(analyse(sample_case), annex=False)
    assert built and not notes
    return built


def test_settings_place_the_folder_where_the_environment_says(monkeypatch, tmp_path):
    monkeypatch.delenv(settings.CHART_CACHE, raising=False)
    monkeypatch.setenv(settings.CACHE_HOME, str(tmp_path / "xdg"))
    assert settings.current().chart_cache == tmp_path / "xdg" / "obligor-memo" / "charts"
    monkeypatch.delenv(settings.CACHE_HOME)
    assert settings.current().chart_cache == Path.home() / ".cache" / "obligor-memo" / "charts"
    for off in ("off", "OFF", " Off "):
        monkeypatch.setenv(settings.CHART_CACHE, off)
        assert settings.current().chart_cache is None
    monkeypatch.setenv(settings.CHART_CACHE, str(tmp_path / "mine"))
    assert chart_cache.cache_dir() == tmp_path / "mine"


def test_a_second_process_takes_the_kept_drawings_and_draws_nothing(kept, figures, monkeypatch):
    first = CountingBrowser()
    drawn = memo_figures.export_figures(figures, exporter=first)
    assert sorted(first.drawn) == sorted(figures)
    assert len(list(kept.glob("*.svg"))) == len(figures)

    monkeypatch.setattr(memo_figures, "_SVG_CACHE", {})  # a new process: only the disk remains
    second = CountingBrowser()
    again = memo_figures.export_figures(figures, exporter=second)
    assert second.drawn == []
    assert again == drawn


def test_a_damaged_drawing_is_drawn_again_and_replaced(kept, figures, monkeypatch):
    memo_figures.export_figures(figures, exporter=CountingBrowser())
    damaged_key, damaged_fig = next(iter(figures.items()))
    path = kept / f"{memo_figures.figure_key(damaged_fig)}{chart_cache.SUFFIX}"
    path.write_text('<svg xmlns="http://www.w3.org/2000/svg"><desc>cut sho', encoding="utf-8")  # half a file

    monkeypatch.setattr(memo_figures, "_SVG_CACHE", {})
    browser = CountingBrowser()
    memo_figures.export_figures(figures, exporter=browser)
    assert browser.drawn == [damaged_key]
    assert path.read_text(encoding="utf-8").endswith("</svg>")


def test_nothing_is_kept_when_switched_off(tmp_path, monkeypatch, figures):
    monkeypatch.setenv(settings.CHART_CACHE, "off")
    monkeypatch.setattr(memo_figures, "_SVG_CACHE", {})
    memo_figures.export_figures(figures, exporter=CountingBrowser())
    monkeypatch.setattr(memo_figures, "_SVG_CACHE", {})
    browser = CountingBrowser()
    memo_figures.export_figures(figures, exporter=browser)
    assert sorted(browser.drawn) == sorted(figures)
    assert not list(tmp_path.rglob("*.svg"))


def test_a_folder_that_cannot_be_written_costs_only_the_speed(tmp_path, monkeypatch, figures, caplog):
    blocker = tmp_path / "not-a-folder"
    blocker.write_text("a file where the folder should be")
    monkeypatch.setenv(settings.CHART_CACHE, str(blocker / "charts"))
    monkeypatch.setattr(memo_figures, "_SVG_CACHE", {})
    with caplog.at_level(logging.INFO, logger=chart_cache.__name__):
        svgs = memo_figures.export_figures(figures, exporter=CountingBrowser())
    assert set(svgs) == set(figures)
    assert any("not kept" in record.getMessage() for record in caplog.records)


def test_the_least_recently_used_drawings_go_first(kept, monkeypatch):
    monkeypatch.setattr(chart_cache, "MAX_FILES", 3)
    svg = '<svg xmlns="http://www.w3.org/2000/svg"></svg>'
    for i in range(3):
        chart_cache.write({f"k{i}": svg})
        os.utime(kept / f"k{i}.svg", (1_000_000 + i, 1_000_000 + i))
    assert chart_cache.read(["k0"]) == {"k0": svg}  # used now: the newest
    chart_cache.write({"k3": svg})
    assert sorted(p.stem for p in kept.glob("*.svg")) == ["k0", "k2", "k3"]


def test_a_new_browser_or_plotly_changes_every_key(figures, monkeypatch):
    fig = next(iter(figures.values()))
    before = memo_figures.figure_key(fig)
    monkeypatch.setattr(chart_cache, "drawing_versions", lambda: "plotly 0.0|kaleido 0.0|another browser|slim x")
    assert memo_figures.figure_key(fig) != before


def test_the_versions_name_plotly_kaleido_the_browser_and_the_slimming():
    from importlib.metadata import version

    text = chart_cache.drawing_versions()
    assert f"plotly {version('plotly')}" in text and f"kaleido {version('kaleido')}" in text
    assert "slim " in text
    try:
        assert chart_browser.find_browser() in text
    except memo.ChartsUnavailable:
        assert "no browser" in text


def test_another_browser_is_another_version(monkeypatch, tmp_path):
    """A browser named by BROWSER_PATH after the versions were first read keys its own drawings."""
    before = chart_cache.drawing_versions()
    other = tmp_path / "other-chromium"
    other.write_text("#!/bin/sh\n")
    other.chmod(0o755)
    monkeypatch.setenv("BROWSER_PATH", str(other))
    assert str(other) in chart_cache.drawing_versions() and chart_cache.drawing_versions() != before
    monkeypatch.undo()
    assert chart_cache.drawing_versions() == before


def test_the_memo_list_is_a_hint_that_each_drawing_must_back(kept):
    svg = '<svg xmlns="http://www.w3.org/2000/svg"></svg>'
    key = chart_cache.memo_key("f" * 64, annex=False)
    assert key != chart_cache.memo_key("f" * 64, annex=True)
    assert not chart_cache.memo_drawn(key)
    chart_cache.write({"a": svg, "b": svg})
    chart_cache.remember_memo(key, ["a", "b"])
    assert chart_cache.memo_drawn(key)
    (kept / "b.svg").unlink()
    assert not chart_cache.memo_drawn(key)


def _real_browser() -> bool:
    try:
        chart_browser.find_browser()
    except memo.ChartsUnavailable:
        return False
    return shutil.which("rsvg-convert") is not None


@pytest.mark.browser
@pytest.mark.slow
@pytest.mark.skipif(not _real_browser(), reason="needs Chrome/Chromium and rsvg-convert")
def test_the_command_prints_again_without_a_browser_and_the_same_bytes(kept, tmp_path, monkeypatch, sample_case_path):
    from click.testing import CliRunner
    from obligor_memo.app.cli import main

    memo.stop_chart_exporter()
    starts: list[float] = []
    original = chart_browser.ChartExporter.start

    def counted(self, *args, **kwargs):
        starts.append(time.perf_counter())
        return original(self, *args, **kwargs)

    monkeypatch.setattr(chart_browser.ChartExporter, "start", counted)
    out_first, out_again = tmp_path / "first.pdf", tmp_path / "again.pdf"
    first = CliRunner().invoke(main, ["memo", str(sample_case_path), "-o", str(out_first)])
    assert first.exit_code == 0, first.output
    # One start, or two when a page failed while drawing in a busy browser (export_svg's retry).
    drawn_first = len(starts)
    assert drawn_first >= 1
    assert list(kept.glob(f"*{chart_cache.INDEX_SUFFIX}"))

    monkeypatch.setattr(memo_figures, "_SVG_CACHE", {})  # as in a new process
    monkeypatch.setattr(chart_pages, "_PAGES_CACHE", {})
    again = CliRunner().invoke(main, ["memo", str(sample_case_path), "-o", str(out_again)])
    assert again.exit_code == 0, again.output
    assert len(starts) == drawn_first  # no browser for the reprint

    # The same drawings, placed the same way: with one print time, not one byte differs.
    from obligor_memo.engine.analysis import analyse
    from obligor_memo.engine.loading import load_case

    results = analyse(load_case(sample_case_path))
    stamp = datetime(2031, 1, 2, tzinfo=UTC)
    from_disk = memo.render_memo_pdf(results, generated_at=stamp)
    monkeypatch.setenv(settings.CHART_CACHE, "off")
    monkeypatch.setattr(memo_figures, "_SVG_CACHE", {})
    monkeypatch.setattr(chart_pages, "_PAGES_CACHE", {})
    drawn_anew = memo.render_memo_pdf(results, generated_at=stamp)
    assert len(starts) > drawn_first  # drawn anew: a browser started
    assert from_disk == drawn_anew
