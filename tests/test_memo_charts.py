"""Charts in the memo: vector SVG from the workbench's figures through kaleido and a system Chromium.

The sample memo is rendered once with charts; every page is saved as an image under
test-artifacts/ for a person to look at. Skipped where no browser is installed.
"""

from __future__ import annotations

import io
import shutil
import subprocess
from datetime import UTC, datetime, timezone
from pathlib import Path

import pytest
from obligor_memo.app import memo
from obligor_memo.app.memo import chart_browser, chart_pages, fetch, layout, render, svg_slim, templates, view  # noqa: F401
from obligor_memo.app.memo import figures as memo_figures

ROOT = Path(__file__).resolve().parents[1]
ARTIFACTS = ROOT / "test-artifacts"


def _browser() -> str | None:
    try:
        return chart_browser.find_browser()
    except memo.ChartsUnavailable:
        return None


_skip = pytest.mark.skipif(
    _browser() is None or shutil.which("pdftoppm") is None, reason="needs Chrome/Chromium and poppler-utils"
)


def needs_browser(test):
    """Drives a real Chromium and renders the full memo once per module: a few seconds."""
    return pytest.mark.browser(pytest.mark.slow(_skip(test)))


@pytest.fixture(scope="module", autouse=True)
def _no_browser_left_running():
    """Whatever a test does, the process-wide browser is stopped when the module ends."""
    yield
    memo.stop_chart_exporter()


@pytest.fixture(scope="module")
def analysed(sample_case):
    from obligor_memo.engine.analysis import analyse

    return analyse(sample_case)


@pytest.fixture(scope="module")
def charted_pdf(analysed) -> bytes:
    exporter = memo.start_chart_exporter()
    try:
        pdf = memo.render_memo_pdf(analysed, generated_at=datetime(2031, 1, 2, tzinfo=UTC), annex=True)
    finally:
        pass  # kept running for the reuse test below; stopped by the last test
    ARTIFACTS.mkdir(exist_ok=True)
    (ARTIFACTS / "memo_sample.pdf").write_bytes(pdf)
    for old in ARTIFACTS.glob("memo_sample-page-*.png"):
        old.unlink()
    subprocess.run(["pdftoppm", "-r", "75", "-png", "-", str(ARTIFACTS / "memo_sample-page")], input=pdf, check=True)
    assert exporter.running
    return pdf


def _text(pdf: bytes) -> str:
    out = subprocess.run(["pdftotext", "-", "-"], input=pdf, capture_output=True, check=True)
    return " ".join(out.stdout.decode("utf-8").split())


@needs_browser
def test_charts_are_vector_text_not_pictures(charted_pdf, analysed):
    # pdfimages lists raster images; vector SVG leaves none, except the cell image plotly itself
    # embeds for a heatmap (one per heatmap trace).
    figures, _ = memo_figures.build_figures(analysed)
    heatmaps = sum(trace.type == "heatmap" for fig in figures.values() for trace in fig.data)
    listing = (
        subprocess.run(["pdfimages", "-list", "-"], input=charted_pdf, capture_output=True, check=True)
        .stdout.decode()
        .splitlines()
    )
    pictures = [line for line in listing[2:] if line.split()[2] == "image"]  # not their alpha masks
    assert len(pictures) == heatmaps, listing
    text = _text(charted_pdf)
    # Axis titles and chart titles come through as text, which only vector charts allow.
    assert text.count("Recovery rate [% of EAD]") >= len(analysed.facilities)
    assert "Asset trend" in text and "Total assets" in text


@needs_browser
def test_every_chart_drawn_or_its_absence_explained(charted_pdf, analysed):
    figures, notes = memo_figures.build_figures(analysed)
    text = _text(charted_pdf)
    assert "--no-charts" not in text
    assert len(figures) + len(notes) == len(memo_figures.chart_specs(analysed))
    for note in notes.values():
        assert " ".join(note.split())[:40] in text


@needs_browser
def test_page_images_saved_for_review(charted_pdf):
    from pypdf import PdfReader

    pages = len(PdfReader(io.BytesIO(charted_pdf)).pages)
    assert len(list(ARTIFACTS.glob("memo_sample-page-*.png"))) == pages


@needs_browser
def test_running_exporter_is_reused_and_times_out_cleanly(charted_pdf, analysed):
    exporter = memo.start_chart_exporter()
    assert memo.start_chart_exporter() is exporter and exporter.running
    figures, _ = memo_figures.build_figures(analysed)
    first = dict(list(figures.items())[:1])
    svg = exporter.export_svg(first)
    assert next(iter(svg.values())).lstrip().startswith("<svg")
    exporter.timeout = 1e-4
    with pytest.raises(memo.ChartsUnavailable, match="longer than"):
        exporter.export_svg(first)
    assert not exporter.running
    memo.stop_chart_exporter()


