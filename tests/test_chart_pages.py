"""Charts as PDF pages placed in their laid-out boxes (app.chart_pages).

Where a chart lands is checked by an outside rasteriser (poppler's pdftoppm) against the boxes
WeasyPrint reports for the chart images (Page.anchors); the two SVG converters are compared
picture against picture. No browser is needed: the SVGs are written here.
"""

from __future__ import annotations

import shutil
import stat
import subprocess

import pytest
from obligor_memo.app.memo import chart_browser, chart_pages, fetch, layout, render, svg_slim, templates, view  # noqa: F401

from tests.test_memo_svg import PLOT_LIKE

needs_poppler = pytest.mark.skipif(shutil.which("pdftoppm") is None, reason="needs poppler-utils")
needs_rsvg = pytest.mark.skipif(shutil.which("rsvg-convert") is None, reason="needs librsvg2-bin")


def _solid(width: int, height: int, colour: str) -> str:
    return (
        f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" '
        f'viewBox="0 0 {width} {height}"><rect x="0" y="0" width="{width}" height="{height}" '
        f'fill="{colour}"/></svg>'
    )


def _raster(pdf: bytes, tmp_path, name: str, page: int = 1, dpi: int = 72):
    from PIL import Image

    path = tmp_path / f"{name}.pdf"
    path.write_bytes(pdf)
    subprocess.run(
        [
            "pdftoppm",
            "-r",
            str(dpi),
            "-png",
            "-singlefile",
            "-f",
            str(page),
            "-l",
            str(page),
            str(path),
            str(tmp_path / name),
        ],
        check=True,
        capture_output=True,
    )
    return Image.open(tmp_path / f"{name}.png").convert("RGB")


def _box_of(image, colour: tuple[int, int, int]) -> tuple[int, int, int, int] | None:
    """Bounding box of the pixels of one colour (within a small tolerance)."""
    from PIL import Image, ImageChops

    target = ImageChops.difference(image, Image.new("RGB", image.size, colour))
    mask = target.convert("L").point(lambda v: 255 if v < 24 else 0)
    return mask.getbbox()


class _Drawn:
    """Stands in for a chart job: the figures' sizes and the charts as PDF pages."""

    def __init__(self, svgs: list[str], sizes: list[tuple[int, int]]):
        import plotly.graph_objects as go

        self.figures = {}
        for i, (width, height) in enumerate(sizes):
            fig = go.Figure(layout={"height": height})
            object.__setattr__(fig, "_memo_width", width)
            self.figures[f"c{i}"] = fig
        self._pages = chart_pages.charts_pdf(svgs)

    def pages(self) -> bytes:
        return self._pages


@needs_poppler
@pytest.mark.parametrize("converter", ["rsvg", "none"])
def test_each_chart_lands_in_the_box_the_layout_gave_it(converter, monkeypatch, tmp_path, sample_case):
    """A blue chart in a full-width box, a red one in a half-width box further down: the coloured
    pixels of the printed page sit where WeasyPrint laid the boxes out, to a pixel."""
    from obligor_memo.app import memo
    from obligor_memo.engine.evaluate import evaluate
    from weasyprint import HTML

    if converter == "rsvg" and shutil.which("rsvg-convert") is None:
        pytest.skip("needs librsvg2-bin")
    monkeypatch.setenv(chart_pages.CONVERTER_VARIABLE, "" if converter == "rsvg" else "none")
    chart_pages._PAGES_CACHE.clear()
    html = (
        "<body><p>before</p><img src='memo-chart:0' id='memo-chart-0' style='width: 100%'>"
        "<p>between</p><img src='memo-chart:1' id='memo-chart-1' style='width: 50%; margin-left: 20mm'>"
        "<p>after</p></body>"
    )
    sizes = [(300, 200), (400, 100)]
    job = _Drawn([_solid(300, 200, "rgb(0,0,255)"), _solid(400, 100, "rgb(255,0,0)")], sizes)
    pdf = render.html_to_pdf(
        html,
        results=evaluate(sample_case),
        page_size="A4",
        generated_at="2031-01-02",
        allowed_data_uris=set(),
        charts=job,
    )
    # The boxes as WeasyPrint lays out the same HTML with the same stand-ins [CSS px].
    laid_out = HTML(string=html, url_fetcher=fetch.memo_fetcher(set(), sizes)).render(
        stylesheets=[templates.TEMPLATES_DIR / "memo.css"]
    )
    anchors = laid_out.pages[0].anchors
    page = _raster(pdf, tmp_path, "placed")
    for anchor, colour in (("memo-chart-0", (0, 0, 255)), ("memo-chart-1", (255, 0, 0))):
        x1, y1, x2, y2 = (v * 0.75 for v in anchors[anchor])  # CSS px -> pt = pixels at 72 dpi
        found = _box_of(page, colour)
        assert found is not None, anchor
        assert found == pytest.approx((x1, y1, x2, y2), abs=1.5), (anchor, found)