def test_missing_browser_names_the_fix(monkeypatch, tmp_path):
    monkeypatch.setenv("BROWSER_PATH", str(tmp_path / "no-such-browser"))
    with pytest.raises(memo.ChartsUnavailable, match=r"BROWSER_PATH.*--no-charts"):
        chart_browser.find_browser()


def test_browser_path_takes_precedence(monkeypatch, tmp_path):
    fake = tmp_path / "chrome"
    fake.write_text("#!/bin/sh\n")
    fake.chmod(0o755)
    monkeypatch.setenv("BROWSER_PATH", str(fake))
    assert chart_browser.find_browser() == str(fake)


def test_no_usual_browser_names_the_fix(monkeypatch):
    monkeypatch.delenv("BROWSER_PATH", raising=False)
    from obligor_memo.app.memo import chart_browser

    monkeypatch.setattr(chart_browser, "BROWSER_CANDIDATES", ("/nonexistent/chromium",))
    with pytest.raises(memo.ChartsUnavailable, match=r"install Chromium.*--no-charts"):
        chart_browser.find_browser()


def test_memo_command_without_browser_fails_with_the_fix(monkeypatch, tmp_path, sample_case_path):
    from click.testing import CliRunner
    from obligor_memo.app.cli import main

    monkeypatch.setenv("BROWSER_PATH", str(tmp_path / "missing"))
    memo.stop_chart_exporter()  # a browser kept by an earlier test would hide the fault
    result = CliRunner().invoke(main, ["memo", str(sample_case_path), "-o", str(tmp_path / "m.pdf")])
    assert result.exit_code == 2
    assert "--no-charts" in result.output and not (tmp_path / "m.pdf").exists()


@needs_browser
def test_same_case_prints_the_same_bytes_with_charts(charted_pdf, analysed):
    """Charts drawn anew (no SVG or page cache) and placed again: not one byte differs."""
    from obligor_memo.app.memo import chart_pages
    from obligor_memo.app.memo import figures as memo_figures

    memo_figures._SVG_CACHE.clear()
    chart_pages._PAGES_CACHE.clear()
    again = memo.render_memo_pdf(analysed, generated_at=datetime(2031, 1, 2, tzinfo=UTC), annex=True)
    assert again == charted_pdf


@needs_browser
def test_charts_that_cannot_become_pages_name_the_fix(charted_pdf, analysed, monkeypatch, tmp_path):
    from obligor_memo.app.memo import chart_pages

    script = tmp_path / "broken-convert"
    script.write_text("#!/bin/sh\necho 'out of memory' >&2\nexit 1\n")
    script.chmod(0o755)
    monkeypatch.setenv(chart_pages.CONVERTER_VARIABLE, str(script))
    with pytest.raises(memo.ChartsUnavailable) as caught:
        memo.render_memo_pdf(analysed)
    message = str(caught.value)
    assert "out of memory" in message and "librsvg2-bin" in message and "--no-charts" in message


def test_partial_plotly_bundle_is_used_only_at_the_full_bundles_version(monkeypatch, tmp_path):
    from obligor_memo.app.memo import chart_browser

    assert chart_browser.bundle_version(chart_browser.PARTIAL_BUNDLE) is not None
    assert chart_browser.plotly_bundle() == str(chart_browser.PARTIAL_BUNDLE)
    other = tmp_path / "plotly-cartesian.min.js"
    other.write_text("/**\n* plotly.js (cartesian - minified) v0.0.1\n*/\nvar Plotly = {};\n")
    monkeypatch.setattr(chart_browser, "PARTIAL_BUNDLE", other)
    assert chart_browser.plotly_bundle() is None  # kaleido's default: plotly.py's full bundle
    monkeypatch.setattr(chart_browser, "PARTIAL_BUNDLE", tmp_path / "absent.js")
    assert chart_browser.plotly_bundle() is None