@needs_poppler
@needs_rsvg
def test_both_converters_draw_the_same_chart(monkeypatch, tmp_path):
    """rsvg-convert and the WeasyPrint fallback: pages of the chart's own size, the same picture
    up to anti-aliasing of glyph and line edges."""
    from PIL import Image, ImageChops, ImageStat

    pictures = {}
    for setting in ("", "none"):
        monkeypatch.setenv(chart_pages.CONVERTER_VARIABLE, setting)
        chart_pages._PAGES_CACHE.clear()
        pictures[setting or "rsvg"] = _raster(chart_pages.charts_pdf([PLOT_LIKE]), tmp_path, setting or "rsvg", dpi=96)
    rsvg, weasy = pictures["rsvg"], pictures["none"]
    assert rsvg.size == weasy.size == (300, 200)  # 300 x 200 px at 96 dpi
    assert ImageChops.difference(rsvg, Image.new("RGB", rsvg.size, "white")).getbbox()
    mean_difference = sum(ImageStat.Stat(ImageChops.difference(rsvg, weasy)).mean) / 3
    assert mean_difference < 4.0, mean_difference


@needs_rsvg
def test_pages_follow_the_charts_and_repeat_byte_for_byte(monkeypatch):
    import io

    from pypdf import PdfReader

    monkeypatch.delenv(chart_pages.CONVERTER_VARIABLE, raising=False)
    svgs = [_solid(300, 200, "black"), _solid(760, 420, "gray"), PLOT_LIKE]
    chart_pages._PAGES_CACHE.clear()
    first = chart_pages.charts_pdf(svgs)
    chart_pages._PAGES_CACHE.clear()
    assert chart_pages.charts_pdf(svgs) == first  # fixed SOURCE_DATE_EPOCH
    sizes = [tuple(float(v) for v in page.mediabox[2:]) for page in PdfReader(io.BytesIO(first)).pages]
    assert sizes == [(225.0, 150.0), (570.0, 315.0), (225.0, 150.0)]  # px x 0.75 = pt


@pytest.mark.parametrize(
    "url",
    [
        "file:///etc/passwd",
        "http://example.invalid/x.png",
        "https://example.invalid/",
        "data:text/html;base64,PHA+eDwvcD4=",
        "chart-1.svg",
    ],
)
def test_a_chart_may_not_refer_outside_itself(url):
    svg = PLOT_LIKE.replace("<defs", f'<image href="{url}" width="5" height="5"/><defs', 1)
    with pytest.raises(chart_pages.ChartPagesError, match="only use their own parts"):
        chart_pages.charts_pdf([svg])


def test_own_parts_and_inline_bitmaps_are_allowed():
    chart_pages.check_references('<use xlink:href="#clip1"/><image href="data:image/png;base64,iVBO"/>')


def test_converter_setting(monkeypatch, tmp_path):
    monkeypatch.setenv(chart_pages.CONVERTER_VARIABLE, "none")
    assert chart_pages.find_converter() is None
    monkeypatch.setenv(chart_pages.CONVERTER_VARIABLE, str(tmp_path / "missing"))
    with pytest.raises(chart_pages.ChartPagesError) as caught:
        chart_pages.find_converter()
    message = str(caught.value)
    assert chart_pages.CONVERTER_VARIABLE in message and "missing" in message and "'none'" in message
    monkeypatch.delenv(chart_pages.CONVERTER_VARIABLE)
    assert chart_pages.find_converter() == shutil.which("rsvg-convert")


def test_a_failing_converter_is_reported_with_its_message(monkeypatch, tmp_path):
    script = tmp_path / "broken-convert"
    script.write_text("#!/bin/sh\necho 'cannot read the input' >&2\nexit 3\n")
    script.chmod(script.stat().st_mode | stat.S_IXUSR)
    monkeypatch.setenv(chart_pages.CONVERTER_VARIABLE, str(script))
    chart_pages._PAGES_CACHE.clear()
    with pytest.raises(chart_pages.ChartPagesError, match="exit code 3: cannot read the input"):
        chart_pages.charts_pdf([_solid(10, 10, "black")])


def test_too_few_chart_pages_is_an_error_not_a_blank_box():
    from weasyprint import HTML

    memo_pdf = HTML(string="<p>x</p>").write_pdf()
    charts = HTML(string="<p>one page</p>").write_pdf()
    with pytest.raises(chart_pages.ChartPagesError, match="fewer than the charts"):
        layout.place_charts(layout.LaidOut(memo_pdf, 1, [chart_pages.Placement(0, (0, 0, 10, 10), 3)]), charts)