@needs_browser
def test_partial_bundle_draws_every_chart_pixel_identical_to_the_full_one(analysed, monkeypatch, tmp_path):
    """Every figure of the sample memo (scatter, bar with patterns, heatmap, shapes and
    annotations), drawn with each bundle and rasterised by poppler: not one pixel differs."""
    from obligor_memo.app.memo import chart_browser, chart_pages
    from obligor_memo.app.memo import figures as memo_figures
    from PIL import Image, ImageChops

    figures, _ = memo_figures.build_figures(analysed)
    pictures = {}
    for name, bundle in (("partial", str(chart_browser.PARTIAL_BUNDLE)), ("full", None)):
        monkeypatch.setattr(chart_browser, "plotly_bundle", lambda b=bundle: b)
        exporter = chart_browser.ChartExporter().start()
        try:
            svgs = exporter.export_svg(figures)
        finally:
            exporter.close()
        pdf = tmp_path / f"{name}.pdf"
        pdf.write_bytes(chart_pages.charts_pdf([svg_slim.slim_svg(svgs[key]) for key in figures]))
        subprocess.run(["pdftoppm", "-r", "50", "-png", str(pdf), str(tmp_path / name)], check=True)
        pictures[name] = sorted(tmp_path.glob(f"{name}-*.png"))
    assert len(pictures["partial"]) == len(pictures["full"]) == len(figures)
    for partial, full in zip(pictures["partial"], pictures["full"]):
        a, b = Image.open(partial).convert("RGB"), Image.open(full).convert("RGB")
        assert a.size == b.size and ImageChops.difference(a, b).getbbox() is None, partial.name


# --------------------------------------------------------------------------- printed text size

# pdftotext's word box is the font's ascent to descent: 1.164 em for DejaVu Sans (measured on
# the memo's own 9 pt body text: boxes 10.48 pt high).
_EM = 1.164


def _printed_sizes(pdf: bytes) -> list[tuple[int, float, str]]:
    """(page, font size [pt], word) of every word whose orientation is clear from its box:
    wider than high (horizontal) or at least twice as high as wide (a rotated axis title)."""
    import html
    import re

    out = subprocess.run(["pdftotext", "-bbox", "-", "-"], input=pdf, capture_output=True, check=True)
    found = []
    for n, page in enumerate(re.findall(r"<page (.*?)</page>", out.stdout.decode(), flags=re.S), start=1):
        for m in re.finditer(r'xMin="([\d.]+)" yMin="([\d.]+)" xMax="([\d.]+)" yMax="([\d.]+)">(.*?)</word>', page):
            x0, y0, x1, y1 = (float(m.group(i)) for i in range(1, 5))
            word = html.unescape(m.group(5))
            w, h = x1 - x0, y1 - y0
            if len(word) < 2:
                continue  # a lone narrow glyph's box cannot tell its orientation
            if w >= h:
                found.append((n, h / _EM, word))
            elif h >= 2 * w:
                found.append((n, w / _EM, word))
    return found


@needs_browser
def test_every_printed_word_is_at_least_7_pt(charted_pdf):
    sizes = _printed_sizes(charted_pdf)
    assert len(sizes) > 3000  # the charts' words are read too (vector text)
    small = [(page, round(size, 2), word) for page, size, word in sizes if size < 6.95]
    assert small == []


def test_chart_fonts_print_at_7_pt_in_their_boxes(analysed):
    from obligor_memo.app.memo.figures import COLUMN_PT, PRINT_MIN_PT, SMALL_SHARE, build_figures, chart_specs

    # A4: 210 mm less two 16 mm margins = 178 mm = 504.6 pt of column (1 in = 25.4 mm = 72 pt).
    assert COLUMN_PT == pytest.approx(504.57, abs=0.01)
    figures, _ = build_figures(analysed)
    widths = {s.key: s.width for s in chart_specs(analysed)}
    for key, fig in figures.items():
        box = COLUMN_PT * (SMALL_SHARE if widths[key] < 700 else 1.0)
        scale = box / widths[key]  # pt on paper per px of the export
        sizes = [fig.layout.font.size] + [a.font.size for a in fig.layout.annotations if a.font.size is not None]
        sizes += [t.textfont.size for t in fig.data if getattr(t, "textfont", None) is not None and t.textfont.size]
        assert min(sizes) * scale >= PRINT_MIN_PT, key


@needs_browser
def test_no_two_printed_words_overlap(charted_pdf):
    from tests.test_memo_length import overlapping_words

    assert not overlapping_words(charted_pdf), overlapping_words(charted_pdf)[:10]


@needs_browser
def test_a_long_history_labels_its_years_without_overlap(sample_case):
    """Sixty statement years: the year axes step so that their labels stay apart."""
    from obligor_memo.engine.analysis import analyse
    from obligor_memo.engine.case import case_to_dict, parse_case

    from tests.test_memo_length import long_history, overlapping_words

    results = analyse(parse_case(long_history(case_to_dict(sample_case), 60), source="test case"))
    pdf = memo.render_memo_pdf(results, generated_at=datetime(2031, 1, 2, tzinfo=UTC))
    assert not overlapping_words(pdf), overlapping_words(pdf)[:10]
